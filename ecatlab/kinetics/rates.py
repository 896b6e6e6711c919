r"""Rate constants of elementary steps, always consistent with detailed balance.

Every step *i* of a kinetic model has a forward activation free energy :math:`G_{f,i}` (eV) and a
prefactor :math:`A_i` (1/s); its backward activation free energy is fixed by thermodynamics,

.. math::

    G_{b,i} = G_{f,i} - \Delta G_i(U), \qquad
    k_{f,i} = A_i\, e^{-G_{f,i}/k_BT}, \qquad k_{b,i} = A_i\, e^{-G_{b,i}/k_BT},

so :math:`k_{f,i}/k_{b,i} = \exp(-\Delta G_i(U)/k_BT)` exactly, with :math:`\Delta G_i(U)` the CHE
step free energy from :func:`ecatlab.che.kernel.step_free_energy` (the proton/electron activity
enters there, through the pH on the chosen scale). A forward barrier below both 0 and
:math:`\Delta G_i` is not physical: it is raised to :math:`\max(G_{f,i}, \Delta G_i, 0)`, and every
such raise is counted (``clipped`` in :class:`RateConstants`).

Where the forward barrier comes from, in this order
---------------------------------------------------
1. **User input** (:class:`Barriers`): an activation free energy :math:`G_a^\mathrm{ref}` per
   (surface, step), for an electrochemical step measured at a reference potential
   :math:`U_\mathrm{ref}`; at other potentials it moves with the symmetry factor,
   :math:`G_f = G_a^\mathrm{ref} + \beta\,[\Delta G(U) - \Delta G(U_\mathrm{ref})]`
   (Butler-Volmer form; Bard & Faulkner, *Electrochemical Methods*, 2nd ed., ch. 3).
2. **Estimates** (flagged ``estimated`` in every output):

   * proton-electron transfer: an intrinsic barrier plus a symmetry factor on the step free energy
     at U, :math:`G_f = G_0 + \beta\,\Delta G_i(U)` (default :math:`G_0` = 0.3 eV, common practice,
     no source; :math:`\beta = 0.5`, Bard & Faulkner ch. 3);
   * surface (Langmuir-Hinshelwood) chemical step: a Bronsted-Evans-Polanyi-type line,
     :math:`G_f = E_0 + \gamma\,\Delta G_i` (defaults 0.5 eV and 0.5: a placeholder, common
     practice, no source);
   * adsorption/desorption of a gas (a chemical step with one gas molecule on one side and only
     surface species on the other): collision theory for the adsorption direction,
     :math:`A = s_0\,p^\circ A_\mathrm{site} / \sqrt{2\pi m k_B T}` with the standard pressure
     :math:`p^\circ` = 1 bar, the site area :math:`A_\mathrm{site} = 1/\rho_\mathrm{site}` and the
     sticking coefficient :math:`s_0` (default 1), and the barrier at its thermodynamic minimum
     :math:`G_f = \max(\Delta G_i, 0)` (Chorkendorff & Niemantsverdriet, *Concepts of Modern
     Catalysis and Kinetics*, ch. 3; from memory);
   * other chemical steps with molecules only on one side (aqueous or liquid species): TST
     prefactor and :math:`G_f = \max(\Delta G_i, 0)`.

The TST prefactor is :math:`k_BT/h` (Eyring); constants come from :mod:`ecatlab.constants`.
Gas pressures (in bar, over :math:`p^\circ` = 1 bar) and solute concentrations (mol/L over
1 mol/L) enter the rate laws as activities, not the rate constants.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Mapping

import numpy as np
import pandas as pd

from ecatlab.constants import AVOGADRO, BOLTZMANN_EV, BOLTZMANN_J, PLANCK_EV, STANDARD_PRESSURE_PA
from ecatlab.errors import KineticsInputError

__all__ = [
    "BarrierSettings",
    "Barriers",
    "RateConstants",
    "tst_prefactor",
    "collision_prefactor",
    "rate_constants",
    "STEP_KINDS",
    "DEFAULT_SITE_DENSITY_PER_CM2",
]

#: Default density of active sites, 1e15 per cm^2 (common practice, no source: about one site per
#: surface atom of a close-packed metal facet).
DEFAULT_SITE_DENSITY_PER_CM2 = 1.0e15

#: Step kinds of a kinetic model.
STEP_KINDS = ("electrochemical", "surface", "adsorption", "solution")


def tst_prefactor(temperature: float) -> float:
    """Eyring prefactor k_B T / h in 1/s (Eyring, J. Chem. Phys. 3, 107 (1935))."""
    return BOLTZMANN_EV * float(temperature) / PLANCK_EV


def collision_prefactor(mass_amu: float, temperature: float, site_density_per_cm2: float, sticking: float = 1.0) -> float:
    """Adsorption rate constant per site at 1 bar from kinetic gas theory, 1/s.

    :math:`k = s_0\\,p^\\circ A_\\mathrm{site} / \\sqrt{2\\pi m k_B T}` with :math:`p^\\circ` = 1e5 Pa,
    :math:`A_\\mathrm{site} = 1/\\rho` (m^2), :math:`m` the molecular mass (kg).
    """
    mass_kg = float(mass_amu) * 1.0e-3 / AVOGADRO
    area_m2 = 1.0e-4 / float(site_density_per_cm2)
    flux = STANDARD_PRESSURE_PA / math.sqrt(2.0 * math.pi * mass_kg * BOLTZMANN_J * float(temperature))
    return float(sticking) * flux * area_m2


@dataclass(frozen=True)
class BarrierSettings:
    """How barriers are estimated where the user gives none (every use is flagged ``estimated``).

    Parameters
    ----------
    intrinsic_barrier : float
        G_0 of proton-electron transfer steps at dG = 0, eV (default 0.3; common practice, no source).
    symmetry_factor : float
        beta in (0, 1) (default 0.5; Bard & Faulkner ch. 3).
    bep_intercept, bep_slope : float
        E_0 (eV) and gamma of the BEP-type line for surface chemical steps (defaults 0.5 eV, 0.5;
        placeholder, common practice, no source).
    sticking : float
        Sticking coefficient s_0 of gas adsorption, 0 < s_0 <= 1 (default 1).
    site_density : float
        Active sites per cm^2 (default 1e15; common practice, no source); sets the current density
        and the site area of collision theory.
    """

    intrinsic_barrier: float = 0.3
    symmetry_factor: float = 0.5
    bep_intercept: float = 0.5
    bep_slope: float = 0.5
    sticking: float = 1.0
    site_density: float = DEFAULT_SITE_DENSITY_PER_CM2

    def __post_init__(self) -> None:
        for name in ("intrinsic_barrier", "bep_intercept"):
            v = getattr(self, name)
            if not (isinstance(v, (int, float)) and math.isfinite(v) and v >= 0):
                raise KineticsInputError(f"BarrierSettings.{name} must be a finite number of eV >= 0, got {v!r}")
        for name in ("symmetry_factor", "bep_slope"):
            v = getattr(self, name)
            if not (isinstance(v, (int, float)) and 0.0 < v < 1.0):
                raise KineticsInputError(f"BarrierSettings.{name} must lie strictly between 0 and 1, got {v!r}")
        if not (isinstance(self.sticking, (int, float)) and 0.0 < self.sticking <= 1.0):
            raise KineticsInputError(f"BarrierSettings.sticking must lie in (0, 1], got {self.sticking!r}")
        if not (isinstance(self.site_density, (int, float)) and math.isfinite(self.site_density) and self.site_density > 0):
            raise KineticsInputError(f"BarrierSettings.site_density must be a positive number of sites per cm^2, got {self.site_density!r}")

    def describe(self) -> str:
        return (
            f"estimated barriers: proton-electron transfer G0 = {self.intrinsic_barrier:g} eV, beta = {self.symmetry_factor:g}; "
            f"surface steps BEP E0 = {self.bep_intercept:g} eV, slope {self.bep_slope:g}; gas adsorption by collision theory, "
            f"s0 = {self.sticking:g}; site density {self.site_density:g} cm^-2"
        )

    def to_dict(self) -> dict:
        return {"schema": "ecatlab.barrier_settings/1", **{k: getattr(self, k) for k in self.__dataclass_fields__}}


_BARRIER_COLUMNS = {
    "surface": "surface name; empty or '*' applies the row to every surface",
    "step": "the step as written in the model (equation text) or its 1-based index in the model",
    "G_a": "forward activation free energy of the step as written, at potential [eV]",
    "potential": "potential at which G_a holds, electrochemical steps only [V vs the model's scale]; default 0",
    "symmetry_factor": "beta of the step (0-1); default: the settings' symmetry factor",
    "prefactor": "pre-exponential factor [1/s]; default k_B T/h (TST) or collision theory for gas adsorption",
}


@dataclass(frozen=True)
class Barriers:
    """User transition-state data: one row per (surface, step).

    Build with :meth:`from_frame` (DataFrame or CSV path) with the columns of :attr:`COLUMNS`;
    ``G_a`` is the forward activation free energy of the step *as written in the model*, in eV, at
    ``potential`` (V on the model's scale; electrochemical steps only). A barrier for the reverse
    direction follows from detailed balance and is never given separately.
    """

    frame: pd.DataFrame = field(repr=False)
    source: str = "<DataFrame>"

    COLUMNS = _BARRIER_COLUMNS

    @classmethod
    def from_frame(cls, data, source: str | None = None) -> "Barriers":
        if isinstance(data, Barriers):
            return data
        if isinstance(data, (str,)) or hasattr(data, "__fspath__"):
            path = str(data)
            try:
                frame = pd.read_csv(path, comment=None, dtype={"surface": str, "step": str})
            except FileNotFoundError:
                raise KineticsInputError(f"{path}: barrier file not found") from None
            except pd.errors.ParserError as exc:
                raise KineticsInputError(f"{path}: not a CSV table ({exc})") from None
            source = source or path
        elif isinstance(data, pd.DataFrame):
            frame = data.copy()
        elif isinstance(data, Mapping):
            frame = pd.DataFrame(data)
        else:
            raise KineticsInputError(f"barriers must be a DataFrame, a CSV path or a Barriers value, got {type(data).__name__}")
        source = source or "<DataFrame>"
        frame.columns = [str(c).strip() for c in frame.columns]
        lower = {c.lower(): c for c in frame.columns}
        rename = {lower[k.lower()]: k for k in _BARRIER_COLUMNS if k.lower() in lower}
        frame = frame.rename(columns=rename)
        unknown = [c for c in frame.columns if c not in _BARRIER_COLUMNS]
        if unknown:
            raise KineticsInputError(f"{source}: unknown barrier column(s) {unknown}; allowed: {list(_BARRIER_COLUMNS)}")
        for col in ("step", "G_a"):
            if col not in frame.columns:
                raise KineticsInputError(f"{source}: barrier table needs a {col!r} column ({_BARRIER_COLUMNS[col]})")
        if "surface" not in frame.columns:
            frame["surface"] = "*"
        frame["surface"] = frame["surface"].fillna("*").astype(str).str.strip().replace("", "*")
        frame["step"] = frame["step"].astype(str).str.strip()
        for col, default in (("potential", 0.0), ("symmetry_factor", np.nan), ("prefactor", np.nan)):
            if col not in frame.columns:
                frame[col] = default
        for col in ("G_a", "potential", "symmetry_factor", "prefactor"):
            values = pd.to_numeric(frame[col], errors="coerce")
            bad = values.isna() & frame[col].notna() & (frame[col].astype(str).str.strip() != "")
            if bad.any():
                rows = [int(r) + 2 for r in np.flatnonzero(bad.to_numpy())]
                raise KineticsInputError(f"{source}: column {col!r} is not a number at line(s) {rows[:10]}")
            frame[col] = values
        if frame["G_a"].isna().any():
            rows = [int(r) + 2 for r in np.flatnonzero(frame["G_a"].isna().to_numpy())]
            raise KineticsInputError(f"{source}: column 'G_a' is empty at line(s) {rows[:10]}; give the activation free energy in eV")
        frame["potential"] = frame["potential"].fillna(0.0)
        beta = frame["symmetry_factor"]
        if ((beta <= 0) | (beta >= 1)).any():
            raise KineticsInputError(f"{source}: symmetry_factor must lie strictly between 0 and 1")
        if (frame["prefactor"] <= 0).any():
            raise KineticsInputError(f"{source}: prefactor must be a positive rate in 1/s")
        return cls(frame.reset_index(drop=True), source)


@dataclass(frozen=True)
class RateConstants:
    """Log rate constants of every step at every (surface, potential) point.

    Attributes
    ----------
    ln_kf, ln_kb : ndarray (..., n_steps)
        ln of the forward/backward rate constants in 1/s (per site; molecules' activities and
        coverages multiply them in the rate law).
    dG : ndarray (..., n_steps)
        Step free energies at U, eV (CHE kernel).
    G_f : ndarray (..., n_steps)
        Forward activation free energies after the detailed-balance clip, eV.
    dGf_ddG : ndarray (..., n_steps)
        dG_f / d(dG) on the active branch (beta, gamma, 1 or 0); used for Tafel slopes.
    clipped : ndarray of bool (..., n_steps)
        Where the raw barrier was raised to max(G_f, dG, 0).
    """

    ln_kf: np.ndarray
    ln_kb: np.ndarray
    dG: np.ndarray
    G_f: np.ndarray
    dGf_ddG: np.ndarray
    clipped: np.ndarray


def rate_constants(dG: np.ndarray, raw_offset: np.ndarray, raw_slope: np.ndarray, ln_prefactor: np.ndarray, temperature: float) -> RateConstants:
    """Rate constants from step free energies and a linear raw barrier ``G_raw = offset + slope * dG``.

    Parameters
    ----------
    dG : ndarray (..., n_steps)
        Step free energies at the potential, eV.
    raw_offset, raw_slope : ndarray broadcastable to ``dG``
        The raw forward barrier ``offset + slope * dG`` (eV); slope 0 and offset 0 give the
        thermodynamic minimum ``max(dG, 0)``.
    ln_prefactor : ndarray broadcastable to ``dG``
        ln of the prefactor in 1/s.
    temperature : float
        K.

    Notes
    -----
    :math:`G_f = \\max(G_\\mathrm{raw}, \\Delta G, 0)`, :math:`G_b = G_f - \\Delta G`,
    :math:`\\ln k = \\ln A - G/k_BT`; hence :math:`k_f/k_b = e^{-\\Delta G/k_BT}` (detailed balance).
    """
    kT = BOLTZMANN_EV * float(temperature)
    raw = raw_offset + raw_slope * dG
    g_f = np.maximum(np.maximum(raw, dG), 0.0)
    on_raw = raw >= np.maximum(dG, 0.0)
    on_dG = ~on_raw & (dG > 0.0)
    slope = np.where(on_raw, raw_slope, np.where(on_dG, 1.0, 0.0))
    clipped = ~on_raw & (np.broadcast_to(raw_offset, dG.shape) != 0) | (~on_raw & (np.broadcast_to(raw_slope, dG.shape) != 0))
    ln_kf = ln_prefactor - g_f / kT
    ln_kb = ln_prefactor - (g_f - dG) / kT
    return RateConstants(ln_kf, ln_kb, dG, g_f, slope, clipped)
