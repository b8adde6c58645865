"""What readers see instead of column names and test keywords.

* ``labels`` rename variables and columns (``{"log_gdp": "ln GDP"}``); a name with no label of its
  own but derived from one that has (``log_x``, ``diff_x``, ``growth_x``, ``x_per_y``,
  ``x_per_capita``, ``x_sq``, ``x_1990``) is written from its parts: ``log_gdp_sq`` with
  ``{"gdp": "GDP"}`` reads "(ln GDP)²".
* Published tests appear in their author–year form ("Pesaran (2004) CD").

Every function returns plain Unicode text; the renderers escape it for their format.
"""

from __future__ import annotations

import re
from collections.abc import Mapping
from typing import Any

from evidence.errors import SpecError

__all__ = ["check_labels", "display_name", "relabel", "header_name", "test_name"]

_SUFFIX_YEAR = re.compile(r"(.+)_(\d{4})")
_DERIVED = re.compile(r"[A-Za-z][A-Za-z0-9]*_[A-Za-z0-9_]*[A-Za-z0-9]")
_POWERS = (("_sq", "²"), ("_cu", "³"))
_PREFIXES = (("log_", "ln "), ("diff_", "Δ "), ("growth_", "growth of "))


def check_labels(labels: Any) -> dict[str, str]:
    """``labels`` as a dict of str to str (``None`` gives no labels); anything else is a SpecError."""
    if labels is None:
        return {}
    if not isinstance(labels, Mapping):
        raise SpecError(f"labels must map names to the text shown, e.g. {{'log_gdp': 'ln GDP'}}; "
                        f"got {type(labels).__name__}.")
    out = {}
    for key, value in labels.items():
        if not isinstance(key, str) or not isinstance(value, str) or not key:
            raise SpecError(f"labels must map names (text) to text; the entry {key!r}: {value!r} "
                            "is not a pair of non-empty strings.")
        out[key] = value
    return out


def display_name(name: str, labels: Mapping[str, str]) -> str:
    """``name`` as readers see it: its label, else the readable form of a derived name."""
    if name in labels:
        return labels[name]
    year = _SUFFIX_YEAR.fullmatch(name)
    if year:
        return f"{display_name(year.group(1), labels)} ({year.group(2)})"
    for suffix, power in _POWERS:
        if name.endswith(suffix) and len(name) > len(suffix):
            inner = display_name(name[: -len(suffix)], labels)
            return f"({inner}){power}" if " " in inner else f"{inner}{power}"
    if name.endswith("_per_capita") and len(name) > len("_per_capita"):
        return f"{display_name(name[: -len('_per_capita')], labels)} per capita"
    for prefix, word in _PREFIXES:
        if name.startswith(prefix) and len(name) > len(prefix):
            return word + display_name(name[len(prefix):], labels)
    if "_per_" in name.strip("_"):
        left, right = name.split("_per_", 1)
        if left and right:
            return f"{display_name(left, labels)} per {display_name(right, labels)}"
    return name


def relabel(text: str, labels: Mapping[str, str]) -> str:
    """Every labelled name and every derived name (a word with ``_``) in ``text``, renamed.

    A whole text equal to a label's key is replaced outright (keys may hold spaces); otherwise
    keys and derived names are replaced where they stand as whole words.
    """
    text = str(text)
    if text in labels:
        return labels[text]
    keys = sorted(labels, key=len, reverse=True)
    alternatives = [re.escape(k) for k in keys] + [_DERIVED.pattern]
    pattern = re.compile(r"(?<![\w\\])(?:" + "|".join(alternatives) + r")(?![\w])")
    return pattern.sub(lambda m: display_name(m.group(0), labels), text)


def header_name(name: str, labels: Mapping[str, str]) -> str:
    """A column head: labelled or derived as :func:`relabel`, remaining underscores as spaces."""
    shown = relabel(str(name), labels)
    return shown if shown != str(name) else shown.replace("_", " ")


