r"""Steady states of a :class:`~ecatlab.kinetics.model.KineticModel` over surfaces x potentials.

Equations
---------
In the log coverages :math:`x_j = \ln\theta_j` (adsorbates and the empty site), the steady state is

.. math::

    F_j(x) = \sum_i \nu_{ij}\, r_i(x) = 0 \quad (j \in \text{adsorbates}), \qquad
    F_* (x) = \sum_j e^{x_j} - 1 = 0

(site balance), with the mass-action rates of :mod:`ecatlab.kinetics.model`. The Jacobian is
analytic: :math:`\partial r_{f,i}/\partial x_l = \nu^R_{il} r_{f,i}` (and the same for the
backward rate), plus the lateral-interaction terms when present. Log coverages keep coverages of
1e-30 and far below exact; the result counts those below 1e-30 and floors none above 1e-300
(values there are floored at ln 1e-300 and counted in ``floored``).

Method
------
1. Newton's method on all surfaces at once (batched dense solves, rows scaled by the gross flux of
   each species, step length capped at 2 in ln theta, backtracking on the residual norm).
2. Continuation along the potential: the potentials are swept in ascending order, each solution
   is the start of the next one; at the first potential, and wherever a start fails, Newton runs
   from several starts (uniform coverages and each species dominant).
3. Multiple steady states: the sweep is repeated in descending order (from its own multi-start);
   where the two sweeps end in different converged states, or where the optional thorough check
   (``check="thorough"``: every start at every point) finds more, the point is reported with
   ``steady_states > 1`` and a :class:`~ecatlab.errors.KineticsConvergenceWarning`; the ascending
   sweep's state is the one reported (stable states preferred).
4. Fallback: points still unconverged are integrated in time with ``scipy.integrate.solve_ivp``
   (BDF, analytic Jacobian) towards the steady state and polished by Newton.
5. Points that still fail are NaN with ``converged = False`` and a warning, never silently filled.

Convergence: the largest residual scaled by the species' gross flux
(:math:`|F_j| / \sum_i |\nu_{ij}| (r_{f,i} + r_{b,i})`) below ``tol`` (default 1e-10) and the site
balance within 1e-12.
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass, field

import numpy as np

from ecatlab.che.conditions import check_potential
from ecatlab.errors import KineticsConvergenceWarning, KineticsInputError
from ecatlab.kinetics.model import KineticModel
from ecatlab.kinetics.rates import RateConstants, rate_constants

__all__ = ["SteadyState", "solve_steady_state", "LN_FLOOR", "METHODS"]

#: ln of the smallest coverage represented (1e-300); coverages below are floored and counted.
LN_FLOOR = float(np.log(1e-300))
_LN_CEIL = 1e-6
#: Codes of ``SteadyState.method``.
METHODS = ("newton-continuation", "newton-multistart", "bdf+newton", "failed")
_TINY = 1e-300


@dataclass(frozen=True, eq=False)
class SteadyState:
    """Steady state of a kinetic model on a (surface x potential) grid.

    Attributes
    ----------
    model : KineticModel
    potentials : ndarray (n_potentials,)
        V vs the model's scale, in the order given.
    log_coverages : ndarray (n_surfaces, n_potentials, n_species)
        ln theta (species order of ``model.species``; "*" last); NaN where not converged.
    forward_rates, backward_rates : ndarray (n_surfaces, n_potentials, n_steps)
        r_f and r_b per site, 1/s.
    converged : ndarray of bool (n_surfaces, n_potentials)
    residual : ndarray (n_surfaces, n_potentials)
        Largest flux-scaled residual at the solution.
    method : ndarray of int (n_surfaces, n_potentials)
        Index into :data:`METHODS`.
    steady_states : ndarray of int (n_surfaces, n_potentials)
        Distinct converged steady states found (1 normally; >1: multiple).
    stable : ndarray of bool (n_surfaces, n_potentials)
        Reported state linearly stable (all eigenvalues of the reduced Jacobian with negative real part).
    alternatives : dict
        (surface index, potential index) -> list of ln-theta vectors of the other states found.
    dG, G_forward, barrier_slope : ndarray (n_surfaces, n_potentials, n_steps)
        Step free energies (eV), forward activation free energies (eV) and dG_f/d(dG).
    clipped : ndarray of bool (n_surfaces, n_potentials, n_steps)
        Raw barrier raised to max(G_f, dG, 0) (see rates).
    floored : int
        Coverages floored at 1e-300.
    below_1e30 : int
        Coverages below 1e-30 (exact in log space; physically negligible).
    """

    model: KineticModel
    potentials: np.ndarray
    log_coverages: np.ndarray
    forward_rates: np.ndarray
    backward_rates: np.ndarray
    converged: np.ndarray
    residual: np.ndarray
    method: np.ndarray
    steady_states: np.ndarray
    stable: np.ndarray
    dG: np.ndarray
    G_forward: np.ndarray
    barrier_slope: np.ndarray
    clipped: np.ndarray
    floored: int = 0
    below_1e30: int = 0
    alternatives: dict = field(default_factory=dict, repr=False)
    tolerance: float = 1e-10

    @property
    def coverages(self) -> np.ndarray:
        """theta, (n_surfaces, n_potentials, n_species)."""
        return np.exp(self.log_coverages)

    @property
    def net_rates(self) -> np.ndarray:
        """r_f - r_b per step, 1/s per site."""
        return self.forward_rates - self.backward_rates

    def report(self) -> dict:
        """Convergence report: counts per method, failures, multiple states, residuals."""
        m = self.method
        return {
            "points": int(m.size),
            "converged": int(self.converged.sum()),
            "failed": int((~self.converged).sum()),
            **{f"by_{METHODS[k]}": int((m == k).sum()) for k in range(len(METHODS))},
            "multiple_steady_states": int((self.steady_states > 1).sum()),
            "unstable_reported": int((self.converged & ~self.stable).sum()),
            "max_residual": float(np.nanmax(np.where(self.converged, self.residual, np.nan))) if self.converged.any() else float("nan"),
            "tolerance": self.tolerance,
            "coverages_below_1e-30": self.below_1e30,
            "coverages_floored_at_1e-300": self.floored,
            "barriers_clipped_to_thermodynamic_minimum": int(self.clipped.sum()),
        }


# ------------------------------------------------------------------------------------------------
class _Batch:
    """Per-point arrays of B independent systems (rows of a flattened surface x potential grid)."""

    def __init__(self, model: KineticModel, dG, offset, slope, lnA, _cached=None):
        self.model = model
        self.dG, self.offset, self.slope, self.lnA = dG, offset, slope, lnA
        self.R = model.reactant_orders
        self.P = model.product_orders
        self.N = model.net_stoichiometry
        m = model.n_species - 1
        self.m = m
        self.Nads = self.N[:, :m]
        self.absN = np.abs(self.Nads)
        self.lnf = model.ln_activity_forward
        self.lnb = model.ln_activity_backward
        self.T = model.temperature
        self.kT = model.kT
        eps = model.interactions
        self.NE = None if eps is None else self.N @ eps  # (steps, species): d dG_i / d theta_l
        # without lateral interactions the rate constants do not depend on the coverages: once per batch
        if self.NE is None:
            if _cached is None:
                rc = rate_constants(dG, offset, slope, lnA, self.T)
                _cached = (rc, rc.ln_kf + self.lnf, rc.ln_kb + self.lnb)
            self._rc, self._lkf, self._lkb = _cached
        else:
            self._rc = None

    def take(self, idx) -> "_Batch":
        cached = None
        if self._rc is not None:
            rc = self._rc
            sub = RateConstants(rc.ln_kf[idx], rc.ln_kb[idx], rc.dG[idx], rc.G_f[idx], rc.dGf_ddG[idx], rc.clipped[idx])
            cached = (sub, self._lkf[idx], self._lkb[idx])
        return _Batch(self.model, self.dG[idx], self.offset[idx], self.slope[idx], self.lnA[idx], cached)

    def constants(self, x):
        if self._rc is not None:
            return self._rc
        dG = self.dG + np.exp(x) @ self.NE.T
        return rate_constants(dG, self.offset, self.slope, self.lnA, self.T)

    def rates(self, x):
        if self._rc is not None:
            return np.exp(self._lkf + x @ self.R.T), np.exp(self._lkb + x @ self.P.T), self._rc
        rc = self.constants(x)
        lf = rc.ln_kf + self.lnf + x @ self.R.T
        lb = rc.ln_kb + self.lnb + x @ self.P.T
        return np.exp(lf), np.exp(lb), rc

    def rate_derivatives(self, x):
        """r_f, r_b (B, steps) and their derivatives with respect to x (B, steps, ns)."""
        rf, rb, rc = self.rates(x)
        dlf = rf[:, :, None] * self.R[None]
        dlb = rb[:, :, None] * self.P[None]
        if self.NE is not None:
            theta = np.exp(x)
            d = self.NE[None] * theta[:, None, :] / self.kT
            dlf = dlf - rf[:, :, None] * rc.dGf_ddG[:, :, None] * d
            dlb = dlb - rb[:, :, None] * (rc.dGf_ddG[:, :, None] - 1.0) * d
        return rf, rb, rc, dlf, dlb

    def unscaled_jacobian(self, x):
        """Jacobian of (F_adsorbates, site balance) without row scaling, (B, ns, ns)."""
        rf, rb, rc, dlf, dlb = self.rate_derivatives(x)
        J = np.empty((x.shape[0], self.m + 1, self.m + 1))
        J[:, : self.m] = np.einsum("ij,bil->bjl", self.Nads, dlf - dlb)
        J[:, self.m] = np.exp(x)
        return J, rf, rb, rc, dlf, dlb

    def system(self, x, jac: bool = True):
        """Scaled residual (B, ns) and Jacobian (B, ns, ns) of the steady-state equations."""
        rf, rb, rc = self.rates(x)
        net = rf - rb
        scale = (rf + rb) @ self.absN + _TINY
        theta = np.exp(x)
        F = np.empty((x.shape[0], self.m + 1))
        F[:, : self.m] = (net @ self.Nads) / scale
        F[:, self.m] = theta.sum(axis=1) - 1.0
        if not jac:
            return F, None
        dlf = rf[:, :, None] * self.R[None]
        dlb = rb[:, :, None] * self.P[None]
        if self.NE is not None:
            d = self.NE[None] * theta[:, None, :] / self.kT
            dlf = dlf - rf[:, :, None] * rc.dGf_ddG[:, :, None] * d
            dlb = dlb - rb[:, :, None] * (rc.dGf_ddG[:, :, None] - 1.0) * d
        Jr = np.einsum("ij,bil->bjl", self.Nads, dlf - dlb)
        J = np.empty((x.shape[0], self.m + 1, self.m + 1))
        J[:, : self.m] = Jr / scale[:, :, None]
        J[:, self.m] = theta
        return F, J


def _pairs(model: KineticModel):
    """Site-conserving (from, to) unit pairs of every step's forward and backward direction."""
    out_f, out_b = [], []
    for i in range(model.n_steps):
        r = [j for j in range(model.n_species) for _ in range(int(round(model.reactant_orders[i, j])))]
        p = [j for j in range(model.n_species) for _ in range(int(round(model.product_orders[i, j])))]
        if len(r) != len(p):
            return None
        out_f.append([(a, b) for a, b in zip(r, p) if a != b])
        out_b.append([(b, a) for a, b in zip(r, p) if a != b])
    return out_f, out_b


