"""Cells of a table for people: numbers typeset per format, and escaping of text.

A :class:`Number` keeps the value and how to show it (decimals, thousands separators, stars,
parentheses, p-value style); each renderer writes it its own way: a true minus sign (U+2212) in
text, Markdown and HTML, math mode in LaTeX; stars as superscripts (``<sup>`` in Markdown and HTML,
``^{***}`` in LaTeX). Text cells are escaped for the target format, so data-derived names
(units, columns, labels) never reach it raw.
"""

from __future__ import annotations

import html
import math
import re
from dataclasses import dataclass
from typing import Any

import pandas as pd

__all__ = ["Number", "MINUS", "latex_escape", "markdown_escape", "html_escape", "minus",
           "table_pvalue", "NUMERIC_TEXT", "CONTROL_CHARS", "is_missing"]

MINUS = "\u2212"

#: A string that reads as a number: optional < or >, sign, digits with separators, decimals, %.
NUMERIC_TEXT = re.compile(r"[<>]?[-\u2212]?(\d{1,3}(,\d{3})+|\d+)(\.\d+)?%?")


@dataclass(frozen=True)
class Number:
    """A number cell: ``value`` shown with ``digits`` decimals.

    ``thousands`` groups digits by three; ``stars`` is a superscript mark (``"***"``);
    ``enclose`` is ``"()"`` or ``"[]"`` around the number; ``pvalue`` writes ``<0.001`` (for
    ``digits=3``) below the smallest shown value.
    """

    value: float
    digits: int = 3
    stars: str = ""
    enclose: str = ""
    thousands: bool = False
    pvalue: bool = False

    def core(self) -> str:
        """The number alone, ASCII hyphen for a minus (renderers replace it)."""
        value = float(self.value)
        if math.isnan(value):
            return ""
        if math.isinf(value):
            return "inf" if value > 0 else "-inf"
        if self.pvalue and value < 10.0 ** -self.digits:
            return f"<{10.0 ** -self.digits:.{self.digits}f}"
        text = f"{value:,.{self.digits}f}" if self.thousands else f"{value:.{self.digits}f}"
        if text.lstrip("-").strip("0.,") == "" and text.startswith("-"):
            text = text[1:]  # no "-0.000"
        return text

    def plain(self) -> str:
        """Unicode text: true minus, stars as plain asterisks."""
        core = self.core()
        if not core:
            return ""
        core = minus(core)
        if self.enclose:
            core = self.enclose[0] + core + self.enclose[1]
        return core + self.stars

    def html(self) -> str:
        """HTML (also used in Markdown): true minus, stars in ``<sup>``."""
        core = self.core()
        if not core:
            return ""
        core = html.escape(minus(core))
        if self.enclose:
            core = self.enclose[0] + core + self.enclose[1]
        return core + (f"<sup>{self.stars}</sup>" if self.stars else "")

    def latex_math(self) -> str:
        """Math-mode content for a dcolumn ``D`` column: ``-0.270^{***}``, ``{<}0.001``."""
        core = self.core()
        if not core:
            return ""
        core = core.replace(",", "{,}").replace("<", "{<}").replace("inf", r"\infty")
        if self.enclose:
            core = self.enclose[0] + core + self.enclose[1]
        return core + (f"^{{{self.stars}}}" if self.stars else "")

    def latex_text(self) -> str:
        """The same in running text (outside a numeric column)."""
        math_ = self.latex_math()
        return f"${math_}$" if math_ else ""


def minus(text: str) -> str:
    """Hyphens used as minus signs (before a digit, at the start or after a space, bracket or
    ``<``) replaced by U+2212."""
    return re.sub(r"(^|[\s(\[<>=,;/])-(?=[\d.])", lambda m: m.group(1) + MINUS, str(text))


def table_pvalue(p: Any, digits: int = 3) -> Number | str:
    """A p-value cell: ``digits`` decimals, ``<0.001`` below; empty when missing."""
    try:
        value = float(p)
    except (TypeError, ValueError):
        return ""
    if math.isnan(value):
        return ""
    return Number(value, digits, pvalue=True)


