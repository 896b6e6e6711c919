"""Exact 1D and 2D optima of envelopes of affine step lines U_i = alpha_i + beta_i . D (V, D in eV).

1D: the envelope's breakpoints are the pairwise crossings of the lines that lie on it; the best
value over [lo, hi] is at one of them or at an end. 2D: linear programming over the box
(:func:`scipy.optimize.linprog`, HiGHS).
"""

from __future__ import annotations

import numpy as np

from ecatlab.che import kernel
from ecatlab.errors import ScalingError
from ecatlab.volcano.results import Apex

__all__: list[str] = []


def _crossings(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """x where pairs of non-parallel lines a_i + b_i x cross (slopes differing by > 1e-9)."""
    i, j = np.triu_indices(len(a), 1)
    db = b[i] - b[j]
    ok = np.abs(db) > 1e-9
    return (a[j][ok] - a[i][ok]) / db[ok]


def _breakpoints(a: np.ndarray, b: np.ndarray, direction: str) -> np.ndarray:
    """Crossings that lie on the envelope (min for reduction, max for oxidation)."""
    xs = _crossings(a, b)
    if not xs.size:
        return xs
    lines = a[None, :] + b[None, :] * xs[:, None]
    env = lines.min(axis=1) if direction == "reduction" else lines.max(axis=1)
    on = np.sum(np.abs(lines - env[:, None]) <= 1e-9 * np.maximum(1.0, np.abs(env))[:, None], axis=1) >= 2
    return xs[on]


def _apex_1d(alpha, beta, ec, direction, lo, hi, names):
    """Exact best envelope value over [lo, hi] from the step lines U_i = alpha_i + beta_i x."""
    a, b = alpha[ec], beta[ec]
    ec_names = [n for n, e in zip(names, ec) if e]
    xs = _crossings(a, b)
    cand = np.concatenate([[lo, hi], xs[(xs >= lo) & (xs <= hi)]])
    lines = a[None, :] + b[None, :] * cand[:, None]
    env = lines.min(axis=1) if direction == "reduction" else lines.max(axis=1)
    best = env.max() if direction == "reduction" else env.min()
    tol = 1e-9 * max(1.0, abs(best))
    at = np.abs(env - best) <= tol
    xlo, xhi = float(cand[at].min()), float(cand[at].max())
    xm = 0.5 * (xlo + xhi)
    active_val = a + b * xm
    active = np.abs(active_val - best) <= 1e-6 * max(1.0, abs(best))
    steps = tuple(n for n, k in zip(ec_names, active) if k)
    at_edge = bool(abs(xlo - lo) <= 1e-12 or abs(xhi - hi) <= 1e-12)
    return (xm,), ((xlo, xhi),), float(best), steps, at_edge


def _optimum_2d(alpha, bx, by, ec, direction, xr, yr, names, u_eq) -> Apex:
    """Exact best U_L over the box by linear programming (variables x, y, t)."""
    from scipy.optimize import linprog

    a, px, py = alpha[ec], bx[ec], by[ec]
    if direction == "reduction":  # max t  s.t. t <= a + px x + py y
        A = np.column_stack([-px, -py, np.ones_like(a)])
        ub = a
        c = [0.0, 0.0, -1.0]
    else:  # min t  s.t. t >= a + px x + py y
        A = np.column_stack([px, py, -np.ones_like(a)])
        ub = -a
        c = [0.0, 0.0, 1.0]
    res = linprog(c, A_ub=A, b_ub=ub, bounds=[tuple(map(float, xr)), tuple(map(float, yr)), (None, None)], method="highs")
    if not res.success:  # pragma: no cover - a bounded box always has a solution
        raise ScalingError(f"could not locate the optimum of the map: {res.message}")
    x, y, t = (float(v) for v in res.x)
    vals = a + px * x + py * y
    ec_names = [n for n, e in zip(names, ec) if e]
    steps = tuple(n for n, v in zip(ec_names, vals) if abs(v - t) <= 1e-6)
    edge = bool(min(abs(x - xr[0]), abs(x - xr[1]), abs(y - yr[0]), abs(y - yr[1])) <= 1e-9)
    return Apex((x, y), ((x, x), (y, y)), t, float(kernel.signed_overpotential(t, u_eq, direction)), steps, edge,
                "exact: linear programming over the map range (one optimal point; the optimum may be a line)")
