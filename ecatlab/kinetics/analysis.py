r"""Read-outs of a steady state: coverages, turnover, current, faradaic efficiency, Tafel slope,
degree of rate control, onset potential and the G_max(eta) descriptor.

All functions take a :class:`~ecatlab.kinetics.solver.SteadyState` and return long DataFrames
(one row per surface x potential [x species/product/step]) whose ``.attrs`` carry the units
(``units``), the column docs (``columns``), the conditions, the site density, and the barrier
provenance (``barriers``: "user", "estimated" or "mixed" per surface; the text
"ESTIMATED barriers" appears in ``attrs['note']`` whenever any barrier was estimated).

Sign convention (IUPAC): current density is positive for a net oxidation (anodic), negative for
a net reduction (cathodic),

.. math::

    j = -e\,\rho_\mathrm{site} \sum_i n_i\, r_i \quad [\mathrm{A\,cm^{-2}}],

with :math:`n_i` the electrons consumed by step *i*, :math:`r_i` its net rate per site (1/s) and
:math:`\rho_\mathrm{site}` the site density (default 1e15 cm^-2, common practice, no source);
reported in mA/cm^2.

Faradaic efficiency of product P: :math:`FE_P = z_P R_P / \sum_i n_i r_i` with :math:`R_P` the net
formation rate of P per site and :math:`z_P` the electrons consumed per molecule of P (signed);
the efficiencies of a model's products sum to one at a steady state (checked and reported as
``fe_unassigned``).

Tafel slope: :math:`b = \ln 10 / |\mathrm{d}\ln|j|/\mathrm{d}U|` in mV/dec, from the analytic
derivative of the steady state (implicit function theorem on the steady-state equations),
not from finite differences. Degree of rate control (Campbell): :math:`X_i = \partial\ln r /
\partial\ln k_i` at constant equilibrium constants (Stegelmann, Andreasen & Campbell,
J. Am. Chem. Soc. 131, 8077 (2009)), also analytic; :math:`\sum_i X_i = 1` for a single route.

Results are theoretical estimates (mean-field kinetics on CHE free energies, no mass transport).
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from ecatlab.che import kernel
from ecatlab.constants import ELEMENTARY_CHARGE
from ecatlab.errors import KineticsInputError
from ecatlab.kinetics.solver import METHODS, SteadyState, _Batch

__all__ = [
    "polarization_curve",
    "coverage_table",
    "faradaic_efficiencies",
    "degree_of_rate_control",
    "onset_potentials",
    "gmax_descriptor",
    "kinetics_summary",
    "current_density",
    "POLARIZATION_COLUMNS",
    "COVERAGE_COLUMNS",
    "FE_COLUMNS",
    "DRC_COLUMNS",
    "ONSET_COLUMNS",
    "GMAX_COLUMNS",
    "DEFAULT_ONSET_CURRENT_MA_CM2",
]

#: Current density that defines the onset potential, mA/cm^2 (common practice, no source).
DEFAULT_ONSET_CURRENT_MA_CM2 = 10.0

POLARIZATION_COLUMNS = {
    "surface": "surface name",
    "potential": "electrode potential [V vs scale]",
    "current_density": "net current density, IUPAC sign (anodic > 0, cathodic < 0) [mA/cm^2]",
    "abs_current_density": "|current_density| [mA/cm^2]",
    "electron_turnover": "electrons transferred per site per second (consumed > 0) [1/s]",
    "tof": "turnover frequency per site: net formation rate of the model's first product [1/s]",
    "tafel_slope": "Tafel slope ln(10) / |d ln|j| / dU| from the analytic derivative [mV/dec]",
    "converged": "True when the steady state converged (otherwise the row's numbers are NaN)",
    "steady_states": "distinct steady states found at this point (> 1: multiple; the reported one is flagged in stable)",
    "stable": "reported steady state linearly stable",
    "method": "how the state was found: " + ", ".join(METHODS),
    "barriers": "user, estimated or mixed (barrier provenance of the surface)",
    "scale": "potential scale",
    "pH": "pH [-]",
    "temperature": "temperature [K]",
}
COVERAGE_COLUMNS = {
    "surface": "surface name",
    "potential": "electrode potential [V vs scale]",
    "species": "adsorbate, or * for the empty site",
    "coverage": "fractional coverage theta (sums to 1 over species) [-]",
    "log10_coverage": "log10(theta), exact also below 1e-30 [-]",
}
FE_COLUMNS = {
    "surface": "surface name",
    "potential": "electrode potential [V vs scale]",
    "product": "product molecule",
    "electrons_per_product": "electrons consumed per product molecule (negative: oxidation) [-]",
    "formation_rate": "net formation rate of the product per site [1/s]",
    "partial_current_density": "partial current density of the product, IUPAC sign [mA/cm^2]",
    "faradaic_efficiency": "fraction of the net charge that forms the product (sums to 1 over products; negative: consumed); NaN where the net current is not resolvable (|j| < 1e-12 mA/cm^2 or below 1e-9 of the exchange flux) [-]",
    "fe_unassigned": "1 - sum of the faradaic efficiencies at this point (0 up to rounding) [-]",
}
DRC_COLUMNS = {
    "surface": "surface name",
    "potential": "electrode potential [V vs scale]",
    "step": "elementary step",
    "step_index": "1-based index of the step in the model [-]",
    "output": "rate whose control is measured: 'current' or a product",
    "degree_of_rate_control": "Campbell X_i = d ln r / d ln k_i at constant K_i [-]",
}
ONSET_COLUMNS = {
    "surface": "surface name",
    "onset_potential": "potential where the current in the driving direction (cathodic for a reduction, anodic for an oxidation) first reaches the target, moving from U_eq [V vs scale]; NaN if not reached",
    "target_current_density": "the target |j| [mA/cm^2]",
    "reached": "True when the target is reached inside the potential grid",
    "at_grid_edge": "True when the target is already exceeded at the grid point nearest U_eq: the onset lies between U_eq and onset_potential (extend the grid)",
    "equilibrium_potential": "U_eq of the model's first reaction at the model's activities [V vs scale]",
    "onset_overpotential": "|onset_potential - U_eq| [V]",
    "barriers": "user, estimated or mixed",
}
GMAX_COLUMNS = {
    "surface": "surface name",
    "potential": "electrode potential [V vs scale]",
    "overpotential": "eta = U_eq - U (reduction) or U - U_eq (oxidation) [V]",
    "G_max": "largest step free energy at U over all steps (ecatlab.che.kernel.gmax) [eV]",
    "G_max_step": "1-based index of the step carrying G_max [-]",
    "G_max_TS": "largest forward activation free energy at U over all steps (transition states included) [eV]",
    "G_max_TS_step": "1-based index of the step carrying G_max_TS [-]",
    "barriers": "user, estimated or mixed",
}


# ------------------------------------------------------------------------------------------------
def _flat_batch(result: SteadyState) -> tuple[_Batch, np.ndarray]:
    m = result.model
    S, P = result.converged.shape
    dG0 = m.step_free_energies(result.potentials).reshape(S * P, m.n_steps)
    batch = _Batch(m, dG0, np.repeat(m.raw_offset, P, axis=0), np.repeat(m.raw_slope, P, axis=0), np.repeat(m.ln_prefactor, P, axis=0))
    x = np.nan_to_num(result.log_coverages.reshape(S * P, m.n_species), nan=-np.log(m.n_species))
    return batch, x


def _barrier_label(result: SteadyState) -> np.ndarray:
    u = result.model.user_barrier
    return np.where(u.all(axis=1), "user", np.where(u.any(axis=1), "mixed", "estimated"))


def _first_reaction(result: SteadyState):
    if not result.model.pathways:
        raise KineticsInputError("this model was built from bare steps and has no overall reaction; build it from pathways for this read-out")
    return result.model.pathways[0]


def _grid(result: SteadyState):
    S, P = result.converged.shape
    surf = np.repeat(np.asarray(result.model.surfaces, dtype=object), P)
    pot = np.tile(result.potentials, S)
    return surf, pot


def _attrs(result: SteadyState, quantity: str, columns: dict, units: dict) -> dict:
    m = result.model
    est = m.any_estimated
    note = (
        "ESTIMATED barriers (" + m.settings.describe() + "); treat currents as order-of-magnitude estimates"
        if est else "all barriers from user input"
    )
    return {
        "quantity": quantity,
        "units": units,
        "columns": columns,
        "scale": m.conditions.scale,
        "pH": m.conditions.pH,
        "temperature": m.conditions.temperature,
        "site_density_per_cm2": m.settings.site_density,
        "activities": dict(m.activities),
        "steps": list(m.step_equations),
        "barriers": dict(zip(m.surfaces, _barrier_label(result))),
        "estimated_barriers": bool(est),
        "note": note,
        "convergence": result.report(),
        "references": m.references,
        "energy_source": m.energy_source,
        "model_notes": list(m.notes),
        "disclaimer": "theoretical estimates (mean-field microkinetics on CHE free energies, no mass transport)",
    }


def _conditioned(result: SteadyState, weights: np.ndarray) -> np.ndarray:
    """Equivalent step weights c = w + N_ads v that avoid the cancellation of fast steps, (S, P, steps, K).

    At a steady state sum_i N_ij r_i = 0 for every adsorbate j, so sum_i w_i r_i = sum_i c_i r_i
    for any c = w + N_ads v. Choosing v by weighted least squares, min sum_i (g_i c_i)^2 with g_i
    the gross rate r_f + r_b of step i, moves the weight off quasi-equilibrated steps, whose net
    rate r_f - r_b is a small difference of large numbers; the read-out then keeps full precision
    (e.g. a Heyrovsky-limited current behind a Volmer step 1e15 times faster).
    """
    m = result.model
    S, P = result.converged.shape
    w = np.asarray(weights, dtype=float)
    w2 = w[:, None] if w.ndim == 1 else w
    N = m.net_stoichiometry[:, : m.n_species - 1]  # (steps, m)
    g = np.nan_to_num(result.forward_rates + result.backward_rates, nan=1.0).reshape(S * P, m.n_steps)
    g = g / np.maximum(g.max(axis=1, keepdims=True), 1e-300)
    g2 = g * g
    M = np.einsum("ij,bi,ik->bjk", N, g2, N)
    # Tikhonov term: any v keeps sum_i c_i r_i = sum_i w_i r_i, so regularising only picks a c
    diag = np.einsum("bjj->b", M) / max(N.shape[1], 1)
    M = M + (1e-12 * diag + 1e-300)[:, None, None] * np.eye(N.shape[1])[None]
    rhs = -np.einsum("ij,bi,ik->bjk", N, g2, w2)
    try:
        v = np.linalg.solve(M, rhs)
    except np.linalg.LinAlgError:
        v = np.stack([np.linalg.lstsq(Mb, rb, rcond=None)[0] for Mb, rb in zip(M, rhs)])
    c = w2[None] + np.einsum("ij,bjk->bik", N, v)
    c = np.where(np.isfinite(c), c, w2[None])
    out = c.reshape(S, P, m.n_steps, w2.shape[1])
    return out[..., 0] if w.ndim == 1 else out


def _electron_rate(result: SteadyState) -> np.ndarray:
    """Electrons consumed per site per second, (S, P) (well-conditioned sum, see _conditioned)."""
    c = _conditioned(result, result.model.electrons)
    return np.einsum("spi,spi->sp", result.net_rates, c)


def _formation_rates(result: SteadyState) -> np.ndarray:
    """Net formation rate of each product per site, (S, P, K) (well-conditioned)."""
    m = result.model
    if not m.products:
        return np.zeros(result.converged.shape + (0,))
    c = _conditioned(result, m.product_stoichiometry)
    return np.einsum("spi,spik->spk", result.net_rates, c)


def current_density(result: SteadyState) -> np.ndarray:
    """Net current density (S, P) in mA/cm^2, IUPAC sign (anodic positive)."""
    return -ELEMENTARY_CHARGE * result.model.settings.site_density * _electron_rate(result) * 1e3


def _current(result: SteadyState) -> np.ndarray:
    return current_density(result)


def _sensitivity(result: SteadyState, dlnrf: np.ndarray, dlnrb: np.ndarray) -> np.ndarray:
    """Total derivative of the net step rates, (S*P, K, steps), for K parameter directions.

    ``dlnrf``, ``dlnrb``: (S*P, K, steps) partial derivatives of ln r_f, ln r_b at fixed coverages.
    Implicit function theorem: J dx/dp = -dF/dp, with the site balance row fixed.
    """
    batch, x = _flat_batch(result)
    J, rf, rb, _rc, dlf, dlb = batch.unscaled_jacobian(x)
    m = batch.m
    dFp = np.zeros((x.shape[0], m + 1, dlnrf.shape[1]))
    dnet_p = rf[:, None, :] * dlnrf - rb[:, None, :] * dlnrb  # (B, K, steps)
    dFp[:, :m, :] = np.einsum("ij,bki->bjk", batch.Nads, dnet_p)
    # row-scale for conditioning
    scale = np.maximum(np.max(np.abs(J), axis=2, keepdims=True), 1e-300)
    try:
        dx = -np.linalg.solve(J / scale, dFp / scale)  # (B, ns, K)
    except np.linalg.LinAlgError:
        dx = np.stack([-np.linalg.lstsq(Jb / sb, Fb / sb, rcond=None)[0] for Jb, Fb, sb in zip(J, dFp, scale)])
    return dnet_p + np.einsum("bil,blk->bki", dlf - dlb, dx)


def _tafel(result: SteadyState) -> np.ndarray:
    m = result.model
    S, P = result.converged.shape
    kT = m.kT
    slope = result.barrier_slope.reshape(S * P, m.n_steps)
    n = m.electrons
    dlnrf = (-(slope * n) / kT)[:, None, :]
    dlnrb = (-((slope - 1.0) * n) / kT)[:, None, :]
    dnet = _sensitivity(result, dlnrf, dlnrb)[:, 0, :]  # d r_net / dU
    c = _conditioned(result, n).reshape(S * P, m.n_steps)
    de = np.einsum("bi,bi->b", dnet, c)  # d(electron rate)/dU
    e = _electron_rate(result).reshape(S * P)
    with np.errstate(divide="ignore", invalid="ignore"):
        dlnj = de / e
        b = np.log(10.0) / np.abs(dlnj) * 1e3
    return np.where(result.converged.reshape(S * P), b, np.nan).reshape(S, P)


def polarization_curve(result: SteadyState) -> pd.DataFrame:
    """Current density, turnover and Tafel slope per (surface, potential); columns :data:`POLARIZATION_COLUMNS`."""
    m = result.model
    S, P = result.converged.shape
    j = current_density(result)
    e = _electron_rate(result)
    R = _formation_rates(result)
    surf, pot = _grid(result)
    labels = np.repeat(_barrier_label(result), P)
    frame = pd.DataFrame(
        {
            "surface": surf,
            "potential": pot,
            "current_density": j.ravel(),
            "abs_current_density": np.abs(j).ravel(),
            "electron_turnover": e.ravel(),
            "tof": R[..., 0].ravel() if R.shape[-1] else np.full(S * P, np.nan),
            "tafel_slope": _tafel(result).ravel(),
            "converged": result.converged.ravel(),
            "steady_states": result.steady_states.ravel(),
            "stable": result.stable.ravel(),
            "method": np.asarray(METHODS, dtype=object)[result.method.ravel()],
            "barriers": labels,
            "scale": m.conditions.scale,
            "pH": m.conditions.pH,
            "temperature": m.conditions.temperature,
        }
    )
    frame.attrs.update(_attrs(result, "polarization curve", POLARIZATION_COLUMNS, {
        "potential": f"V vs {m.conditions.scale}", "current_density": "mA/cm^2", "abs_current_density": "mA/cm^2",
        "electron_turnover": "1/s per site", "tof": "1/s per site", "tafel_slope": "mV/dec", "temperature": "K"}))
    frame.attrs["products"] = list(m.products)
    return frame


def coverage_table(result: SteadyState) -> pd.DataFrame:
    """Coverages per (surface, potential, species); columns :data:`COVERAGE_COLUMNS`."""
    m = result.model
    S, P = result.converged.shape
    ns = m.n_species
    surf, pot = _grid(result)
    lx = result.log_coverages.reshape(S * P, ns)
    frame = pd.DataFrame(
        {
            "surface": np.repeat(surf, ns),
            "potential": np.repeat(pot, ns),
            "species": np.tile(np.asarray(m.species, dtype=object), S * P),
            "coverage": np.exp(lx).ravel(),
            "log10_coverage": (lx / np.log(10.0)).ravel(),
        }
    )
    frame.attrs.update(_attrs(result, "coverages", COVERAGE_COLUMNS, {"potential": f"V vs {m.conditions.scale}", "coverage": "-", "log10_coverage": "-"}))
    return frame


def faradaic_efficiencies(result: SteadyState, min_current_density: float = 1e-12) -> pd.DataFrame:
    """Partial currents and faradaic efficiency per (surface, potential, product); :data:`FE_COLUMNS`.

    Where ``|j| < min_current_density`` (mA/cm^2; default 1e-12), or the net electron rate is below
    1e-9 of the exchange electron flux sum_i |n_i| (r_f + r_b) (no resolvable net charge to share
    out), the efficiencies are NaN, as the column doc says.
    """
    m = result.model
    S, P = result.converged.shape
    K = len(m.products)
    R = _formation_rates(result)  # (S, P, K)
    z = m.electrons_per_product
    e = _electron_rate(result)
    j = current_density(result)
    rho = m.settings.site_density
    partial = -ELEMENTARY_CHARGE * rho * (R * z) * 1e3
    with np.errstate(divide="ignore", invalid="ignore"):
        fe = (R * z) / e[..., None]
    # resolvable net charge: above min_current_density and above 1e-9 of the exchange electron flux
    # sum_i |n_i| (r_f + r_b) (below that the net rate is rounding of large opposing rates)
    exchange = np.einsum("spi,i->sp", result.forward_rates + result.backward_rates, np.abs(m.electrons))
    resolved = (np.abs(j) >= min_current_density) & (np.abs(e) >= 1e-9 * exchange)
    fe = np.where(resolved[..., None], fe, np.nan)
    unassigned = 1.0 - fe.sum(axis=-1)
    surf, pot = _grid(result)
    frame = pd.DataFrame(
        {
            "surface": np.repeat(surf, K),
            "potential": np.repeat(pot, K),
            "product": np.tile(np.asarray(m.products, dtype=object), S * P),
            "electrons_per_product": np.tile(z, S * P),
            "formation_rate": R.ravel(),
            "partial_current_density": partial.ravel(),
            "faradaic_efficiency": fe.ravel(),
            "fe_unassigned": np.repeat(unassigned.ravel(), K),
        }
    )
    frame.attrs.update(_attrs(result, "faradaic efficiency", FE_COLUMNS, {"potential": f"V vs {m.conditions.scale}", "formation_rate": "1/s per site",
                                                                         "partial_current_density": "mA/cm^2", "faradaic_efficiency": "-"}))
    return frame


def degree_of_rate_control(result: SteadyState, output: str = "current") -> pd.DataFrame:
    """Campbell degree of rate control of every step; :data:`DRC_COLUMNS`.

    Parameters
    ----------
    output : str
        ``"current"`` (the electron turnover) or a product of the model (its formation rate).
    """
    m = result.model
    S, P = result.converged.shape
    n_steps = m.n_steps
    eye = np.broadcast_to(np.eye(n_steps)[None], (S * P, n_steps, n_steps))
    dnet = _sensitivity(result, eye, eye)  # (B, K=steps scaled, steps)
    if output == "current":
        weights = m.electrons
    elif output in m.products:
        weights = m.product_stoichiometry[:, m.products.index(output)]
    else:
        raise KineticsInputError(f"output must be 'current' or one of the products {list(m.products)}, got {output!r}")
    c = _conditioned(result, weights).reshape(S * P, n_steps)
    base = np.einsum("bi,bi->b", np.nan_to_num(result.net_rates).reshape(S * P, n_steps), c)
    with np.errstate(divide="ignore", invalid="ignore"):
        X = np.einsum("bki,bi->bk", dnet, c) / base[:, None]
    X = np.where(result.converged.reshape(S * P)[:, None], X, np.nan)
    surf, pot = _grid(result)
    frame = pd.DataFrame(
        {
            "surface": np.repeat(surf, n_steps),
            "potential": np.repeat(pot, n_steps),
            "step": np.tile(np.asarray(m.step_equations, dtype=object), S * P),
            "step_index": np.tile(np.arange(1, n_steps + 1), S * P),
            "output": output,
            "degree_of_rate_control": X.ravel(),
        }
    )
    frame.attrs.update(_attrs(result, "degree of rate control", DRC_COLUMNS, {"potential": f"V vs {m.conditions.scale}", "degree_of_rate_control": "-"}))
    return frame


def onset_potentials(result: SteadyState, current_density: float = DEFAULT_ONSET_CURRENT_MA_CM2) -> pd.DataFrame:
    """Onset potential at a current density (default 10 mA/cm^2, common practice); :data:`ONSET_COLUMNS`.

    Moving from the equilibrium potential of the model's first reaction (at the model's
    activities) in its driving direction (down for a reduction, up for an oxidation), the first
    potential of the grid where the current in that direction (cathodic -j for a reduction,
    anodic +j for an oxidation) reaches the target; interpolated linearly in log j between the two
    grid points that bracket it.
    """
    if not (np.isfinite(current_density) and current_density > 0):
        raise KineticsInputError(f"onset current density must be a positive number of mA/cm^2, got {current_density!r}")
    m = result.model
    info = _first_reaction(result)
    u_eq = info.equilibrium_potential_at_activities
    order = np.argsort(result.potentials)
    u = result.potentials[order]
    # the current in the driving direction: cathodic (-j) for a reduction, anodic (+j) for an oxidation
    sign = -1.0 if info.direction == "reduction" else 1.0
    j = (sign * _current(result))[:, order]
    if info.direction == "reduction":
        u, j = u[::-1], j[:, ::-1]
        side = u <= u_eq + 1e-12
    else:
        side = u >= u_eq - 1e-12
    S = len(m.surfaces)
    out = np.full(S, np.nan)
    reached = np.zeros(S, dtype=bool)
    edge = np.zeros(S, dtype=bool)
    for s in range(S):
        js = np.where(side, j[s], np.nan)
        hit = np.flatnonzero(np.nan_to_num(js, nan=-1.0) >= current_density)
        if not hit.size:
            continue
        k = hit[0]
        reached[s] = True
        if k == 0 or not side[k - 1] or not np.isfinite(js[k - 1]) or js[k - 1] <= 0:
            out[s] = u[k]
            edge[s] = k == 0 or not side[k - 1]
        else:
            l0, l1, lt = np.log(js[k - 1]), np.log(js[k]), np.log(current_density)
            out[s] = u[k - 1] + (u[k] - u[k - 1]) * (lt - l0) / (l1 - l0)
    frame = pd.DataFrame(
        {
            "surface": list(m.surfaces),
            "onset_potential": out,
            "target_current_density": float(current_density),
            "reached": reached,
            "at_grid_edge": edge,
            "equilibrium_potential": u_eq,
            "onset_overpotential": np.abs(out - u_eq),
            "barriers": _barrier_label(result),
        }
    )
    frame.attrs.update(_attrs(result, "onset potentials", ONSET_COLUMNS, {"onset_potential": f"V vs {m.conditions.scale}", "target_current_density": "mA/cm^2", "onset_overpotential": "V"}))
    frame.attrs["reaction"] = info.name
    return frame


def gmax_descriptor(result: SteadyState) -> pd.DataFrame:
    """G_max(eta) with and without transition states per (surface, potential); :data:`GMAX_COLUMNS`.

    Notes
    -----
    Without transition states: ``max_i dG_i(U)`` over all steps, from :func:`ecatlab.che.kernel.gmax`
    evaluated at U (at U_eq it is the kernel's G_max). With transition states: the largest forward
    activation free energy ``max_i G_f,i(U)`` of the model's barriers (user or estimated). The
    descriptor follows Exner, ACS Catal. 10, 12607 (2020) in its step-wise form.
    """
    m = result.model
    S, P = result.converged.shape
    info = _first_reaction(result)
    u_eq = info.equilibrium_potential
    a = np.broadcast_to(m.affine_a[:, None, :], (S, P, m.n_steps))
    g, gi = kernel.gmax(a, m.electrons, np.broadcast_to(result.potentials[None, :], (S, P)))
    gts = result.G_forward
    gts_i = np.argmax(gts, axis=-1)
    u = np.broadcast_to(result.potentials[None, :], (S, P))
    eta = (u_eq - u) if info.direction == "reduction" else (u - u_eq)
    surf, pot = _grid(result)
    frame = pd.DataFrame(
        {
            "surface": surf,
            "potential": pot,
            "overpotential": eta.ravel(),
            "G_max": g.ravel(),
            "G_max_step": gi.ravel() + 1,
            "G_max_TS": np.max(gts, axis=-1).ravel(),
            "G_max_TS_step": gts_i.ravel() + 1,
            "barriers": np.repeat(_barrier_label(result), P),
        }
    )
    frame.attrs.update(_attrs(result, "G_max(eta) descriptor", GMAX_COLUMNS, {"potential": f"V vs {m.conditions.scale}", "overpotential": "V", "G_max": "eV", "G_max_TS": "eV"}))
    frame.attrs["reaction"] = info.name
    return frame


def kinetics_summary(result: SteadyState, current_density: float = DEFAULT_ONSET_CURRENT_MA_CM2) -> pd.DataFrame:
    """One row per surface: onset potential, best current on the grid, rate-controlling step at the onset, convergence."""
    on = onset_potentials(result, current_density)
    pol = polarization_curve(result)
    best = pol.groupby("surface", sort=False)["abs_current_density"].max()
    conv = pol.groupby("surface", sort=False)["converged"].all()
    multi = pol.groupby("surface", sort=False)["steady_states"].max()
    on["max_abs_current_density"] = on["surface"].map(best).to_numpy()
    on["all_converged"] = on["surface"].map(conv).to_numpy()
    on["max_steady_states"] = on["surface"].map(multi).to_numpy()
    on.attrs.update(pol.attrs)
    on.attrs["quantity"] = "kinetic summary"
    return on
