"""Finite-sample calibration of the robust trend tests, simulated per T (and segment).

Each robust test has one tuning parameter ``θ`` and a critical value ``c``:

* the J-scaled tests (``kind="dan"``, ``"ps"``): ``S = t · exp(−θ J)`` with ``θ = b_J``
  (Vogelsang 1998; Bunzel & Vogelsang 2005), which in the limit gives one critical value for
  stationary and for integrated noise;
* the Perron–Yabu test (``kind="py"``): the quasi-GLS t with the truncation
  ``α̂ >= 1 − θ / sqrt(T)`` (the paper has ``θ = 1`` and standard normal critical values).

At the lengths of annual panels (T = 10–40) the limits are not reached: with their published
constants the J-scaled tests are conservative for AR(1) noise with ρ = 0.7–0.9 and the
Perron–Yabu test rejects 10–20 % at 5 % for ρ ≥ 0.5. So ``(θ, c)`` are chosen here, for each T
and each one-sided level α, from a seeded simulation of Gaussian AR(1) noise with ρ in
:data:`RHOS` (ρ = 1 a random walk; the null distributions do not depend on the trend's
coefficients or the noise scale): ``(θ, c)`` minimise the largest ``|log(size_ρ / α)|`` over the
ρ grid (a minimax calibration: the size is as close to α as it can be for every ρ at once).

Run ``python -m evidence.trend._calibrate [dan|ps|py ...]`` to regenerate the table modules
``_tables_j.py`` (dan, ps) and ``_tables_py.py`` (about 10 minutes per kind on one core);
other lengths and segments are simulated on demand and cached (``evidence._cache``).
"""

from __future__ import annotations

import sys
from functools import lru_cache
from pathlib import Path

import numpy as np

from evidence._montecarlo import ar1
from evidence.trend._stats import design, park_j, perron_yabu_parts, robust_t, with_columns

__all__ = ["RHOS", "ALPHAS", "calibrate", "simulate_null", "statistic", "on_demand", "TABLE_SEED",
           "TABLE_REPS"]

#: AR(1) coefficients of the noise over which the size is balanced (1.0: a random walk).
RHOS = (0.0, 0.3, 0.5, 0.7, 0.8, 0.9, 0.95, 1.0)
#: One-sided levels tabulated (p-values interpolate in log α between them).
ALPHAS = (0.0005, 0.001, 0.0025, 0.005, 0.01, 0.025, 0.05, 0.10, 0.20, 0.30, 0.40, 0.50)
TABLE_SEED = 20261202
TABLE_REPS = 40000
_COARSE = {"j": np.r_[0.0, np.geomspace(0.05, 12.0, 48)], "py": np.linspace(0.3, 6.0, 58)}


def simulate_null(nobs: int, segment: int | None, kind: str, *, reps: int, seed: int,
                  extra: np.ndarray | None = None) -> list[dict[str, np.ndarray]]:
    """The pieces of the statistic under each ρ of :data:`RHOS` (one mapping per ρ).

    ``extra`` (``(T, q)``) adds deterministic columns (recession dummies) to the design.
    """
    d = design(nobs, segment)
    if extra is not None:
        d = with_columns(d, extra)
    out = []
    noise = (_noise_cached if reps * nobs <= 400_000 else _noise)(nobs, segment, kind, reps, seed)
    for _rho, u in noise:
        if kind == "py":
            parts = perron_yabu_parts(u, d)
            out.append({"alpha": parts["alpha"], "t_gls": parts["t_gls"], "t_diff": parts["t_diff"]})
        else:
            out.append({"t": robust_t(u, d, kind)[0], "j": park_j(u, d)})
    return out


def _noise(nobs: int, segment: int | None, kind: str, reps: int,
           seed: int) -> tuple[tuple[float, np.ndarray], ...]:
    """The seeded noise of :func:`simulate_null` for each ρ (the same draws serve every design
    of this length)."""
    code = {"dan": 0, "ps": 1, "py": 2}[kind]
    rng = np.random.default_rng([seed, nobs, segment or 0, code])
    out = []
    for rho in RHOS:
        shocks = rng.standard_normal((nobs, reps))
        out.append((rho, shocks.cumsum(axis=0) if rho == 1.0 else ar1(shocks, rho)))
    return tuple(out)