def _stationary(A):
    """Stationary vectors of generator matrices A (B, n, n) (A[b, a] = rate a -> b), by the
    Grassmann-Taksar-Heyman elimination (subtraction-free, so tiny entries keep full relative
    precision; Grassmann, Taksar & Heyman, Oper. Res. 33, 1107 (1985))."""
    Q = np.swapaxes(A, 1, 2).copy()  # Q[a, b] = rate a -> b
    n = Q.shape[1]
    idx = np.arange(n)
    Q[:, idx, idx] = 0.0
    for k in range(n - 1, 0, -1):
        s = Q[:, k, :k].sum(axis=1)
        s = np.where(s > 0, s, _TINY)
        Q[:, :k, k] /= s[:, None]
        Q[:, :k, :k] += Q[:, :k, k][:, :, None] * Q[:, k, :k][:, None, :]
    pi = np.zeros((Q.shape[0], n))
    pi[:, 0] = 1.0
    for k in range(1, n):
        pi[:, k] = np.einsum("bi,bi->b", pi[:, :k], Q[:, :k, k])
    return pi / pi.sum(axis=1, keepdims=True)


_PAIRS_CACHE: dict = {}


def _picard(batch: _Batch, x, iterations: int = 4):
    """Fixed-point start: freeze all but one coverage factor per rate, solve the linear generator.

    With rates ``r = k prod(theta^nu)`` split into unit flows from a reactant unit to a product unit,
    ``d theta/dt = A(theta_prev) theta`` with A a generator matrix (non-negative off-diagonal,
    columns summing to zero); its stationary vector (site balance as the last row) is the update.
    Exact in one iteration for first-order mechanisms (every step one surface species per side).
    """
    model = batch.model
    key = (model.reactant_orders.tobytes(), model.product_orders.tobytes())
    cached = _PAIRS_CACHE.get(id(model))
    if cached is None or cached[0] != key:
        cached = (key, _pairs(model))
        _PAIRS_CACHE[id(model)] = cached
    pairs = cached[1]
    if pairs is None:
        return x
    pf, pb = pairs
    ns = batch.m + 1
    B = x.shape[0]
    for _ in range(iterations):
        rf, rb, _rc = batch.rates(x)
        theta = np.exp(x)
        A = np.zeros((B, ns, ns))
        for i in range(batch.model.n_steps):
            for (a, b) in pf[i]:
                c = rf[:, i] / np.maximum(theta[:, a], _TINY)
                A[:, b, a] += c
                A[:, a, a] -= c
            for (a, b) in pb[i]:
                c = rb[:, i] / np.maximum(theta[:, a], _TINY)
                A[:, b, a] += c
                A[:, a, a] -= c
        th = _stationary(A)
        th = np.where(np.all(np.isfinite(th), axis=1, keepdims=True), th, theta)
        th = np.clip(th, 1e-300, None)
        th = th / th.sum(axis=1, keepdims=True)
        x = np.log(th)
    return x


