"""The caution every report and table carries (one wording, used everywhere)."""

from __future__ import annotations

__all__ = ["CAUTION", "caution_lines"]

CAUTION = (
    "These results are statistical evidence under stated assumptions (the sample window, the "
    "accounting basis of each pressure, data vintages that may be revised, small T and possible "
    "non-stationarity); they are not a policy verdict. Follow your field's and your institution's "
    "standards when you publish."
)


def caution_lines(width: int = 96) -> list[str]:
    """The caution wrapped to ``width`` characters."""
    import textwrap

    return textwrap.wrap(CAUTION, width=width)
