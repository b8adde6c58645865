"""Published unit-root and dependence numbers against ours.

Run: ``python paper_checks/roots.py``. Prints one line per check: source, published, ours, and
whether they agree (exactly for table lookups; within the stated tolerance for simulations).
Exits non-zero on a mismatch. The simulations are seeded and cached (``EVIDENCE_CACHE_DIR``).
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from evidence.roots import _cips_tables
from evidence.roots._cips import simulate_cips, table_critical_values
from evidence.roots._lm_breaks import break_grid, lm_statistics
from evidence.roots._panel_math import ips_moments
from evidence.roots.dependence import pesaran_cd_test

# (trend, p, T, published mean, published variance): Im, Pesaran & Shin (2003), Table 3, as
# collected in reference_values.md section 3.1
IPS_CELLS = [("constant", 0, 10, -1.504, 1.069), ("constant", 2, 30, -1.460, 0.865),
             ("constant", 4, 100, -1.495, 0.771), ("constant", 8, 25, -1.212, 1.217),
             ("trend", 0, 50, -2.176, 0.633), ("trend", 3, 20, -2.032, 0.983),
             ("trend", 8, 70, -2.046, 0.728)]
# (N, T, trend, truncated): Pesaran (2007), Table II cells compared with our simulation
CIPS_CELLS = [(10, 10, "constant", False), (20, 20, "constant", False), (30, 30, "trend", False),
              (10, 10, "trend", True), (50, 50, "none", False)]
CIPS_REPLICATIONS = 20000
CIPS_TOLERANCE = 0.045      # about 3 Monte Carlo s.e. of a tail quantile at 20 000 draws


def _lines() -> list[tuple[str, str, str, bool]]:
    out = []
    for trend, p, t, mean, var in IPS_CELLS:
        m, v, _ = ips_moments(np.array([p]), np.array([t]), trend)
        out.append((f"IPS (2003) Table 3, trend {trend}, p={p}, T={t}: E[t], Var[t]",
                    f"{mean:.3f}, {var:.3f}", f"{m[0]:.3f}, {v[0]:.3f}",
                    (m[0], v[0]) == (mean, var)))
    for n, t, trend, trunc in CIPS_CELLS:
        table = table_critical_values(n, t, trend, trunc)
        draws = simulate_cips(n, t, trend=trend, truncate=trunc, reps=CIPS_REPLICATIONS, seed=7)
        sim = {a: float(np.quantile(draws, a)) for a in (0.01, 0.05, 0.10)}
        same = all(abs(sim[a] - table[a]) <= CIPS_TOLERANCE for a in table)
        name = "CIPS*" if trunc else "CIPS"
        out.append((f"Pesaran (2007) Table II, {name}, trend {trend}, N={n}, T={t}: 1/5/10 % "
                    f"(ours simulated, {CIPS_REPLICATIONS} draws, within {CIPS_TOLERANCE})",
                    " ".join(f"{table[a]:.2f}" for a in (0.01, 0.05, 0.10)),
                    " ".join(f"{sim[a]:.2f}" for a in (0.01, 0.05, 0.10)), same))
    from statsmodels.datasets import grunfeld

    df = grunfeld.load_pandas().data
    df = df[df["firm"] != "American Steel"].astype({"year": int}).set_index(["firm", "year"])
    cd = pesaran_cd_test(df["invest"], prewhiten=False).statistic
    out.append(("Pesaran CD, Grunfeld 10 firms, raw investment (reference_values.md section 5)",
                "22.921588", f"{cd:.6f}", abs(cd - 22.921588) < 1e-6))
    import evidence as ev

    firms = grunfeld.load_pandas().data
    firms = firms[firms["firm"] != "American Steel"].astype({"year": int})
    fisher = ev.fisher_test(ev.load_panel(firms, unit="firm", time="year"), "value", combine="z",
                            max_lags=4, inference="asymptotic")
    out.append(("Choi Z, Grunfeld value, 10 firms, constant, AIC lags up to 4, MacKinnon p-values "
                "with capped units (issue 13; +1.56 before the fix)", "-1.66",
                f"{fisher.statistic:.2f}", abs(fisher.statistic + 1.66) < 0.005))
    from evidence.roots._calibrate import unit_null

    for trend, mean, var in (("constant", -1.526, 0.789), ("trend", -2.172, 0.690)):
        m, v = unit_null("adf", 31, trend, lags=0).moments(np.array([0.0]))
        out.append((f"IPS (2003) Table 3, {trend}, p=0, T=30 vs our simulated moments (4000 draws, "
                    "within 0.045 / 0.07)", f"{mean:.3f}, {var:.3f}", f"{m[0]:.3f}, {v[0]:.3f}",
                    abs(m[0] - mean) <= 0.045 and abs(v[0] - var) <= 0.07))
    rng = np.random.default_rng(2024)
    dates = break_grid(100, 1, 0.1)
    draws = [np.nanmin(lm_statistics(np.cumsum(rng.standard_normal(100)), dates, "level", 0)[0])
             for _ in range(4000)]
    q = float(np.quantile(draws, 0.05))
    out.append(("Lee & Strazicich (2004) Table 1, crash, T=100, 5 % (from memory) vs our "
                "simulation (4000 draws, within 0.1)", "-3.566", f"{q:.3f}", abs(q + 3.566) <= 0.1))
    return out


def main() -> int:
    rows = _lines()
    frame = pd.DataFrame(rows, columns=["source", "published", "ours", "same"])
    width = int(frame["source"].str.len().max())
    print(f"{'source':<{width}}  {'published':>22}  {'ours':>22}  same")
    for source, published, ours, same in rows:
        print(f"{source:<{width}}  {published:>22}  {ours:>22}  {'yes' if same else 'NO'}")
    print(f"truncation bounds K1, K2 (Pesaran 2007, section 4): {_cips_tables.TRUNCATION}")
    return 0 if frame["same"].all() else 1


if __name__ == "__main__":
    raise SystemExit(main())