def _merit(F):
    return np.max(np.abs(F), axis=1)


def _solve_linear(J, rhs):
    try:
        return np.linalg.solve(J, rhs[..., None])[..., 0]
    except np.linalg.LinAlgError:
        out = np.empty_like(rhs)
        for k in range(J.shape[0]):
            out[k] = np.linalg.lstsq(J[k], rhs[k], rcond=None)[0]
        return out


def _newton(batch: _Batch, x0, tol: float, max_iter: int, max_step: float = 30.0):
    """Batched damped Newton; returns x, converged, merit."""
    x = np.clip(np.array(x0, dtype=float), LN_FLOOR, _LN_CEIL)
    B = x.shape[0]
    conv = np.zeros(B, dtype=bool)
    was_ok = np.zeros(B, dtype=bool)
    merit = np.full(B, np.inf)
    active = np.arange(B)
    sub = batch
    F, J = sub.system(x)
    for _ in range(max_iter + 1):
        m_a = _merit(F)
        merit[active] = m_a
        ok_now = (m_a < tol) & np.isfinite(m_a)
        # one polishing step after the tolerance is first met (quadratic convergence: ~1e-15)
        ok = ok_now & ((m_a < 1e-4 * tol) | was_ok[active])
        was_ok[active] = ok_now
        if ok.any():
            conv[active[ok]] = True
            keep = ~ok
            active, F, J = active[keep], F[keep], J[keep]
            if not active.size:
                break
            sub = batch.take(active)
        if _ == max_iter:
            break
        xa = x[active]
        step = _solve_linear(J, -F)
        step = np.where(np.isfinite(step), step, 0.0)
        big = np.max(np.abs(step), axis=1)
        t = np.minimum(1.0, max_step / np.maximum(big, 1e-300))
        norm0 = np.sum(F * F, axis=1)
        x_new = np.clip(xa + t[:, None] * step, LN_FLOOR, _LN_CEIL)
        F_new, _unused = sub.system(x_new, jac=False)
        norm_new = np.sum(F_new * F_new, axis=1)
        bad = ~(norm_new < norm0) | ~np.isfinite(norm_new)
        tries = 0
        while bad.any() and tries < 6:
            t = np.where(bad, t * 0.5, t)
            idx = np.flatnonzero(bad)
            xt = np.clip(xa[idx] + t[idx, None] * step[idx], LN_FLOOR, _LN_CEIL)
            Ft, _unused = sub.take(idx).system(xt, jac=False)
            nt = np.sum(Ft * Ft, axis=1)
            improved = (nt < norm0[idx]) & np.isfinite(nt)
            x_new[idx] = xt
            bad[idx[improved]] = False
            tries += 1
        x[active] = x_new
        F, J = sub.system(x[active])
    conv |= merit < tol
    return x, conv, merit


