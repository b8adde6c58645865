"""Benchmark: reading and validating a 2-million-row panel (20,000 units x 100 years x 8 columns).

Run: ``python tests/benchmarks/bench_load.py [N_UNITS]``. Writes a seeded CSV (and Parquet when
pyarrow is installed) of an invented facility panel to a temporary folder, then times, each in a
fresh process so that peak memory (max RSS) is its own:

* ``evidence.load_panel`` (read, validate every cell, index, audit);
* the reference: ``pandas.read_csv`` / ``read_parquet`` alone (no validation, no index).

Prints seconds, peak memory and the ratio. Goals (issue: county and facility scale): under 10 s
and under 1 GB for the CSV. Not part of the default test run.
"""

from __future__ import annotations

import subprocess
import sys
import tempfile
from pathlib import Path

import numpy as np
import pandas as pd

CHILD = r"""
import resource, sys, time
kind, path = sys.argv[1], sys.argv[2]
import pandas as pd
if kind == "evidence":
    import evidence as ev
start = time.perf_counter()  # imports are not timed
if kind == "evidence":
    panel = ev.load_panel(path, unit="facility", time="year")
    rows = len(panel.frame)
elif kind == "pandas-csv":
    rows = len(pd.read_csv(path))
else:
    rows = len(pd.read_parquet(path))
elapsed = time.perf_counter() - start
peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024  # kB on Linux
print(f"{elapsed:.3f} {peak:.0f} {rows}")
"""


def write_panel(folder: Path, n_units: int, n_years: int = 100) -> tuple[Path, Path | None]:
    rng = np.random.default_rng(20261203)
    units = np.repeat([f"facility {i:05d}" for i in range(n_units)], n_years)
    years = np.tile(np.arange(1924, 1924 + n_years), n_units)
    data = {"facility": units, "year": years}
    for j in range(8):
        walk = rng.normal(0.01, 0.03, (n_units, n_years)).cumsum(axis=1)
        data[f"series_{j + 1}"] = np.round(100.0 * np.exp(walk).ravel(), 4)
    frame = pd.DataFrame(data)
    csv = folder / "facilities.csv"
    frame.to_csv(csv, index=False)
    parquet = None
    try:
        parquet = folder / "facilities.parquet"
        frame.to_parquet(parquet, index=False)
    except ImportError:
        parquet = None
    return csv, parquet


def run(kind: str, path: Path) -> tuple[float, float, int]:
    out = subprocess.run([sys.executable, "-c", CHILD, kind, str(path)], check=True,
                         capture_output=True, text=True).stdout.split()
    return float(out[0]), float(out[1]), int(out[2])


def main(n_units: int = 20_000) -> None:
    with tempfile.TemporaryDirectory() as tmp:
        csv, parquet = write_panel(Path(tmp), n_units)
        size = csv.stat().st_size / 2**20
        print(f"panel: {n_units} units x 100 years x 8 columns = {n_units * 100:,} rows; CSV {size:.0f} MiB")
        cases = [("CSV", "pandas-csv", csv)] + ([("Parquet", "pandas-parquet", parquet)] if parquet else [])
        for label, reference, path in cases:
            t_ev, m_ev, rows = run("evidence", path)
            t_ref, m_ref, _ = run(reference, path)
            print(f"{label}: evidence.load_panel {t_ev:6.2f} s, peak {m_ev:6.0f} MiB ({rows:,} rows)")
            print(f"{label}: pandas read only    {t_ref:6.2f} s, peak {m_ref:6.0f} MiB")
            print(f"{label}: ratio (ours / read only) {t_ev / t_ref:.2f}x time, goal < 10 s and < 1024 MiB:"
                  f" {'met' if t_ev < 10 and m_ev < 1024 else 'NOT met'}")


if __name__ == "__main__":
    main(int(sys.argv[1]) if len(sys.argv) > 1 else 20_000)
