"""``evidence decompose``: Kaya / LMDI-I decomposition of the change in a pressure."""

from __future__ import annotations

from pathlib import Path

import click

from evidence._cautions import CAUTION
from evidence._commands._common import data_options, emit, format_options, load
from evidence.decomposition import kaya
from evidence.tables import render_frame

__all__ = ["command"]


@click.command("decompose")
@data_options
@click.option("--pressure", required=True, help="Pressure column (e.g. emissions).")
@click.option("--population", required=True, help="Population column.")
@click.option("--activity", required=True, help="Activity column (real GDP).")
@click.option("--energy", default=None, help="Energy column (adds the energy step).")
@click.option("--window", default=None, help="Years START:END (the two years compared).")
@click.option("--kind", type=click.Choice(["additive", "multiplicative"], case_sensitive=False),
              default="additive", show_default=True, help="Effects as changes or as ratios.")
@format_options
def command(data: Path, unit_col: str | None, time_col: str | None, layout: str, pressure: str,
            population: str, activity: str, energy: str | None, window: str | None, kind: str,
            fmt: str, output: Path | None) -> None:
    """Kaya identity decomposition (LMDI-I, Ang 2005) per unit and for all units."""
    panel = load(data, unit_col, time_col, layout)
    result = kaya(panel, pressure, population=population, activity=activity, energy=energy,
                     window=window)
    notes = ["LMDI-I (Ang 2005): the effects add up exactly to the change (additive) or multiply "
             "to the ratio (multiplicative); row 'total' decomposes the sum over units.",
             CAUTION]
    emit(render_frame(result.to_frame(kind.lower()), fmt.lower(),
                      title=f"Decomposition of {pressure}, {result.window[0]}-{result.window[1]}",
                      notes=notes), output)