def _starts(ns: int) -> np.ndarray:
    """Start vectors (K, ns) of ln theta: uniform, then each species dominant."""
    out = [np.full(ns, -np.log(ns))]
    for j in range(ns):
        v = np.full(ns, np.log(1e-3 / max(ns - 1, 1)))
        v[j] = np.log(1.0 - 1e-3)
        out.append(v)
    return np.array(out)


def _multistart(batch: _Batch, tol, max_iter):
    """Newton from every start; returns (K, B, ns) solutions, (K, B) converged, merits."""
    ns = batch.m + 1
    starts = _starts(ns)
    K, B = len(starts), batch.dG.shape[0]
    rep = np.repeat(np.arange(B)[None], K, axis=0).ravel()
    big = batch.take(rep)
    x0 = np.repeat(starts, B, axis=0)
    x0[:B] = _picard(batch, x0[:B])
    x, conv, merit = _newton(big, x0, tol, max_iter)
    return x.reshape(K, B, ns), conv.reshape(K, B), merit.reshape(K, B)


def _best_of(xs, conv, merit):
    """Pick per point the converged start with the smallest merit."""
    score = np.where(conv, merit, np.inf)
    k = np.argmin(score, axis=0)
    B = xs.shape[1]
    return xs[k, np.arange(B)], conv[k, np.arange(B)], merit[k, np.arange(B)]


