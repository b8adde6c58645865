"""Panel ARDL in error-correction form: unit regressions (mean group) and pooled mean group ML (NumPy).

Each unit: ``Δy_t = c_i + φ_i y_t-1 + π_i'x_t-1 + Σ_{j=1..p-1} λ_ij Δy_t-j + Σ_{j=0..q-1} δ_ij'Δx_t-j
+ e_t`` with long-run coefficients ``θ_i = -π_i / φ_i`` (the column layout of statsmodels ``UECM``).
"""

from __future__ import annotations

from typing import Any

import numpy as np

from evidence.cointegration._data import batch_ols, lag_matrix

__all__ = ["SPEED", "ecm_arrays", "pmg_fit", "short_run_names", "unit_ecm"]


#: Name of the mean speed of adjustment ``φ`` among the MG and PMG coefficients.
SPEED = "error-correction speed"


def _change(name: str, lag: int) -> str:
    return f"Δ {name}" if lag == 0 else f"Δ {name}, lag {lag}"


def short_run_names(dependent: str, regressors: tuple[str, ...], p: int, q: int) -> list[str]:
    """Names of the short-run columns, in design order: ``Δ y, lag 1``, ``Δ x``, ``constant``."""
    names = [_change(dependent, j) for j in range(1, p)]
    for name in regressors:
        names += [_change(name, j) for j in range(q)]
    return [*names, "constant"]


def ecm_arrays(y: np.ndarray, x: np.ndarray, p: int, q: int) -> dict[str, np.ndarray]:
    """``dy`` (N, n), lagged levels ``y1`` (N, n) and ``x1`` (N, n, k), short-run block ``w`` (N, n, m)."""
    n_units, n_years, k = x.shape
    start = max(p, q)
    dy = np.concatenate([np.full((n_units, 1), np.nan), np.diff(y, axis=1)], axis=1)
    dx = np.concatenate([np.full((n_units, 1, k), np.nan), np.diff(x, axis=1)], axis=1)
    parts = []
    if p > 1:
        parts.append(lag_matrix(dy, list(range(1, p)))[:, start:])
    for m in range(k):
        parts.append(lag_matrix(dx[:, :, m], list(range(q)))[:, start:])
    parts.append(np.ones((n_units, n_years - start, 1)))
    return {"dy": dy[:, start:], "y1": y[:, start - 1:-1], "x1": x[:, start - 1:-1],
            "w": np.concatenate(parts, axis=2)}


def unit_ecm(arr: dict[str, np.ndarray]) -> dict[str, np.ndarray]:
    """Unit-by-unit OLS of the error-correction form: ``φ_i``, ``θ_i``, short-run coefficients."""
    z = np.concatenate([arr["y1"][:, :, None], arr["x1"], arr["w"]], axis=2)
    coef, resid, _ = batch_ols(arr["dy"], z)
    k = arr["x1"].shape[2]
    phi = coef[:, 0]
    return {"phi": phi, "theta": -coef[:, 1:1 + k] / phi[:, None], "short": coef[:, 1 + k:],
            "sigma2": np.mean(resid ** 2, axis=1)}


def _partial(arr: dict[str, np.ndarray]) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """``Δy``, ``y_t-1`` and ``x_t-1`` net of each unit's short-run block ``w`` (the H_i projection)."""
    q, _ = np.linalg.qr(arr["w"])

    def h(v: np.ndarray) -> np.ndarray:
        if v.ndim == 2:
            return v - np.einsum("ntm,nm->nt", q, np.einsum("ntm,nt->nm", q, v))
        return v - np.einsum("ntm,nmk->ntk", q, np.einsum("ntm,ntk->nmk", q, v))

    return h(arr["dy"]), h(arr["y1"]), h(arr["x1"])


