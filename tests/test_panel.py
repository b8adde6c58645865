"""Loading and validating panels: layouts, file types, bad input, audit, derived series."""

from __future__ import annotations

import contextlib

import numpy as np
import pandas as pd
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from hypothesis.extra.pandas import column, data_frames
from numpy.testing import assert_allclose

import evidence as ev
from evidence import DataError, SpecError


def test_long_frame_loads_sorted_with_user_names(long_frame):
    shuffled = long_frame.sample(frac=1.0, random_state=1)
    panel = ev.load_panel(shuffled, unit="region", time="year")
    assert panel.units == ("Alda", "Brenn", "Corvo")
    assert panel.years == tuple(range(1990, 2024))
    assert panel.frame.index.names == ["region", "year"]
    assert panel.frame.index.is_monotonic_increasing
    assert panel.is_balanced and panel.audit.empty
    assert panel.series("Brenn", "gdp").index[0] == 1990


def test_default_names_use_first_column_and_year(long_frame):
    panel = ev.load_panel(long_frame)
    assert panel.unit_name == "region" and panel.time_name == "year"


def test_panel_does_not_mutate_caller_or_itself(long_frame):
    before = long_frame.copy()
    panel = ev.load_panel(long_frame)
    frame = panel.frame
    frame.iloc[0, 0] = -999.0
    assert panel.frame.iloc[0, 0] != -999.0
    pd.testing.assert_frame_equal(long_frame, before)


def test_wide_layout_equals_long(long_frame):
    long_panel = ev.load_panel(long_frame)
    melted = long_frame.melt(id_vars=["region", "year"], var_name="variable")
    wide = melted.pivot(index=["region", "variable"], columns="year", values="value").reset_index()
    wide.columns = [str(c) for c in wide.columns]
    wide_panel = ev.load_panel(wide, unit="region")
    pd.testing.assert_frame_equal(wide_panel.frame[list(long_panel.columns)], long_panel.frame)


@pytest.mark.parametrize("suffix", ["csv", "parquet", "xlsx"])
def test_file_types_round_trip(long_frame, tmp_path, suffix):
    path = tmp_path / f"panel.{suffix}"
    if suffix == "csv":
        long_frame.to_csv(path, index=False)
    elif suffix == "parquet":
        long_frame.to_parquet(path, index=False)
    else:
        long_frame.to_excel(path, index=False)
    panel = ev.load_panel(path, unit="region")
    expected = ev.load_panel(long_frame, unit="region")
    pd.testing.assert_frame_equal(panel.frame, expected.frame, check_exact=False, rtol=1e-12)


def test_missing_markers_are_audited_not_dropped(tmp_path):
    path = tmp_path / "p.csv"
    path.write_text("unit,year,gdp,co2\nA,2000,1,2\nA,2001,..,3\nA,2002,NA,4\nA,2004,5,6\n"
                    "B,2000,1,2\nB,2001,2,\nB,2002,3,4\nB,2004,4,5\n")
    panel = ev.load_panel(path)
    audit = panel.audit
    gdp = audit[(audit.unit == "A") & (audit.column == "gdp")].iloc[0]
    assert gdp.years == "2001-2002" and gdp["count"] == 2 and gdp.reason == "missing value"
    assert ((audit.unit == "B") & (audit.column == "co2") & (audit.years == "2001")).any()
    gaps = audit[audit.reason.str.startswith("gap")]
    assert set(gaps.unit) == {"A", "B"} and set(gaps.years) == {"2003"}
    assert not panel.is_balanced
    assert len(panel.gaps()) == len(audit)


def _frame(**changes):
    base = {"unit": ["A", "A", "A", "B", "B", "B"], "year": [2000, 2001, 2002, 2000, 2001, 2002],
            "gdp": [1.0, 2.0, 3.0, 4.0, 5.0, 6.0], "co2": [1.0, 1.5, 2.0, 3.0, 2.0, 1.0]}
    base.update(changes)
    return pd.DataFrame(base)