_LATEX_SPECIAL = {"\\": r"\textbackslash{}", "&": r"\&", "%": r"\%", "$": r"\$", "#": r"\#",
                  "_": r"\_", "{": r"\{", "}": r"\}", "~": r"\textasciitilde{}",
                  "^": r"\textasciicircum{}", "<": r"\textless{}", ">": r"\textgreater{}",
                  "|": r"\textbar{}", "\n": " ", "\r": " ", "\t": " ", "\f": " ", "\v": " ",
                  MINUS: "$-$", "\u2013": "--", "\u2014": "---", "\u00a0": "~",
                  "\u2018": "`", "\u2019": "'", "\u201c": "``", "\u201d": "''",
                  "\u2026": r"\ldots{}", "\u00b2": "$^{2}$", "\u00b3": "$^{3}$",
                  "\u00b9": "$^{1}$", "\u2082": "$_{2}$", "\u2080": "$_{0}$", "\u00b0": "$^{\\circ}$",
                  "\u00b1": r"$\pm$", "\u00d7": r"$\times$", "\u00b7": r"$\cdot$",
                  "\u2264": r"$\leq$", "\u2265": r"$\geq$", "\u2260": r"$\neq$",
                  "\u2192": r"$\rightarrow$", "\u2190": r"$\leftarrow$", "\u221e": r"$\infty$",
                  "\u221a": r"$\surd$", "\u2211": r"$\Sigma$", "\u2248": r"$\approx$",
                  "\u2032": "$'$", "\u2022": r"$\bullet$"}
_GREEK = {"α": "alpha", "β": "beta", "γ": "gamma", "δ": "delta", "ε": "epsilon", "θ": "theta",
          "λ": "lambda", "μ": "mu", "ν": "nu", "π": "pi", "ρ": "rho", "σ": "sigma", "τ": "tau",
          "φ": "phi", "χ": "chi", "ψ": "psi", "ω": "omega", "Δ": "Delta", "Γ": "Gamma",
          "Θ": "Theta", "Λ": "Lambda", "Π": "Pi", "Σ": "Sigma", "Φ": "Phi", "Ψ": "Psi",
          "Ω": "Omega"}
_LATEX_SPECIAL.update({k: f"$\\{v}$" for k, v in _GREEK.items()})
_COMBINING = {"\u0304": "bar", "\u0303": "tilde", "\u0302": "hat"}


CONTROL_CHARS = re.compile(r"[\x00-\x1f\x7f-\x9f]+")


def latex_escape(text: Any) -> str:
    """``text`` safe in LaTeX: special characters escaped, line breaks, blank lines and other
    control characters made one space (a paragraph break would end a table cell with an error),
    and common Unicode symbols (minus, dashes, Greek letters, super- and subscripts, W̄) written
    as LaTeX."""
    chars = CONTROL_CHARS.sub(" ", str(text))
    out: list[str] = []
    i = 0
    while i < len(chars):
        ch = chars[i]
        accent = _COMBINING.get(chars[i + 1]) if i + 1 < len(chars) else None
        if accent and ((ch.isalpha() and ch.isascii()) or ch in _GREEK):
            base = f"\\{_GREEK[ch]}" if ch in _GREEK else ch
            out.append(f"$\\{accent}{{{base}}}$")
            i += 2
            continue
        if ch in _COMBINING:
            i += 1  # a stray combining mark has nothing to sit on
            continue
        out.append(_LATEX_SPECIAL.get(ch, ch))
        i += 1
    return re.sub(r" {2,}", " ", "".join(out))


_MD_SPECIAL = {"\\": "\\\\", "|": "\\|", "*": "\\*", "_": "\\_", "`": "\\`", "[": "\\[",
               "]": "\\]", "#": "\\#", "~": "\\~", "$": "\\$", "^": "\\^", "<": "&lt;",
               ">": "&gt;", "&": "&amp;"}


def markdown_escape(text: Any) -> str:
    """``text`` safe in Markdown (and in the HTML Markdown may carry): markup characters
    backslash-escaped, ``<``, ``>`` and ``&`` as entities, line breaks as spaces."""
    text = CONTROL_CHARS.sub(" ", str(text))
    return re.sub(r" {2,}", " ", "".join(_MD_SPECIAL.get(ch, ch) for ch in text)).strip()


def html_escape(text: Any) -> str:
    """``text`` safe in HTML."""
    return html.escape(str(text))


def is_missing(value: Any) -> bool:
    """None, NaN, NA."""
    if value is None:
        return True
    if isinstance(value, (str, Number)):
        return False
    try:
        return bool(pd.isna(value))
    except (TypeError, ValueError):
        return False
