"""Benchmark: optimal break partitions of many short series, ours against reference implementations.

Prints, in one run:
1. 10,000 series of length 60, trend model, up to 5 breaks, trim 0.15 (h = 9): our batched SSR
   tables + dynamic programme against ruptures' exact dynamic programming (``Dynp``, model
   ``"linear"`` on the design (1, t), ``jump=1``, ``min_size=9``) run per series; the optimal
   partitions and SSRs are compared (SSR to 1e-8 relative) and the speed ratio printed, with the
   peak memory of our run (tracemalloc).
2. ``screen_breaks`` end to end (panel to arrays, SSR tables and partitions, the tests with their
   finite-sample p-values, the selection, the break-date intervals, the table, the clustering
   test) on the same 10,000 series with ``max_breaks=5, trim=0.15`` (so that it computes the
   partitions for m = 1..5, as ruptures does), after a warm-up that builds the one-off
   finite-sample null table (its time is printed separately); the screen's partitions for every
   m are compared with ruptures', the speed ratio per series and the peak memory of the screen
   (tracemalloc) printed; the default options are timed too.
3. Time per series of a naive loop of statsmodels OLS fits, one per candidate segment, on a
   smaller sample.
4. The same screen run serially and on a local Dask cluster: identical output or not.

Usage: ``python tests/benchmarks/bench_breaks.py [--series 10000] [--ruptures 10000] [--no-dask]``
"""

from __future__ import annotations

import argparse
import time
import tracemalloc

import numpy as np

from evidence.breaks.segment import min_length, optimal_partitions, regime_design, ssr_tables


def ours(y: np.ndarray, h: int, max_breaks: int, chunk: int = 250) -> tuple[np.ndarray, np.ndarray]:
    ssr, breaks = [], []
    for start in range(0, len(y), chunk):
        s, b = optimal_partitions(ssr_tables(y[start:start + chunk], "trend", h), max_breaks, h)
        ssr.append(s)
        breaks.append(b)
    return np.concatenate(ssr), np.concatenate(breaks)


def with_ruptures(y: np.ndarray, h: int, max_breaks: int) -> tuple[np.ndarray, list[list[list[int]]]]:
    import ruptures as rpt

    z = regime_design("trend", y.shape[1])
    ssr = np.zeros((len(y), max_breaks + 1))
    parts = []
    for n, row in enumerate(y):
        algo = rpt.Dynp(model="linear", min_size=h, jump=1).fit(np.column_stack([row, z]))
        cuts = []
        for m in range(1, max_breaks + 1):
            bkps = algo.predict(n_bkps=m)
            ssr[n, m] = algo.cost.sum_of_costs(bkps)
            cuts.append([b - 1 for b in bkps[:-1]])
        parts.append(cuts)
    return ssr, parts


def naive_statsmodels(y: np.ndarray, h: int) -> np.ndarray:
    import statsmodels.api as sm

    nobs = y.shape[1]
    z = regime_design("trend", nobs)
    tables = np.full((len(y), nobs, nobs), np.inf)
    for n, row in enumerate(y):
        for i in range(nobs):
            for j in range(i + h - 1, nobs):
                tables[n, i, j] = sm.OLS(row[i:j + 1], z[i:j + 1]).fit().ssr
    return tables