#: The draws of the design calibrations (small), kept for the next design of the same length.
_noise_cached = lru_cache(maxsize=4)(_noise)


def statistic(kind: str, pieces: dict[str, np.ndarray], theta: float, nobs: int) -> np.ndarray:
    """The signed statistic at tuning ``θ`` (lower tail rejects)."""
    if kind == "py":
        trunc = pieces["alpha"] >= 1.0 - theta / np.sqrt(nobs)
        return np.where(trunc, pieces["t_diff"], pieces["t_gls"])
    return pieces["t"] * np.exp(-theta * pieces["j"])


def _best_c(sorted_s: np.ndarray, alpha: float) -> tuple[float, float]:
    """The critical value that balances the sizes over ρ, and the worst size ratio it leaves.

    ``sorted_s`` holds ``|S|`` sorted per ρ (``(len(RHOS), reps)``); the size at ``c`` is half the
    share above ``c``. The chosen ``c`` minimises ``max_ρ |log(size_ρ / α)|``.
    """
    reps = sorted_s.shape[1]
    q = sorted_s[:, min(int((1.0 - 2.0 * alpha) * reps), reps - 1)]
    cands = np.linspace(q.min(), q.max(), 41)
    above = reps - np.stack([np.searchsorted(row, cands, side="right") for row in sorted_s])
    size = np.maximum(above / reps / 2.0, 0.5 / reps)
    worst = np.abs(np.log(size / alpha)).max(axis=0)
    k = int(np.argmin(worst))
    return float(cands[k]), float(worst[k])


def calibrate(nobs: int, segment: int | None, kind: str, *, reps: int = TABLE_REPS,
              seed: int = TABLE_SEED, extra: np.ndarray | None = None,
              coarse_step: int = 1, fine_points: int = 13) -> tuple[np.ndarray, np.ndarray]:
    """``(θ, c)`` for each level of :data:`ALPHAS` (the minimax choice described above)."""
    sims = simulate_null(nobs, segment, kind, reps=reps, seed=seed, extra=extra)
    grid = _COARSE["py" if kind == "py" else "j"][::coarse_step]

    def scan(values: np.ndarray, alphas: tuple[float, ...]) -> np.ndarray:
        out = np.empty((values.size, len(alphas), 2))
        for i, theta in enumerate(values):
            srt = np.sort(np.abs(np.stack([statistic(kind, p, theta, nobs) for p in sims])), axis=1)
            out[i] = [_best_c(srt, a) for a in alphas]
        return out

    coarse = scan(grid, ALPHAS[:-1])
    theta_out = np.zeros(len(ALPHAS))
    c_out = np.zeros(len(ALPHAS))  # α = 0.5: the median of a symmetric statistic is 0
    theta_out[-1] = 1.0 if kind == "py" else 0.0
    for a in range(len(ALPHAS) - 1):
        t0 = grid[int(np.argmin(coarse[:, a, 1]))]
        fine = np.linspace(max(t0 * 0.85 - 0.02, 0.0), t0 * 1.15 + 0.02, fine_points)
        res = scan(fine, (ALPHAS[a],))[:, 0, :]
        k = int(np.argmin(res[:, 1]))
        theta_out[a], c_out[a] = fine[k], res[k, 0]
    return theta_out, c_out


#: Lengths tabulated in the table modules (others interpolate in 1/T; beyond the last, the last).
TABLE_YEARS = (*range(8, 51), 55, 60, 70, 80, 100)
#: Table module of each kind, and the segments tabulated.
TABLE_MODULES = {"dan": ("_tables_j", (None, 10)), "ps": ("_tables_j", (None,)),
                 "py": ("_tables_py", (None, 10))}