@pytest.mark.parametrize(("frame", "kwargs", "fragments"), [
    (_frame(year=[2000, 2000, 2002, 2000, 2001, 2002]), {}, ["unit 'A'", "year 2000", "2 times"]),
    (_frame(gdp=[1, 2, "abc", 4, 5, 6]), {}, ["column 'gdp'", "'abc'", "unit 'A'", "year 2002"]),
    (_frame(year=[2000, 2001.5, 2002, 2000, 2001, 2002]), {}, ["unit 'A'", "non-integer year"]),
    (_frame(year=[2000, 2001, "x", 2000, 2001, 2002]), {}, ["unit 'A'", "'x'"]),
    (_frame(year=[2000, 2001, 20022, 2000, 2001, 2002]), {}, ["unit 'A'", "20022", "range"]),
    (_frame(unit=["A", None, "A", "B", "B", "B"]), {}, ["data row 2", "no unit label"]),
    (_frame(), {"unit": "country"}, ["'country'", "not in the data"]),
    (_frame(), {"columns": ["gpd"]}, ["'gpd'", "Did you mean 'gdp'"]),
    (_frame(), {"time": "yeer"}, ["'yeer'", "Did you mean 'year'"]),
    (_frame(), {"min_years": 4}, ["unit 'A'", "at least 4"]),
    (_frame(gdp=[1, 2, np.inf, 4, 5, 6]), {}, ["infinite", "unit 'A'", "year 2002"]),
    (_frame(gdp=[True, False, True, True, True, True]), {}, ["column 'gdp'", "true/false"]),
    (pd.DataFrame(), {}, ["no rows"]),
    (pd.DataFrame({"unit": [], "year": [], "gdp": []}), {}, ["no rows"]),
    (pd.DataFrame({"unit": ["A", "B"], "year": [2000, 2000]}), {}, ["no variable columns"]),
])
def test_bad_input_raises_specific_data_error(frame, kwargs, fragments):
    with pytest.raises(DataError) as info:
        ev.load_panel(frame, **kwargs)
    message = str(info.value)
    for fragment in fragments:
        assert fragment in message


@pytest.mark.parametrize(("content", "fragment"), [
    ("", "is empty"),
    ("unit,year,gdp\n", "no rows"),
    ("unit,year,gdp,gdp\nA,2000,1,2\n", "more than once"),
])
def test_bad_files_raise_data_error(tmp_path, content, fragment):
    path = tmp_path / "bad.csv"
    path.write_text(content)
    with pytest.raises(DataError, match=fragment):
        ev.load_panel(path)


def test_missing_file_and_unknown_extension(tmp_path):
    with pytest.raises(DataError, match="does not exist"):
        ev.load_panel(tmp_path / "nothing.csv")
    other = tmp_path / "data.sav"
    other.write_text("x")
    with pytest.raises(DataError, match="unknown extension"):
        ev.load_panel(other)
    with pytest.raises(DataError, match="cannot read a panel from a int"):
        ev.load_panel(42)


def test_short_units_can_be_excluded_and_audited():
    frame = _frame(unit=["A", "A", "A", "B", "C", "C"], year=[2000, 2001, 2002, 2000, 2000, 2001])
    with pytest.raises(DataError, match="unit 'B' has 1 year"):
        ev.load_panel(frame)
    panel = ev.load_panel(frame, drop_short=True)
    assert panel.units == ("A", "C")
    row = panel.audit[panel.audit.unit == "B"].iloc[0]
    assert row.reason.startswith("unit excluded") and row.years == "2000"


def test_unselected_and_unused_columns_are_audited():
    panel = ev.load_panel(_frame(), columns=["gdp"])
    assert panel.columns == ("gdp",)
    assert (panel.audit.reason == "column not selected").sum() == 1
    wide = pd.DataFrame({"unit": ["A", "A"], "variable": ["gdp", "co2"], "source": ["s", "s"],
                         "2000": [1, 2], "2001": [2, 3]})
    wpanel = ev.load_panel(wide)
    assert wpanel.audit.iloc[0].column == "source"


def test_options_are_checked():
    with pytest.raises(SpecError, match="layout='diagonal'"):
        ev.load_panel(_frame(), layout="diagonal")
    with pytest.raises(SpecError, match="min_years"):
        ev.load_panel(_frame(), min_years=0)
    with pytest.raises(SpecError, match="basis"):
        ev.load_panel(_frame(), basis={"co2": "imported"})
    assert ev.load_panel(_frame(), layout="LONG").columns == ("gdp", "co2")


