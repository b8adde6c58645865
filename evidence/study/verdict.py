"""The answer a study report opens with: counts per grade and per flag, and a verdict in words.

The counts are those of ``GradeResult.summary()`` (per pressure, every rung graded), plus the
flags; the same :func:`verdicts` feeds the report's first paragraph and the lines the command
line prints, so the two never disagree.
"""

from __future__ import annotations

from collections import Counter
from dataclasses import dataclass
from typing import Any

from evidence.grading import RUNGS
from evidence.study.choice import STRONG_RUNGS
from evidence.tables.grades import RUNG_MEANINGS

__all__ = ["Verdict", "verdicts", "FLAG_MEANINGS", "RUNG_TEXT"]

#: What each flag says, in the words of the verdict.
FLAG_MEANINGS = {
    "basis-gap": "the consumption basis tells a different story (its claim differs, or the gap "
                 "between the bases trends)",
    "short-window": "graded on fewer years than the short-window threshold (30 by default)",
    "weak-growth": "activity growth not significant",
    "no-growth": "activity did not grow",
    "recession": "decline driven by recession years",
}
RUNG_TEXT = dict(RUNG_MEANINGS)


@dataclass(frozen=True)
class Verdict:
    """The answer for one pressure: counts and the paragraph that states them."""

    pressure: str
    basis: str
    window: tuple[int, int]
    units: int
    rungs: dict[str, int]
    flags: dict[str, int]
    headline: str
    intro: str
    text: str

    def count_line(self) -> str:
        """``grades: coupled 8, relative 17, ...; flags: basis-gap 20, ...`` (terminal)."""
        rungs = ", ".join(f"{r} {n}" for r, n in self.rungs.items())
        flags = ", ".join(f"{f} {n}" for f, n in self.flags.items()) or "none"
        return f"grades: {rungs}; flags: {flags}"


def _plural(n: int, one: str, many: str | None = None) -> str:
    return f"{n} {one if n == 1 else (many or one + 's')}"


def _headline(rungs: dict[str, int], units: int, word: str) -> str:
    strong = sum(rungs.get(r, 0) for r in STRONG_RUNGS)
    relative = rungs.get("relative", 0)
    near = rungs.get("absolute-tentative", 0) + rungs.get("recession-driven", 0)
    if strong == units:
        return f"Absolute decoupling is significant in all {units} {word}."
    if strong:
        return f"Absolute decoupling is significant in {strong} of {units} {word}."
    if relative or near:
        parts = ([f"{relative} decoupled relatively"] if relative else []) + (
            [f"{near} show a falling but not significant pressure trend"] if near else [])
        return (f"None of the {units} {word} shows significant absolute decoupling; "
                + " and ".join(parts) + ".")
    return f"None of the {units} {word} shows decoupling: all are coupled."


def _sentence(rungs: dict[str, int]) -> str:
    return ", ".join(f"{rungs[r]} {r}" for r in reversed(RUNGS) if rungs.get(r))


_ADJUST = {"bh": "Benjamini–Hochberg", "holm": "Holm", "none": "not adjusted"}


def verdicts(result: Any, unit_words: tuple[str, str] = ("unit", "units")) -> list[Verdict]:
    """One :class:`Verdict` per pressure of a ``GradeResult``; ``unit_words`` name a unit in
    the sentences (singular, plural)."""
    out = []
    table = result.table
    crit = result.criteria
    for pressure, rows in table.groupby("pressure", sort=False):
        rung_counts = Counter(rows["rung"])
        rungs = {r: int(rung_counts[r]) for r in RUNGS if rung_counts.get(r)}
        flag_counts: Counter[str] = Counter()
        for cell in rows["flags"]:
            flag_counts.update(f.strip() for f in str(cell or "").split(",") if f.strip())
        flags = dict(sorted(flag_counts.items(), key=lambda kv: (-kv[1], kv[0])))
        window = tuple(result.details["windows"][pressure])
        basis = str(rows["basis"].iloc[0])
        units = len(rows)
        headline = _headline(rungs, units, unit_words[1])
        spans = sorted(set(rows["span"]))
        span_text = (f"all on {spans[0].replace('-', '–')}" if len(spans) == 1 else
                     f"each on its own longest complete span inside {window[0]}–{window[1]}")
        adjust = _ADJUST.get(crit.adjust, crit.adjust)
        adjusted = (f"adjusted across {unit_words[1]} by {adjust}" if crit.adjust != "none"
                    else "not adjusted")
        intro = (f"Of {_plural(units, *unit_words)} graded on {pressure} ({basis} basis, "
                 f"{span_text}; direction tested one-sided at {crit.alpha:g}, p-values "
                 f"{adjusted}):")
        text = f"{headline} {intro} {_sentence(rungs)}."
        if flags:
            text += " Flags: " + ", ".join(f"{f} {n}" for f, n in flags.items()) + "."
        out.append(Verdict(pressure=str(pressure), basis=basis, window=window, units=units,
                           rungs=rungs, flags=flags, headline=headline, intro=intro,
                           text=text))
    return out
