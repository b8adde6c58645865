"""The typed CSV reader (pyarrow, block by block) gives the same panel as the plain reader,
and every bad cell is still reported by unit, year and column. Behaviour checks only."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

import evidence as ev
from evidence import DataError, _loading

pytest.importorskip("pyarrow")

CASES = {
    "plain": "region,year,gdp,ghg\nA,2000,1.5,2\nA,2001,1.6,2.1\nB,2000,3,4\nB,2001,3.2,4.1\n",
    "markers": "region,year,gdp,ghg\nA,2000,1.5,NA\nA,2001,..,2.1\nB,2000,3,-\nB,2001,3.2,4.1\n",
    "unsorted": "region,year,gdp,ghg\nB,2001,3.2,4.1\nA,2001,1.6,2.1\nB,2000,3,4\nA,2000,1.5,2\n",
    "spaces": "region, year, gdp, ghg\n A ,2000, 1.5,2\nA,2001,1.6 ,2.1\nB,2000,3,4\nB,2001,3.2,4.1\n",
    "bom": "\ufeffregion,year,gdp,ghg\nA,2000,1.5,2\nA,2001,1.6,2.1\nB,2000,3,4\nB,2001,3.2,4.1\n",
    "marker units": "region,year,gdp,ghg\nNA,2000,1.5,2\nNA,2001,1.6,2.1\n-,2000,3,4\n-,2001,3.2,4.1\n",
    "all missing column": "region,year,gdp,ghg\nA,2000,1.5,NA\nA,2001,1.6,NA\nB,2000,3,NA\nB,2001,3.2,NA\n",
}


def _plain(monkeypatch, path):
    monkeypatch.setattr(_loading, "_read_csv_typed", lambda *args: None)
    return ev.load_panel(path, unit="region")


@pytest.mark.parametrize("name", sorted(CASES))
def test_typed_reader_equals_plain_reader(tmp_path, monkeypatch, name):
    path = tmp_path / "panel.csv"
    path.write_text(CASES[name], encoding="utf-8")
    fast = ev.load_panel(path, unit="region")
    plain = _plain(monkeypatch, path)
    pd.testing.assert_frame_equal(fast.frame, plain.frame, check_index_type=False)
    pd.testing.assert_frame_equal(fast.audit, plain.audit)
    assert fast.units == plain.units


def test_text_in_a_later_block_falls_back_and_names_the_cell(tmp_path, monkeypatch):
    rows = ["region,year,gdp"] + [f"U{i:03d},{2000 + j},{i + j}.5" for i in range(60) for j in range(2)]
    rows[-1] = "U059,2001,twelve"
    path = tmp_path / "late.csv"
    path.write_text("\n".join(rows) + "\n", encoding="utf-8")
    monkeypatch.setattr(_loading, "_BLOCK_BYTES", 256)  # many small blocks: text arrives late
    with pytest.raises(DataError, match="non-numeric cell 'twelve' at unit 'U059', year 2001"):
        ev.load_panel(path, unit="region")


def test_blocks_join_to_the_same_panel(tmp_path, monkeypatch):
    rng = np.random.default_rng(1)
    frame = pd.DataFrame({"region": np.repeat([f"R{i:02d}" for i in range(40)], 30),
                          "year": np.tile(np.arange(1990, 2020), 40),
                          "gdp": rng.lognormal(size=1200)})
    frame.loc[7, "gdp"] = np.nan
    path = tmp_path / "many.csv"
    frame.to_csv(path, index=False)
    whole = ev.load_panel(path, unit="region")
    monkeypatch.setattr(_loading, "_BLOCK_BYTES", 512)
    pieces = ev.load_panel(path, unit="region")
    pd.testing.assert_frame_equal(whole.frame, pieces.frame)
    assert len(pieces.audit) == 1


PARQUET_CASES = {
    "numbers": pd.DataFrame({"region": ["B", "A", "B", "A"], "year": [2001, 2001, 2000, 2000],
                             "gdp": [3.2, 1.6, 3.0, 1.5], "ghg": [4.1, np.nan, 4.0, 2.0]}),
    "text cells": pd.DataFrame({"region": ["A", "A", "B", "B"], "year": ["2000", "2001", "2000", "2001"],
                                "gdp": ["1.5", "..", "3", "3.2"], "ghg": [2.0, 2.1, 4.0, 4.1]}),
    "categorical units": pd.DataFrame({"region": pd.Categorical(["A", "A", "B", "B"]),
                                       "year": [2000, 2001, 2000, 2001],
                                       "gdp": [1.5, 1.6, 3.0, 3.2], "ghg": [2, 3, 4, 5]}),
    "all missing column": pd.DataFrame({"region": ["A", "A", "B", "B"], "year": [2000, 2001] * 2,
                                        "gdp": [1.5, 1.6, 3.0, 3.2], "ghg": [None] * 4}),
}


@pytest.mark.parametrize("name", sorted(PARQUET_CASES))
def test_parquet_batches_equal_pandas_reader(tmp_path, monkeypatch, name):
    # reference: pandas.read_parquet (the plain path); the batch reader must give the same panel
    path = tmp_path / "panel.parquet"
    PARQUET_CASES[name].to_parquet(path, index=False)
    fast = ev.load_panel(path, unit="region")
    monkeypatch.setattr(_loading, "_read_parquet_typed", lambda *args: None)
    plain = ev.load_panel(path, unit="region")
    pd.testing.assert_frame_equal(fast.frame, plain.frame, check_index_type=False)
    pd.testing.assert_frame_equal(fast.audit, plain.audit)
    assert fast.units == plain.units


def test_parquet_with_a_named_index_reads_as_pandas_does(tmp_path):
    frame = PARQUET_CASES["numbers"].set_index("region")
    path = tmp_path / "indexed.parquet"
    frame.to_parquet(path)
    assert _loading._read_parquet_typed(path) is None   # left to pandas.read_parquet