def _distinct(a, b, atol=1e-6):
    """True where two ln-theta vectors describe different coverages (|d theta| > atol or |d ln theta| > 1e-3 for theta > 1e-12)."""
    ta, tb = np.exp(a), np.exp(b)
    sig = (np.maximum(ta, tb) > 1e-12)
    return (np.max(np.abs(ta - tb), axis=-1) > atol) | np.any(sig & (np.abs(a - b) > 1e-3 * 50), axis=-1)


def _predict(batch: _Batch, guess):
    """Continuation predictor: the previous solution or one Picard update of it, whichever has the smaller residual."""
    g = np.clip(guess, LN_FLOOR, _LN_CEIL)
    pic = _picard(batch, g, 1)
    F0, _ = batch.system(g, jac=False)
    F1, _ = batch.system(pic, jac=False)
    better = _merit(F1) < _merit(F0)
    return np.where(better[:, None], pic, g)


def _sweep(batch_at, order, S, ns, tol, max_iter):
    """Continuation along the potentials in ``order``; returns x (S, P, ns), converged, merit, method."""
    P = len(order)
    X = np.full((S, P, ns), np.nan)
    C = np.zeros((S, P), dtype=bool)
    M = np.full((S, P), np.inf)
    meth = np.full((S, P), 3, dtype=np.int8)
    guess = None
    for step_no, p in enumerate(order):
        batch = batch_at(p)
        # first point: a start from the GTH/Picard guess; later points: continuation from the last one
        x0 = _picard(batch, np.tile(_starts(ns)[0], (S, 1))) if guess is None else _predict(batch, guess)
        x, c, m = _newton(batch, x0, tol, max_iter)
        meth_p = np.where(c, 1 if guess is None else 0, 3)
        if not c.all():  # multiple starts where Newton from the guess failed
            idx = np.flatnonzero(~c)
            xs, cs, ms = _multistart(batch.take(idx), tol, max_iter)
            x2, c2, m2 = _best_of(xs, cs, ms)
            x[idx], c[idx], m[idx] = x2, c2, m2
            meth_p[idx] = np.where(c2, 1, 3)
        X[:, p], C[:, p], M[:, p], meth[:, p] = x, c, m, meth_p
        guess = x if guess is None else np.where(c[:, None], x, guess)
    return X, C, M, meth