def main() -> None:
    parser = argparse.ArgumentParser()
    parser.add_argument("--series", type=int, default=10_000)
    parser.add_argument("--ruptures", type=int, default=10_000, help="series also run through ruptures")
    parser.add_argument("--naive", type=int, default=10, help="series for the statsmodels loop")
    parser.add_argument("--no-dask", action="store_true")
    args = parser.parse_args()

    nobs, trim, max_breaks = 60, 0.15, 5
    h = min_length(nobs, trim)
    rng = np.random.default_rng(20240101)
    t = np.arange(nobs)
    kinks = rng.integers(10, 50, size=args.series)
    y = (0.02 * t + np.where(t[None, :] > kinks[:, None], -0.03 * (t[None, :] - kinks[:, None]), 0.0)
         + rng.normal(scale=0.05, size=(args.series, nobs)))

    ours(y[:10], h, max_breaks)  # warm-up
    start = time.perf_counter()
    ssr, breaks = ours(y, h, max_breaks)
    ours_time = time.perf_counter() - start
    tracemalloc.start()  # a second, untimed run measures the peak memory
    ours(y, h, max_breaks)
    peak = tracemalloc.get_traced_memory()[1]
    tracemalloc.stop()

    k = min(args.ruptures, args.series)
    start = time.perf_counter()
    r_ssr, r_parts = with_ruptures(y[:k], h, max_breaks)
    r_time = time.perf_counter() - start
    rel = np.abs(ssr[:k, 1:] - r_ssr[:, 1:]) / r_ssr[:, 1:]
    same = all(list(breaks[n, m, :m]) == r_parts[n][m - 1]
               for n in range(k) for m in range(1, max_breaks + 1))
    per_ours = ours_time / args.series
    per_rpt = r_time / k
    print(f"series: {args.series}, T={nobs}, trend model, max_breaks={max_breaks}, trim={trim} (h={h})")
    print(f"ours     : {ours_time:8.3f} s total, {per_ours * 1e3:8.4f} ms/series, "
          f"peak traced memory {peak / 2**20:7.1f} MiB")
    print(f"ruptures : {r_time:8.3f} s for {k} series, {per_rpt * 1e3:8.4f} ms/series "
          "(Dynp, model='linear', jump=1, min_size=h)")
    print(f"ratio    : ours is {per_rpt / per_ours:6.1f}x faster per series")
    print(f"agreement: max relative SSR difference {rel.max():.2e} (tolerance 1e-8); "
          f"identical partitions for every m: {same}")

    import pandas as pd

    from evidence.breaks import screen_breaks
    from evidence.panel import Panel

    panel = Panel.from_arrays({"x": y.T}, units=[f"u{i:05d}" for i in range(args.series)],
                              years=range(1960, 1960 + nobs))
    start = time.perf_counter()
    screen_breaks(panel.select(list(panel.units[:20])), "x", max_breaks=max_breaks, trim=trim)
    table_time = time.perf_counter() - start
    start = time.perf_counter()
    screened = screen_breaks(panel, "x", max_breaks=max_breaks, trim=trim)
    screen_time = time.perf_counter() - start
    tracemalloc.start()
    screen_breaks(panel, "x", max_breaks=max_breaks, trim=trim)
    screen_peak = tracemalloc.get_traced_memory()[1]
    tracemalloc.stop()
    screen_breaks(panel.select(list(panel.units[:20])), "x")  # the default's table
    start = time.perf_counter()
    default = screen_breaks(panel, "x")
    default_time = time.perf_counter() - start
    first = 1960
    same_screen = all(
        list(screened.partitions(m).to_numpy()[:k]) == [tuple(int(b) + first for b in r[m - 1])
                                                        for r in r_parts]
        for m in range(1, max_breaks + 1))
    per_screen = screen_time / args.series
    print(f"screen   : {screen_time:8.3f} s total, {per_screen * 1e3:8.4f} ms/series end to end "
          f"(tests, selection, intervals, table, clustering; max_breaks={max_breaks}, trim={trim}), "
          f"peak traced memory {screen_peak / 2**20:7.1f} MiB; one-off finite-sample null table "
          f"{table_time:6.1f} s (cached after)")
    print(f"ratio    : the screen is {per_rpt / per_screen:6.1f}x faster per series than ruptures' "
          f"partitions for m = 1..{max_breaks} alone; identical partitions for every m: {same_screen}")
    print(f"default  : screen_breaks(panel, 'x') (max_breaks=3, trim=0.2) {default_time:8.3f} s, "
          f"{default_time / args.series * 1e3:8.4f} ms/series; units with breaks "
          f"{int((default.table['n_breaks'] > 0).sum())} of {len(default.table)}")

    kn = min(args.naive, args.series)
    start = time.perf_counter()
    naive = naive_statsmodels(y[:kn], h)
    n_time = (time.perf_counter() - start) / kn
    n_ssr, _ = optimal_partitions(naive, max_breaks, h)
    print(f"naive    : {n_time * 1e3:8.1f} ms/series (one statsmodels OLS per candidate segment, "
          f"{kn} series); ours is {n_time / per_ours:8.0f}x faster; "
          f"max relative SSR difference {np.max(np.abs(n_ssr - ssr[:kn]) / n_ssr):.2e}")

    if not args.no_dask:
        from evidence.panel import load_panel

        units = 200
        frame = pd.DataFrame({"unit": np.repeat([f"u{i:03d}" for i in range(units)], nobs),
                              "year": np.tile(np.arange(1960, 1960 + nobs), units),
                              "x": y[:units].ravel()})
        panel = load_panel(frame, unit="unit", time="year")
        start = time.perf_counter()
        serial = screen_breaks(panel, "x", max_breaks=max_breaks, trim=trim, chunk=50)
        s_time = time.perf_counter() - start
        start = time.perf_counter()
        dask = screen_breaks(panel, "x", max_breaks=max_breaks, trim=trim, chunk=50,
                             executor="dask")
        d_time = time.perf_counter() - start
        print(f"dask     : local cluster (2 workers) {d_time:6.2f} s vs serial {s_time:6.2f} s "
              f"on {units} units; identical output: {serial.table.equals(dask.table)}")


if __name__ == "__main__":
    main()
