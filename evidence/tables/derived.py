"""Tables of an estimate with what is derived from it: beta convergence and the Kuznets curve.

Both use the regression layout (:mod:`evidence.tables.regression`) and add, below a second rule,
the quantities a reader asks for next: the speed of convergence and half-life with the one-sided
test; the turning points with their intervals and the U test.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from typing import Any

from evidence.convergence.beta import BetaResult
from evidence.elasticity.ekc import EKCResult
from evidence.tables._cells import Number, table_pvalue
from evidence.tables._names import display_name, test_name
from evidence.tables.regression import check_table_options, estimate_columns, render_frame, table_of_columns

__all__ = ["beta_table", "ekc_table"]

_FORMS = {"cross_section": "Cross-section", "panel": "Panel, unit effects"}


def _plain_pvalue(p: float) -> str:
    cell = table_pvalue(p)
    return cell.plain() if math.isfinite(p) and isinstance(cell, Number) else "n/a"


def _pair(value: float, se: float, digits: int) -> tuple[Any, Any]:
    if not (math.isfinite(value) and math.isfinite(se)):
        return "", ""
    return Number(value, digits), Number(se, digits, enclose="()")


def beta_table(result: BetaResult, fmt: str = "text", *, title: str = "",
               notes: Sequence[str] = (), digits: int = 3, labels: Mapping[str, str] | None = None,
               label: str | None = None, caution: bool = True, fit: str = "auto") -> str:
    """Beta convergence: the growth regression (slope on the initial level, R², units), the
    speed of convergence and half-life, and the one-sided test of H0 slope ≥ 0.

    Speed and half-life are shown only when the slope is negative with a one-sided p-value below
    0.10; otherwise a note says why they are left out (a half-life of thousands of years from an
    insignificant slope means nothing). Options as in :func:`~evidence.tables.regression_table`.
    """
    fmt, digits, labels, label, fit = check_table_options(fmt, digits, labels, label, fit)
    test = result.test
    caption = title or f"Beta convergence, {result.window[0]}–{result.window[1]}"
    if fmt in ("csv", "json"):
        frame = result.estimate.to_frame().rename_axis("term").reset_index()
        for key in ("speed", "speed_se", "half_life", "half_life_se"):
            frame[key] = getattr(result, key)
        frame["test_statistic"], frame["test_pvalue"] = test.statistic, test.pvalue
        return render_frame(frame, fmt, title=caption, notes=notes, index=False, labels=labels,
                            caution=caution)
    body = estimate_columns([result.estimate], digits=digits, labels=labels)
    body.heads = [_FORMS.get(result.form, result.form)]
    extra: list[tuple[str, list[Any]]] = []
    meaningful = math.isfinite(test.pvalue) and test.pvalue < 0.10
    if meaningful:
        speed, speed_se = _pair(result.speed, result.speed_se, 4)
        half, half_se = _pair(result.half_life, result.half_life_se, 1)
        extra += [("Speed of convergence (a year)", [speed]), ("", [speed_se]),
                  ("Half-life (years)", [half]), ("", [half_se])]
    extra += [("One-sided t, H0: slope ≥ 0", [Number(test.statistic, digits)]),
              ("p-value", [table_pvalue(test.pvalue)])]
    more = [] if meaningful else [
        f"Speed of convergence and half-life not shown: the slope is not significantly negative "
        f"(one-sided p = {_plain_pvalue(test.pvalue)})."]
    more.append("Speed β from the slope b over τ years: β = −ln(1 + bτ)/τ; half-life ln 2/β; "
                "delta-method standard errors in parentheses.")
    if len(result.excluded):
        more += [f"Excluded: {r.unit} ({r.reason})." for r in result.excluded.itertuples()]
    body.rows += extra
    rules = len(body.rows) - len(extra)
    out = table_of_columns(body, fmt, title=caption, notes=[*more, *notes], labels=labels,
                           label=label, caution=caution, fit=fit, extra_rule=rules)
    return out


def ekc_table(result: EKCResult, fmt: str = "text", *, title: str = "",
              notes: Sequence[str] = (), digits: int = 3, labels: Mapping[str, str] | None = None,
              label: str | None = None, caution: bool = True, fit: str = "auto") -> str:
    """The Kuznets curve: the polynomial's coefficients, each turning point (in logs with its
    standard error, its Fieller interval, in levels, inside the data or not) and the Lind–Mehlum
    U test. Options as in :func:`~evidence.tables.regression_table`.
    """
    fmt, digits, labels, label, fit = check_table_options(fmt, digits, labels, label, fit)
    activity = display_name(str(result.details.get("activity_term", "activity")), labels)
    caption = title or "Environmental Kuznets curve"
    if fmt in ("csv", "json"):
        return render_frame(result.turning_points.rename_axis("turning_point").reset_index(), fmt,
                            title=caption, notes=[*result.warnings, *notes], index=False,
                            labels=labels, caution=caution)
    body = estimate_columns([result.estimate], digits=digits, labels=labels)
    extra: list[tuple[str, list[Any]]] = []
    points = result.turning_points
    for i, row in enumerate(points.itertuples(), start=1):
        name = "Turning point" + (f" {i}" if len(points) > 1 else "")
        point, se = _pair(float(row.point), float(row.std_error), digits)
        extra += [(f"{name}, {activity}", [point]), ("", [se]),
                  ("Fieller 95% interval", [f"[{Number(row.fieller_lower, digits).plain()}, "
                                             f"{Number(row.fieller_upper, digits).plain()}]"]),
                  (f"{name}, level", [Number(float(row.level), 0, thousands=True)]),
                  ("Inside the data", ["yes" if row.inside_range else "no"])]
    if not len(points):
        extra.append(("Turning point", ["none"]))
    u = result.u_test
    u_name = test_name(u.test, labels)
    if u.applicable:
        extra += [(u_name, [Number(u.statistic, digits)]), ("p-value", [table_pvalue(u.pvalue)])]
    more = [*result.warnings]
    if u.applicable and u.null:
        more.append(f"H0 of the {u_name}: {u.null}.")
    elif not u.applicable:
        more.append(f"{u_name}: not computed ({u.details.get('inapplicable', '')}).")
    low, high = result.data_range
    more.append(f"Data range of {activity}: {Number(low, digits).plain()} to "
                f"{Number(high, digits).plain()}.")
    rules = len(body.rows)
    body.rows += extra
    return table_of_columns(body, fmt, title=caption, notes=[*more, *notes], labels=labels,
                            label=label, caution=caution, fit=fit, extra_rule=rules)