def test_derived_series_match_numpy(long_frame):
    panel = ev.load_panel(long_frame)
    derived = (panel.with_log("co2").with_per_capita("co2", "pop").with_intensity("co2", "gdp")
               .with_growth("gdp").with_growth("gdp", kind="percent", name="gdp_pct")
               .with_index("co2", 2000))
    frame = derived.frame
    assert_allclose(frame["log_co2"], np.log(frame["co2"]))
    assert_allclose(frame["co2_per_capita"], frame["co2"] / frame["pop"])
    assert_allclose(frame["co2_per_gdp"], frame["co2"] / frame["gdp"])
    alda = long_frame[long_frame.region == "Alda"]
    assert_allclose(frame.loc["Alda", "growth_gdp"].to_numpy()[1:], np.diff(np.log(alda.gdp)))
    assert np.isnan(frame.loc["Alda", "growth_gdp"].iloc[0])
    assert_allclose(frame.loc["Alda", "gdp_pct"].to_numpy()[1:],
                    alda.gdp.to_numpy()[1:] / alda.gdp.to_numpy()[:-1] - 1)
    assert_allclose(frame.loc[("Corvo", 2000), "co2_index2000"], 100.0)
    assert panel.columns == ("gdp", "co2", "pop")  # the original panel is unchanged


def test_growth_is_not_computed_across_gaps():
    frame = _frame(year=[2000, 2001, 2003, 2000, 2001, 2002])
    panel = ev.load_panel(frame).with_growth("gdp")
    assert np.isnan(panel.frame.loc[("A", 2003), "growth_gdp"])


def test_log_of_non_positive_value_names_unit_and_year():
    panel = ev.load_panel(_frame(co2=[1.0, 1.5, 0.0, 3.0, 2.0, 1.0]))
    with pytest.raises(DataError, match=r"column 'co2' is 0 at unit 'A', year 2002"):
        panel.with_log("co2")
    with pytest.raises(DataError, match="unit 'A'"):
        panel.with_intensity("gdp", "co2")


def test_window_and_select():
    panel = ev.load_panel(_frame())
    assert panel.window((2001, 2002)).years == (2001, 2002)
    assert panel.window("2000:2001").years == (2000, 2001)
    assert panel.select(["B"]).units == ("B",)
    with pytest.raises(DataError, match="unit 'C'"):
        panel.select(["C"])
    with pytest.raises(SpecError, match="outside"):
        panel.window((1950, 1960))
    with pytest.raises(SpecError, match="start before its end"):
        panel.window((2002, 2001))


# ------------------------------------------------------------------ hypothesis
_cells = st.one_of(st.none(), st.floats(allow_nan=True, allow_infinity=True), st.integers(),
                   st.text(max_size=6), st.booleans(), st.sampled_from(["..", "NA", "", "2001", "-1"]))


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(data_frames([column("unit", elements=st.one_of(st.none(), st.integers(0, 3),
                                                      st.sampled_from(["A", "B", " ", ""]))),
                    column("year", elements=_cells),
                    column("gdp", elements=_cells),
                    column("co2", elements=_cells)]),
       st.booleans())
def test_malformed_tables_only_raise_data_error(frame, drop_short):
    try:
        panel = ev.load_panel(frame, drop_short=drop_short)
    except DataError:
        return
    assert isinstance(panel, ev.Panel)
    assert panel.frame.index.is_unique


@settings(max_examples=60, deadline=None)
@given(st.text(max_size=200))
def test_malformed_csv_text_only_raises_data_error(tmp_path_factory, text):
    path = tmp_path_factory.mktemp("csv") / "x.csv"
    path.write_text(text, encoding="utf-8")
    with contextlib.suppress(DataError):
        ev.load_panel(path)


def test_compound_rate_matches_hand_computation(long_frame):
    panel = ev.load_panel(long_frame)
    rate = panel.compound_rate("gdp", (1995, 2020))
    alda = long_frame[long_frame.region == "Alda"].set_index("year").gdp
    assert rate.loc["Alda"] == pytest.approx((alda[2020] / alda[1995]) ** (1 / 25) - 1, rel=1e-12)
    assert list(rate.index) == list(panel.units)
