"""Screen a panel for break years in the trend of emission intensity, then date one unit's breaks.

On the invented demo panel: ``ev.screen_breaks`` runs the Bai–Perron UDmax test on every region's
log emission intensity (p-values conditional on the residual autocorrelation, adjusted across
regions), picks the number of breaks and dates them; ``ev.find_breaks`` gives one region's break
years with their intervals. The planted break years of the scenario (``ev.demo_truth()``) are
printed beside the estimates. Method and measured size: docs/methods/breaks.md.

Usage: ``python examples/break_screen.py``
"""

from __future__ import annotations

import evidence as ev


def main() -> None:
    panel = (ev.demo_panel()
             .with_intensity("ghg_territorial", "gdp", name="intensity")
             .with_log("intensity", name="log_intensity"))
    screen = ev.screen_breaks(panel, "log_intensity", max_breaks=3)
    print(screen.summary())

    truth = ev.demo_truth()["regions"]
    frame = screen.to_frame()
    # The scenario's planted breaks (the absolute decouplers) and offshoring onsets (territorial
    # intensity falls when production moves abroad), to read beside the estimates.
    frame["planted_break"] = [truth[unit]["break_year"] for unit in frame["unit"]]
    frame["offshoring_onset"] = [truth[unit]["offshoring_onset"] for unit in frame["unit"]]
    print(frame[["unit", "n_breaks", "break_years", "pvalue_adjusted", "planted_break",
                 "offshoring_onset"]].to_string())

    one = ev.find_breaks(panel.series("Aldwyr", "log_intensity"), max_breaks=3)
    print(one.summary())


if __name__ == "__main__":
    main()