# Our test keywords and the author–year form a table shows instead (longest prefix first wins).
_AUTHOR_YEAR: tuple[tuple[str, str], ...] = (
    ("Pesaran CD", "Pesaran (2004) CD"),
    ("Pesaran scaled LM", "Pesaran (2004) scaled LM"),
    ("Breusch-Pagan LM", "Breusch & Pagan (1980) LM"),
    ("Baltagi-Feng-Kao bias-corrected LM", "Baltagi, Feng & Kao (2012) bias-corrected LM"),
    ("Pesaran-Yamagata adjusted Delta", "Pesaran & Yamagata (2008) adjusted Δ"),
    ("Pesaran-Yamagata Delta", "Pesaran & Yamagata (2008) Δ"),
    ("IPS W-tbar", "Im, Pesaran & Shin (2003) W̄"),
    ("LLC", "Levin, Lin & Chu (2002) t*"),
    ("Breitung", "Breitung (2000) λ"),
    ("Hadri", "Hadri (2000) Z"),
    ("Fisher (Maddala-Wu P)", "Maddala & Wu (1999) P"),
    ("Fisher (Choi Z)", "Choi (2001) Z"),
    ("Fisher (Choi Pm)", "Choi (2001) Pm"),
    ("Fisher (Choi L*)", "Choi (2001) L*"),
    ("CIPS*", "Pesaran (2007) CIPS*"),
    ("CIPS", "Pesaran (2007) CIPS"),
    ("ADF", "Said & Dickey (1984) ADF"),
    ("Phillips-Perron", "Phillips & Perron (1988) Zt"),
    ("KPSS", "Kwiatkowski et al. (1992) KPSS"),
    ("DF-GLS", "Elliott, Rothenberg & Stock (1996) DF-GLS"),
    ("Zivot-Andrews", "Zivot & Andrews (1992)"),
    ("Lee-Strazicich", "Lee & Strazicich (2003) LM"),
    ("Engle-Granger", "Engle & Granger (1987)"),
    ("Phillips-Ouliaris", "Phillips & Ouliaris (1990)"),
    ("Johansen", "Johansen (1991)"),
    ("ARDL bounds", "Pesaran, Shin & Smith (2001) bounds F"),
    ("Pedroni", "Pedroni (1999)"),
    ("Kao", "Kao (1999)"),
    ("Westerlund", "Westerlund (2007)"),
    ("Dumitrescu-Hurlin", "Dumitrescu & Hurlin (2012) Z̄"),
    ("Hausman", "Hausman (1978)"),
    ("Chow", "Chow (1960) F"),
    ("OLS-CUSUM", "Ploberger & Krämer (1992) OLS-CUSUM"),
    ("CUSUM", "Brown, Durbin & Evans (1975) CUSUM"),
    ("pooled supF", "Bai (2010) pooled supF"),
    ("supF", "Bai & Perron (1998) supF"),
    ("UDmax", "Bai & Perron (1998) UDmax"),
    ("WDmax", "Bai & Perron (1998) WDmax"),
    ("Lind-Mehlum test", "Lind & Mehlum (2010) test"),
    ("Carree-Klomp", "Carree & Klomp (1997)"),
    ("Phillips-Sul log t", "Phillips & Sul (2007) log t"),
    ("Kendall concordance", "Boyle & McCarthy (1997) Kendall concordance"),
    ("beta convergence", "Barro & Sala-i-Martin (1992) β convergence"),
)
_OWNER = re.compile(r"(\(\d+\) |[^:()]*(?:\([^()]*\))?[^:()]*: )?(.*)", re.S)
_SYMBOLS = (("<=", "≤"), (">=", "≥"), (" -> ", " → "))


def test_name(name: str, labels: Mapping[str, str] | None = None) -> str:
    """The author–year form of a test keyword, keeping a leading owner (``"FE: ..."``, ``"(1) "``).

    >>> test_name("Pesaran CD"), test_name("Johansen trace r<=1")
    ('Pesaran (2004) CD', 'Johansen (1991) trace r ≤ 1')
    """
    match = _OWNER.fullmatch(str(name))
    owner, rest = (match.group(1) or "", match.group(2)) if match else ("", str(name))
    owner = owner[:1].upper() + owner[1:]
    for keyword, shown in _AUTHOR_YEAR:
        if rest == keyword or rest.startswith(keyword + " ") or (
                rest.startswith(keyword) and not rest[len(keyword):len(keyword) + 1].isalnum()):
            rest = shown + rest[len(keyword):]
            break
    for old, new in _SYMBOLS:
        rest = rest.replace(old, f" {new.strip()} " if old in ("<=", ">=") else new)
    rest = re.sub(r" {2,}", " ", rest)
    return relabel(owner + rest, labels or {})


test_name.__test__ = False  # type: ignore[attr-defined]  # not a pytest test