def _routh_hurwitz_stable(G) -> np.ndarray:
    """All eigenvalues of the (B, m, m) matrices (m <= 3) in the left half plane (Routh-Hurwitz on
    the characteristic polynomial; marginal cases within 1e-9 of the scale count as stable)."""
    m = G.shape[1]
    scale = np.maximum(np.max(np.abs(G), axis=(1, 2)), _TINY)
    A = G / scale[:, None, None]
    eps = 1e-9
    if m == 0:
        return np.ones(G.shape[0], dtype=bool)
    if m == 1:
        return A[:, 0, 0] <= eps
    tr = np.trace(A, axis1=1, axis2=2)
    det = np.linalg.det(A)
    if m == 2:
        return (tr <= eps) & (det >= -eps)
    minors = (A[:, 0, 0] * A[:, 1, 1] - A[:, 0, 1] * A[:, 1, 0] + A[:, 0, 0] * A[:, 2, 2] - A[:, 0, 2] * A[:, 2, 0]
              + A[:, 1, 1] * A[:, 2, 2] - A[:, 1, 2] * A[:, 2, 1])
    a1, a2, a3 = -tr, minors, -det
    return (a1 >= -eps) & (a3 >= -eps) & (a1 * a2 - a3 >= -eps)


def _reduced_jacobian_stable(model: KineticModel, batch: _Batch, x) -> np.ndarray:
    """Linear stability of steady states x (B, ns) in theta space with theta_* = 1 - sum(theta_j)."""
    rf, rb, rc = batch.rates(x)
    theta = np.exp(x)
    m = batch.m
    dlf = rf[:, :, None] * batch.R[None]
    dlb = rb[:, :, None] * batch.P[None]
    if batch.NE is not None:
        d = batch.NE[None] * theta[:, None, :] / batch.kT
        dlf = dlf - rf[:, :, None] * rc.dGf_ddG[:, :, None] * d
        dlb = dlb - rb[:, :, None] * (rc.dGf_ddG[:, :, None] - 1.0) * d
    Jx = np.einsum("ij,bil->bjl", batch.Nads, dlf - dlb)  # d(dtheta_j/dt)/d x_l
    Jt = Jx / np.maximum(theta[:, None, :], _TINY)  # d/d theta_l
    G = Jt[:, :, :m] - Jt[:, :, m:m + 1]
    if m <= 3:
        return _routh_hurwitz_stable(G)
    ev = np.linalg.eigvals(G)
    scale = np.maximum(np.max(np.abs(ev), axis=1), _TINY)
    return np.all(ev.real <= 1e-9 * scale[:, None], axis=1)


def _bdf_point(batch: _Batch, x_start, t_end: float = 1e12):
    """Integrate d theta/dt = N^T r (theta_* eliminated) with BDF from exp(x_start); returns ln theta."""
    from scipy.integrate import solve_ivp

    m = batch.m
    one = batch

    def full_x(y):
        th = np.clip(y, _TINY, None)
        star = max(1.0 - float(np.sum(y)), _TINY)
        return np.log(np.append(th, star))[None]

    def rhs(t, y):
        rf, rb, _ = one.rates(full_x(y))
        return ((rf - rb) @ one.Nads)[0]

    def jac(t, y):
        x = full_x(y)
        theta = np.exp(x)
        rf, rb, rc = one.rates(x)
        dlf = rf[:, :, None] * one.R[None]
        dlb = rb[:, :, None] * one.P[None]
        if one.NE is not None:
            d = one.NE[None] * theta[:, None, :] / one.kT
            dlf = dlf - rf[:, :, None] * rc.dGf_ddG[:, :, None] * d
            dlb = dlb - rb[:, :, None] * (rc.dGf_ddG[:, :, None] - 1.0) * d
        Jt = np.einsum("ij,bil->bjl", one.Nads, dlf - dlb)[0] / theta[0][None, :]
        return Jt[:, :m] - Jt[:, m:m + 1]

    y0 = np.exp(np.asarray(x_start, dtype=float))[:m]
    if not np.all(np.isfinite(y0)) or y0.sum() >= 1:
        y0 = np.full(m, 1.0 / (m + 1))
    sol = solve_ivp(rhs, (0.0, t_end), y0, method="BDF", jac=jac, rtol=1e-8, atol=1e-14)
    return full_x(sol.y[:, -1])[0], bool(sol.success)