def pmg_fit(arr: dict[str, np.ndarray], theta0: np.ndarray, *, tol: float = 1e-10,
            max_iter: int = 2000) -> dict[str, Any]:
    """Pooled mean group maximum likelihood by back-substitution (Pesaran, Shin & Smith 1999).

    Given ``θ``: ``φ_i = (ξ_i'H_i ξ_i)^-1 ξ_i'H_i Δy_i`` with ``ξ_i = y_i,-1 - X_i,-1 θ`` and
    ``σ_i² = T_i^-1 |H_i(Δy_i - φ_i ξ_i)|²``. Given those:
    ``θ = -(Σ φ_i²/σ_i² X_i'H_i X_i)^-1 Σ φ_i/σ_i² X_i'H_i (Δy_i - φ_i y_i,-1)``.
    Iterate to convergence. The covariance of ``(θ, φ_1..φ_N)`` is the inverse of the information
    matrix with blocks ``Σ φ_i²/σ_i² X_i'H_i X_i``, ``-φ_i/σ_i² X_i'H_i ξ_i`` and
    ``ξ_i'H_i ξ_i/σ_i²`` (short-run coefficients concentrated out).
    """
    dy, y1, x1 = _partial(arr)
    n_obs = dy.shape[1]
    theta = np.asarray(theta0, dtype=float).copy()
    converged = False
    loglik_path = []
    for it in range(max_iter):  # noqa: B007 (read after the loop: the iteration count)
        xi = y1 - np.einsum("ntk,k->nt", x1, theta)
        phi = np.sum(xi * dy, axis=1) / np.sum(xi * xi, axis=1)
        resid = dy - phi[:, None] * xi
        sigma2 = np.mean(resid ** 2, axis=1)
        loglik_path.append(float(-0.5 * n_obs * np.sum(np.log(sigma2))))
        a = np.einsum("n,ntk,ntj->kj", phi ** 2 / sigma2, x1, x1)
        b = np.einsum("n,ntk,nt->k", phi / sigma2, x1, dy - phi[:, None] * y1)
        new = -np.linalg.solve(a, b)
        step = np.max(np.abs(new - theta))
        theta = new
        if step < tol * max(1.0, np.max(np.abs(theta))):
            converged = True
            break
    xi = y1 - np.einsum("ntk,k->nt", x1, theta)
    phi = np.sum(xi * dy, axis=1) / np.sum(xi * xi, axis=1)
    sigma2 = np.mean((dy - phi[:, None] * xi) ** 2, axis=1)
    k, n_units = theta.size, phi.size
    info = np.zeros((k + n_units, k + n_units))
    info[:k, :k] = np.einsum("n,ntk,ntj->kj", phi ** 2 / sigma2, x1, x1)
    cross = -np.einsum("n,ntk,nt->nk", phi / sigma2, x1, xi)
    info[:k, k:] = cross.T
    info[k:, :k] = cross
    info[k + np.arange(n_units), k + np.arange(n_units)] = np.sum(xi * xi, axis=1) / sigma2
    cov = np.linalg.inv(info)
    loglik = float(-0.5 * n_obs * np.sum(np.log(2 * np.pi * sigma2) + 1))
    return {"theta": theta, "phi": phi, "sigma2": sigma2, "cov_theta": cov[:k, :k],
            "se_phi": np.sqrt(np.diag(cov)[k:]), "iterations": it + 1, "converged": converged,
            "loglik": loglik}


def concentrated_loglik(arr: dict[str, np.ndarray], theta: np.ndarray) -> float:
    """The PMG log-likelihood at ``θ`` with ``φ_i``, ``σ_i²`` and short-run terms concentrated out."""
    dy, y1, x1 = _partial(arr)
    xi = y1 - np.einsum("ntk,k->nt", x1, np.asarray(theta, dtype=float))
    phi = np.sum(xi * dy, axis=1) / np.sum(xi * xi, axis=1)
    sigma2 = np.mean((dy - phi[:, None] * xi) ** 2, axis=1)
    return float(-0.5 * dy.shape[1] * np.sum(np.log(2 * np.pi * sigma2) + 1))
