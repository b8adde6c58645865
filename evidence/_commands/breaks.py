"""``evidence breaks``: screen every unit of a panel column for structural breaks."""

from __future__ import annotations

from pathlib import Path

import click
import numpy as np
import pandas as pd

import evidence.breaks as eb
from evidence._cautions import CAUTION
from evidence._commands._common import (
    data_options,
    emit,
    format_options,
    load,
    progress_bar,
    quiet_option,
    window_option,
)
from evidence.breaks.result import CONVENTION
from evidence.tables import render_frame

__all__ = ["command"]


def _years(values: tuple) -> str:
    return ", ".join(str(v) for v in values)


def _intervals(lower: tuple, upper: tuple) -> str:
    return "; ".join(f"{lo}-{hi}" for lo, hi in zip(lower, upper, strict=True))


@click.command("breaks")
@data_options
@click.option("--column", required=True, help="Column to screen (e.g. an emission intensity).")
@click.option("--per", "per", default=None,
              help="Divide the column by this one first (e.g. --per gdp for an intensity).")
@click.option("--log", "take_log", is_flag=True, help="Take the natural log (after --per).")
@click.option("--model", type=click.Choice(["trend", "level"], case_sensitive=False), default="trend",
              show_default=True, help="Intercept and slope per regime, or a mean per regime.")
@click.option("--max-breaks", type=int, default=3, show_default=True, help="Largest number of breaks.")
@click.option("--trim", type=float, default=0.20, show_default=True,
              help="Minimum regime length as a fraction of the years.")
@click.option("--select", type=click.Choice(["udmax-lwz", "sequential", "bic", "lwz"],
                                           case_sensitive=False), default="udmax-lwz",
              show_default=True,
              help="How the number of breaks is chosen: udmax-lwz (no break unless UDmax rejects, "
                   "then LWZ on the AR(1) innovation variance), sequential, bic or lwz.")
@click.option("--inference", type=click.Choice(["simulated", "asymptotic"], case_sensitive=False),
              default="simulated", show_default=True,
              help="p-values from the finite-sample null with AR(1) noise (holds its size under "
                   "serial correlation) or from the limiting distribution (i.i.d. errors).")
@click.option("--adjust", type=click.Choice(["bh", "holm"], case_sensitive=False), default="bh",
              show_default=True, help="Multiple-testing adjustment across units.")
@click.option("--executor", default="serial", show_default=True,
              help="Where the units are computed: serial, processes, dask, or a Dask scheduler "
                   "address (tcp://host:8786).")
@window_option
@quiet_option
@format_options
def command(data: Path, unit_col: str | None, time_col: str | None, layout: str, column: str,
            per: str | None, take_log: bool, model: str, max_breaks: int, trim: float, select: str,
            inference: str, adjust: str, executor: str, window: str | None, quiet: bool, fmt: str,
            output: Path | None) -> None:
    """Break years of COLUMN for every unit (Bai-Perron), with intervals and adjusted p-values."""
    panel = load(data, unit_col, time_col, layout)
    if window:
        panel = panel.window(window)
    name = column
    if per:
        name = f"{column}/{per}"
        panel = panel.with_intensity(column, per, name=name)
    if take_log:
        panel = panel.with_log(name, name=f"log({name})")
        name = f"log({name})"
    bar = progress_bar("screening units", quiet=quiet)
    try:
        result = eb.screen_breaks(panel, name, model=model.lower(), max_breaks=max_breaks, trim=trim,
                                  select=select.lower(), inference=inference.lower(),
                                  adjust=adjust.lower(), executor=executor,
                                  progress=bar.update if bar else None)
    finally:
        if bar:
            bar.close()
    tab = result.table
    frame = pd.DataFrame({
        "unit": tab.index,
        "years": [f"{a}-{b}" for a, b in zip(tab["first_year"], tab["last_year"], strict=True)],
        "breaks": tab["n_breaks"].to_numpy(),
        "break years": [_years(v) for v in tab["break_years"]],
        "95% intervals": [_intervals(lo, hi) for lo, hi in zip(tab["lower"], tab["upper"], strict=True)],
        "UDmax p": tab["pvalue"].to_numpy(), "adjusted p": tab["pvalue_adjusted"].to_numpy(),
        "residual AR(1)": tab["ar1"].to_numpy(),
        "calibrated": np.where(tab["ar1_covered"].to_numpy(), "yes", "no")})
    size = result.details.get("size", {})
    measured = (f" Measured size of this screen at T={size['n_years']}: at most "
                f"{size['measured']:.1%} at 5 % nominal ({size['processes']} noise processes; "
                "docs/methods/size.md)." if "measured" in size else "")
    notes = [CONVENTION,
             f"{model.lower()} model, trim {trim}, up to {max_breaks} breaks, number chosen by "
             f"{select.lower()}. UDmax p: test of no break against 1 to {max_breaks} breaks, "
             + ("p-value from the finite-sample null at each unit's length with AR(1) noise, "
                "conditional on the residual autocorrelation (calibrated for AR(1) coefficients "
                "up to 0.8: column 'calibrated')" if inference.lower() == "simulated" else
                "p-value from the limiting distribution (assumes serially uncorrelated errors)")
             + f"; adjusted p: {'Benjamini-Hochberg' if adjust.lower() == 'bh' else 'Holm'} across "
             f"units; residual AR(1): bias-adjusted, of the selected fit.{measured}",
             f"Break clustering across units: {result.clustering.statistic:.0f} units within "
             f"+-1 year, permutation p = {result.clustering.pvalue:.4f}.",
             f"Rows left out: {len(result.excluded)}" + (" (listed below)." if len(result.excluded) else "."),
             *result.warnings, CAUTION]
    text = render_frame(frame, fmt.lower(), title=f"Structural breaks in {name}", notes=notes,
                        index=False)
    if len(result.excluded) and fmt.lower() not in ("csv", "json"):
        text += "\n" + render_frame(result.excluded, fmt.lower(), title="Left out", index=False)
    emit(text, output)