def _bdf_then_newton(batch: _Batch, x_start, tol: float, max_iter: int):
    """Integrate in growing time windows (1e-9 s ... 1e12 s), trying Newton after each; (x, converged, merit)."""
    x = np.asarray(x_start, dtype=float)
    for t_end in 10.0 ** np.arange(-9.0, 13.0, 3.0):
        try:
            x, _ok = _bdf_point(batch, x, t_end)
        except Exception:  # noqa: BLE001 - an integration failure is reported as non-convergence
            break
        xp, cp, mp = _newton(batch, x[None], tol, max_iter)
        if cp[0]:
            return xp[0], True, mp[0]
    return x, False, np.inf


def solve_steady_state(
    model: KineticModel,
    potentials,
    *,
    tol: float = 1e-10,
    max_iter: int = 60,
    check: str = "sweep",
    fallback: bool = True,
    warn: bool = True,
) -> SteadyState:
    """Steady-state coverages and rates of every surface at every potential.

    Parameters
    ----------
    model : KineticModel
    potentials : float or array_like
        Potentials in V on the model's scale (any order; NaN not allowed).
    tol : float
        Convergence threshold of the flux-scaled residual.
    max_iter : int
        Newton iterations per attempt.
    check : {"sweep", "thorough", "none"}
        Multiple-steady-state detection: ascending and descending sweeps (default), plus every
        start at every point ("thorough"), or none.
    fallback : bool
        Integrate unconverged points with solve_ivp (BDF) and polish (default True).
    warn : bool
        Emit a KineticsConvergenceWarning for failed points or multiple states (default True).

    Returns
    -------
    SteadyState
    """
    if check not in ("sweep", "thorough", "none"):
        raise KineticsInputError(f"check must be 'sweep', 'thorough' or 'none', got {check!r}")
    u = np.atleast_1d(np.asarray(check_potential(potentials), dtype=float))
    if u.ndim != 1:
        raise KineticsInputError("potentials must be a scalar or a 1-D array of volts")
    S, P, ns, n_steps = len(model.surfaces), u.size, model.n_species, model.n_steps
    dG_all = model.step_free_energies(u)  # (S, P, steps), CHE kernel

    def batch_at(p):
        return _Batch(model, dG_all[:, p], model.raw_offset, model.raw_slope, model.ln_prefactor)

    _flat_cache: list = []

    def flat_batch():
        if not _flat_cache:
            _flat_cache.append(_Batch(model, dG_all.reshape(S * P, n_steps), np.repeat(model.raw_offset, P, axis=0),
                                      np.repeat(model.raw_slope, P, axis=0), np.repeat(model.ln_prefactor, P, axis=0)))
        return _flat_cache[0]

    order = np.argsort(u, kind="stable")
    X, C, M, meth = _sweep(batch_at, order, S, ns, tol, max_iter)
    n_states = np.where(C, 1, 0).astype(np.int16)
    alternatives: dict = {}

    def add_alternative(s, p, xv):
        known = [X[s, p]] + alternatives.get((s, p), [])
        if all(_distinct(xv[None], k[None])[0] for k in known):
            alternatives.setdefault((s, p), []).append(np.array(xv))
            n_states[s, p] += 1

    if check in ("sweep", "thorough") and P > 1:
        Xb, Cb, Mb, _mb = _sweep(batch_at, order[::-1], S, ns, tol, max_iter)
        both = C & Cb
        diff = both & _distinct(X, Xb)
        for s, p in zip(*np.nonzero(diff)):
            add_alternative(s, p, Xb[s, p])
        take = ~C & Cb
        X[take], C[take], M[take], meth[take] = Xb[take], True, Mb[take], 0
        n_states[take] = 1
    if check == "thorough":
        flat = flat_batch()
        xs, cs, ms = _multistart(flat, tol, max_iter)
        xs = xs.reshape(len(xs), S, P, ns)
        cs = cs.reshape(len(cs), S, P)
        ms = ms.reshape(len(ms), S, P)
        for k in range(len(xs)):
            new = cs[k] & C & _distinct(xs[k], X)
            for s, p in zip(*np.nonzero(new)):
                add_alternative(s, p, xs[k, s, p])
            fill = cs[k] & ~C
            X[fill], C[fill], M[fill], meth[fill] = xs[k][fill], True, ms[k][fill], 1
            n_states[fill] = 1

    if fallback and not C.all():
        for s, p in zip(*np.nonzero(~C)):
            b = _Batch(model, dG_all[s:s + 1, p], model.raw_offset[s:s + 1], model.raw_slope[s:s + 1], model.ln_prefactor[s:s + 1])
            start = X[s, p] if np.all(np.isfinite(X[s, p])) else _starts(ns)[0]
            xq, ok, mq = _bdf_then_newton(b, start, tol, max(max_iter, 30))
            xp, cp, mp = xq[None], np.array([ok]), np.array([mq])
            if cp[0]:
                X[s, p], C[s, p], M[s, p], meth[s, p] = xp[0], True, mp[0], 2
                n_states[s, p] = max(n_states[s, p], 1)

    # stability of the reported state; prefer a stable alternative
    stable = np.zeros((S, P), dtype=bool)
    if C.any():
        flat_all = flat_batch()
        ok = np.flatnonzero(C.reshape(S * P))
        st = np.zeros(S * P, dtype=bool)
        st[ok] = _reduced_jacobian_stable(model, flat_all.take(ok), X.reshape(S * P, ns)[ok])
        stable = st.reshape(S, P)
    for (s, p), alts in list(alternatives.items()):
        if not stable[s, p]:
            b = batch_at(p).take([s])
            for k, xa in enumerate(alts):
                if _reduced_jacobian_stable(model, b, xa[None])[0]:
                    alts[k], X[s, p] = X[s, p].copy(), xa
                    stable[s, p] = True
                    break

    # final quantities
    X = np.where(C[..., None], X, np.nan)
    floored = int(np.sum(C[..., None] & (X <= LN_FLOOR + 1e-9)))
    below = int(np.sum(C[..., None] & (X < np.log(1e-30))))
    flat = flat_batch()
    xf = np.nan_to_num(X.reshape(S * P, ns), nan=-np.log(ns))
    rf, rb, rc = flat.rates(xf)
    F, _ = flat.system(xf, jac=False)
    resid = _merit(F).reshape(S, P)
    nanmask = ~C.reshape(S * P)
    rf[nanmask], rb[nanmask] = np.nan, np.nan
    shape3 = (S, P, n_steps)
    result = SteadyState(
        model=model, potentials=u, log_coverages=X, forward_rates=rf.reshape(shape3), backward_rates=rb.reshape(shape3),
        converged=C, residual=np.where(C, resid, np.nan), method=np.where(C, meth, 3).astype(np.int8), steady_states=n_states,
        stable=stable, dG=rc.dG.reshape(shape3), G_forward=rc.G_f.reshape(shape3), barrier_slope=rc.dGf_ddG.reshape(shape3),
        clipped=rc.clipped.reshape(shape3), floored=floored, below_1e30=below, alternatives=alternatives, tolerance=tol,
    )
    if warn:
        failed = int((~C).sum())
        multi = int((n_states > 1).sum())
        if failed:
            warnings.warn(
                f"no steady state found at {failed} of {C.size} (surface, potential) points; they are NaN with converged=False "
                "(try a finer potential grid, check='thorough', or different barriers)", KineticsConvergenceWarning, stacklevel=2,
            )
        if multi:
            warnings.warn(
                f"{multi} (surface, potential) points have more than one steady state (steady_states > 1); the state reached by "
                "the ascending potential sweep is reported (a stable one preferred); see SteadyState.alternatives",
                KineticsConvergenceWarning, stacklevel=2,
            )
    return result
