"""``evidence grade``: the four-axis grade of decoupling evidence for every unit."""

from __future__ import annotations

from pathlib import Path

import click

from evidence._commands._common import basis_option, data_options, emit, format_options, load, with_basis
from evidence.errors import SpecError
from evidence.grading import Criteria, grade
from evidence.tables import grade_table
from evidence.trend import TREND_TESTS

__all__ = ["command"]


def _pairs(text: str | None) -> dict[str, str]:
    out = {}
    for part in (text or "").split(","):
        if part.strip():
            if "=" not in part:
                raise SpecError(f"--consumption {part.strip()!r} must be TERRITORIAL=CONSUMPTION.")
            key, value = part.split("=", 1)
            out[key.strip()] = value.strip()
    return out


@click.command("grade")
@data_options
@click.option("--pressure", required=True, help="Pressure column(s), comma-separated.")
@click.option("--activity", required=True, help="Activity column (real GDP).")
@click.option("--consumption", default=None,
              help="Consumption-basis twins: TERRITORIAL=CONSUMPTION[,...].")
@click.option("--window", default=None, help="Years START:END, inclusive.")
@click.option("--required-rate", type=float, default=None,
              help="Required annual decline, e.g. 0.05 (a normative choice).")
@click.option("--adjust", type=click.Choice(["bh", "holm", "none"], case_sensitive=False),
              default="bh", show_default=True, help="Multiple-testing adjustment across units.")
@click.option("--trend-test", type=click.Choice(list(TREND_TESTS), case_sensitive=False),
              default="perron-yabu", show_default=True,
              help="Direction test (docs/methods/grading.md lists their measured sizes).")
@click.option("--no-breaks", is_flag=True, help="Skip the break search (faster on large panels).")
@basis_option
@format_options
def command(data: Path, unit_col: str | None, time_col: str | None, layout: str, pressure: str,
            activity: str, consumption: str | None, window: str | None,
            required_rate: float | None, adjust: str, trend_test: str, no_breaks: bool,
            basis: str | None, fmt: str, output: Path | None) -> None:
    """Grade the evidence of decoupling: direction, duration, robustness, sufficiency."""
    panel = load(data, unit_col, time_col, layout)
    pressures = [p.strip() for p in pressure.split(",") if p.strip()]
    twins = _pairs(consumption)
    stated = {**{p: "territorial" for p in twins}, **{c: "consumption" for c in twins.values()},
              **({p: basis for p in pressures} if basis else {})}
    panel = with_basis(panel, stated)
    criteria = Criteria(required_rate=required_rate, adjust=adjust.lower(),
                           trend_test=trend_test.lower())
    result = grade(panel, pressures, activity, window=window, criteria=criteria,
                      consumption=twins, latest_break=not no_breaks)
    emit(grade_table(result, fmt.lower()), output)