@lru_cache(maxsize=64)
def on_demand(nobs: int, segment: int | None, kind: str) -> tuple[np.ndarray, np.ndarray]:
    """Calibration for a case not in the shipped tables: simulated once, then cached on disk."""
    from evidence._cache import load_cached, save_cached

    params = {"nobs": nobs, "segment": segment, "kind": kind, "reps": 20000,
              "seed": TABLE_SEED, "rhos": RHOS, "alphas": ALPHAS, "version": 2}
    hit = load_cached("trend_calibration", params)
    if hit is not None:
        return hit["b"], hit["c"]
    b, c = calibrate(nobs, segment, kind, reps=20000)
    save_cached("trend_calibration", params, {"b": b, "c": c})
    return b, c


#: Replications per ρ of a calibration made for one design with recession dummies.
DESIGN_REPS = 3000


def for_design(nobs: int, segment: int | None, kind: str,
               extra: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Calibration for a trend design with recession dummies ``extra``: simulated for that
    design (:data:`DESIGN_REPS` replications per ρ), kept in memory and on disk."""
    key = (nobs, segment, kind, np.asarray(extra, dtype=np.int8).tobytes(), extra.shape)
    hit = _DESIGN_MEMO.get(key)
    if hit is not None:
        return hit
    from evidence._cache import load_cached, save_cached

    params = {"nobs": nobs, "segment": segment, "kind": kind, "reps": DESIGN_REPS,
              "seed": TABLE_SEED, "rhos": RHOS, "alphas": ALPHAS, "version": 2,
              "extra": np.asarray(extra, dtype=int).tolist()}
    cached = load_cached("trend_design_calibration", params)
    if cached is not None:
        out = (cached["b"], cached["c"])
    else:
        out = calibrate(nobs, segment, kind, reps=DESIGN_REPS, extra=extra, coarse_step=3,
                        fine_points=7)
        save_cached("trend_design_calibration", params, {"b": out[0], "c": out[1]})
    _DESIGN_MEMO[key] = out
    return out


_DESIGN_MEMO: dict[tuple, tuple[np.ndarray, np.ndarray]] = {}


def write_module(kinds: tuple[str, ...]) -> None:
    """Regenerate the table module holding ``kinds`` (all of one module)."""
    module = TABLE_MODULES[kinds[0]][0]
    lines = [f'"""Simulated calibration of the robust trend tests {", ".join(kinds)} (generated; '
             'do not edit).', "",
             "Made by ``python -m evidence.trend._calibrate`` (see that module for the method):",
             f"Gaussian AR(1) noise with rho in {RHOS} (1.0 a random walk),",
             f"{TABLE_REPS} replications per rho and length, seed {TABLE_SEED}.",
             "``TABLES[(kind, segment)][T]`` is ``(theta, c)``: two tuples over the one-sided",
             "levels ``ALPHAS`` (theta is b_J of the J-scaled tests, the truncation constant of",
             'Perron-Yabu)."""', "", f"ALPHAS = {ALPHAS!r}", "", "TABLES = {"]
    for kind in kinds:
        for segment in TABLE_MODULES[kind][1]:
            lines.append(f"    ({kind!r}, {segment!r}): {{")
            for nobs in TABLE_YEARS:
                if segment is not None and nobs < segment + 5:
                    continue
                b, c = calibrate(nobs, segment, kind)
                lines.append(f"        {nobs}: ({tuple(round(float(v), 4) for v in b)!r},")
                lines.append(f"             {tuple(round(float(v), 4) for v in c)!r}),")
                print(kind, segment, nobs, file=sys.stderr, flush=True)
            lines.append("    },")
    lines += ["}", ""]
    path = Path(__file__).resolve().parent / f"{module}.py"
    path.write_text("\n".join(lines), encoding="utf-8")


def main(argv: list[str] | None = None) -> None:
    """Regenerate the table modules (``dan ps`` together, ``py`` alone)."""
    kinds = tuple(argv if argv is not None else sys.argv[1:]) or ("dan", "ps", "py")
    if "dan" in kinds or "ps" in kinds:
        write_module(("dan", "ps"))
    if "py" in kinds:
        write_module(("py",))


if __name__ == "__main__":
    main()
