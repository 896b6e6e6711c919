"""Thermochemistry from vibrational frequencies: harmonic adsorbates and ideal-gas molecules.

Pure computation: this module reads no files and draws nothing. Energies are in eV, temperatures
in K, pressures in bar (the name of every pressure argument says so), entropies in eV/K per
particle, frequencies in the unit the caller declares (``"cm^-1"``, ``"meV"`` or ``"THz"``).

Two models
----------
:class:`HarmonicAdsorbate`
    All 3N degrees of freedom of an adsorbate are harmonic vibrations. Gives the zero-point
    energy, the heat integral :math:`\\int_0^T C_p\\,dT` (for a harmonic solid
    :math:`C_p \\approx C_v`), the entropy and the free-energy correction
    ``ZPE + CpdT - T S`` that is added to the electronic energy.
:class:`IdealGasMolecule`
    Translation (pressure dependent), rigid rotation (linear or nonlinear, with a rotational
    symmetry number), harmonic vibration and electronic (spin multiplicity) terms.

Treatment of awkward modes
--------------------------
Imaginary modes are written as negative numbers (``-400`` for 400i cm^-1) or as complex numbers
with a non-zero imaginary part. By default they raise :class:`~ecatlab.errors.ThermochemistryError`
naming the species and the mode; ``imaginary="drop"`` removes them, ``imaginary="flip"`` uses
their magnitude as a real frequency. Soft real modes may be kept harmonic, raised to a cutoff,
or interpolated to a free rotor (quasi-RRHO, Grimme 2012). Every mode touched is recorded in
:class:`ModeChange` objects kept on the model and copied into every result.
"""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass, field
from typing import Literal, Sequence

import numpy as np

from ecatlab.constants import (
    ANGSTROM_M,
    ATOMIC_MASS_KG,
    BAR_IN_PA,
    BOLTZMANN_EV,
    BOLTZMANN_J,
    EV_PER_K_IN_J_PER_MOL_K,
    MEV_IN_EV,
    PLANCK_EV,
    PLANCK_J,
    STANDARD_PRESSURE_PA,
    TERAHERTZ_IN_EV,
    WAVENUMBER_IN_EV,
)
from ecatlab.errors import ThermochemistryError

__all__ = [
    "FREQUENCY_UNITS",
    "ModeChange",
    "LowFrequencyTreatment",
    "ThermoCorrection",
    "HarmonicAdsorbate",
    "IdealGasMolecule",
    "RotationalSymmetry",
    "detect_rotational_symmetry",
    "symmetry_number_from_point_group",
    "to_electronvolt",
    "from_electronvolt",
    "entropy_in_j_per_mol_k",
]

FrequencyUnit = Literal["cm^-1", "meV", "THz"]
ImaginaryPolicy = Literal["raise", "drop", "flip"]

#: Declared frequency units and the energy (eV) of one unit.
FREQUENCY_UNITS: dict[str, float] = {
    "cm^-1": WAVENUMBER_IN_EV,
    "meV": MEV_IN_EV,
    "THz": TERAHERTZ_IN_EV,
}
_UNIT_ALIASES = {"cm-1": "cm^-1", "1/cm": "cm^-1", "cm^-1": "cm^-1", "mev": "meV", "thz": "THz"}

_IMAGINARY_POLICIES = ("raise", "drop", "flip")
_LOW_FREQUENCY_METHODS = ("harmonic", "cutoff", "quasi-rrho")


# ---------------------------------------------------------------------------------------------
# units
# ---------------------------------------------------------------------------------------------
def _canonical_unit(unit: str) -> str:
    if not isinstance(unit, str):
        raise ThermochemistryError(
            f"frequency unit must be one of {', '.join(FREQUENCY_UNITS)}, got {unit!r}"
        )
    canonical = _UNIT_ALIASES.get(unit.strip(), _UNIT_ALIASES.get(unit.strip().lower()))
    if canonical is None:
        raise ThermochemistryError(
            f"unknown frequency unit {unit!r}; declare one of {', '.join(FREQUENCY_UNITS)}"
        )
    return canonical


def to_electronvolt(values: Sequence[complex] | np.ndarray, unit: str) -> np.ndarray:
    """Convert frequencies in a declared unit to signed mode energies in eV.

    ``eps = h nu``; for wavenumbers ``eps = h c nu~`` (1000 cm^-1 = 0.123984 eV).

    Parameters
    ----------
    values : sequence of float or complex
        Frequencies. A negative real value or a complex value with non-zero imaginary part
        denotes an imaginary mode; it is returned as a negative energy of the same magnitude.
    unit : {"cm^-1", "meV", "THz"}
        The unit of ``values`` (aliases ``"cm-1"``, ``"1/cm"`` accepted). There is no default:
        a frequency without a unit is rejected.

    Returns
    -------
    ndarray of float
        Signed mode energies in eV (negative = imaginary).
    """
    factor = FREQUENCY_UNITS[_canonical_unit(unit)]
    arr = np.atleast_1d(np.asarray(values))
    if arr.ndim != 1:
        raise ThermochemistryError(f"frequencies must be a flat list, got shape {arr.shape}")
    if arr.size and not (np.issubdtype(arr.dtype, np.number)):
        raise ThermochemistryError(f"frequencies must be numbers, got {values!r}")
    if np.iscomplexobj(arr):
        imaginary = np.abs(arr.imag) > 0
        signed = np.where(imaginary, -np.abs(arr.imag), arr.real).astype(float)
    else:
        signed = arr.astype(float)
    if not np.all(np.isfinite(signed)):
        bad = [i for i, v in enumerate(signed) if not math.isfinite(v)]
        raise ThermochemistryError(f"frequencies at positions {bad} are not finite numbers")
    return signed * factor


def from_electronvolt(energies_ev: Sequence[float] | np.ndarray, unit: str) -> np.ndarray:
    """Convert mode energies in eV to frequencies in ``unit`` (inverse of :func:`to_electronvolt`)."""
    return np.asarray(energies_ev, dtype=float) / FREQUENCY_UNITS[_canonical_unit(unit)]


def entropy_in_j_per_mol_k(entropy_ev_per_k):
    """Convert an entropy per particle in eV/K to J/(mol K) (multiply by e N_A)."""
    return np.asarray(entropy_ev_per_k) * EV_PER_K_IN_J_PER_MOL_K


def _temperature_array(temperature) -> np.ndarray:
    t = np.asarray(temperature, dtype=float)
    if t.size == 0 or np.any(~np.isfinite(t)) or np.any(t <= 0):
        raise ThermochemistryError(
            f"temperature must be a positive number of kelvin (or an array of them), got {temperature!r}"
        )
    return t


def _pressure_pa(pressure_bar) -> np.ndarray:
    p = np.asarray(pressure_bar, dtype=float)
    if p.size == 0 or np.any(~np.isfinite(p)) or np.any(p <= 0):
        raise ThermochemistryError(f"pressure_bar must be a positive number of bar, got {pressure_bar!r}")
    return p * BAR_IN_PA


def _scalar_or_array(value):
    value = np.asarray(value, dtype=float)
    return float(value) if value.ndim == 0 else value


# ---------------------------------------------------------------------------------------------
# mode policies
# ---------------------------------------------------------------------------------------------
@dataclass(frozen=True)
class ModeChange:
    """One vibrational mode that a policy changed.

    Attributes
    ----------
    index : int
        Position of the mode in the list as given (0-based).
    original_cm : float
        The mode as given, in cm^-1; negative for an imaginary mode.
    new_cm : float or None
        The value used, in cm^-1; ``None`` if the mode was dropped.
    action : str
        ``"dropped imaginary"``, ``"made real"`` or ``"raised to cutoff"``.
    """

    index: int
    original_cm: float
    new_cm: float | None
    action: str

    def describe(self) -> str:
        """One line such as ``mode 3: -45.0 cm^-1 -> 45.0 cm^-1 (made real)``."""
        orig = f"{abs(self.original_cm):.1f}i" if self.original_cm < 0 else f"{self.original_cm:.1f}"
        new = "dropped" if self.new_cm is None else f"{self.new_cm:.1f} cm^-1"
        return f"mode {self.index}: {orig} cm^-1 -> {new} ({self.action})"


@dataclass(frozen=True)
class LowFrequencyTreatment:
    """How soft real modes enter the thermochemistry.

    Parameters
    ----------
    method : {"harmonic", "cutoff", "quasi-rrho"}
        ``"harmonic"``: every mode as given. ``"cutoff"``: modes below ``cutoff_cm`` are raised to
        ``cutoff_cm`` for every term (ZPE, CpdT, S) -- common practice, no single source.
        ``"quasi-rrho"``: the entropy of each mode is interpolated between the harmonic value and
        a free-rotor value (Grimme, Chem. Eur. J. 18, 9955 (2012)); ZPE and CpdT stay harmonic.
    cutoff_cm : float
        Cutoff in cm^-1 for ``"cutoff"``.
    rotor_switch_cm : float
        Grimme's omega_0 in cm^-1 (default 100).
    switch_exponent : float
        Grimme's alpha (default 4).
    average_moment_kg_m2 : float
        Grimme's B_av in kg m^2 (default 1e-44), which limits the free-rotor moment of inertia.
    """

    method: str = "harmonic"
    cutoff_cm: float = 50.0
    rotor_switch_cm: float = 100.0
    switch_exponent: float = 4.0
    average_moment_kg_m2: float = 1.0e-44

    def __post_init__(self):
        if self.method not in _LOW_FREQUENCY_METHODS:
            raise ThermochemistryError(
                f"unknown low-frequency method {self.method!r}; use one of {', '.join(_LOW_FREQUENCY_METHODS)}"
            )
        for name in ("cutoff_cm", "rotor_switch_cm", "switch_exponent", "average_moment_kg_m2"):
            value = getattr(self, name)
            if not (isinstance(value, (int, float)) and math.isfinite(value) and value > 0):
                raise ThermochemistryError(f"LowFrequencyTreatment.{name} must be a positive number, got {value!r}")

    @classmethod
    def coerce(cls, value: "LowFrequencyTreatment | str | None") -> "LowFrequencyTreatment":
        """Accept an instance, a method name, or None (harmonic)."""
        if value is None:
            return cls()
        if isinstance(value, cls):
            return value
        if isinstance(value, str):
            return cls(method=value)
        raise ThermochemistryError(f"low_frequency must be a LowFrequencyTreatment or a method name, got {value!r}")

    def describe(self) -> str:
        """Short text recorded in results."""
        if self.method == "cutoff":
            return f"cutoff: modes below {self.cutoff_cm:g} cm^-1 raised to {self.cutoff_cm:g} cm^-1"
        if self.method == "quasi-rrho":
            return (
                f"quasi-RRHO entropy (Grimme 2012): omega0 = {self.rotor_switch_cm:g} cm^-1, "
                f"alpha = {self.switch_exponent:g}, B_av = {self.average_moment_kg_m2:g} kg m^2"
            )
        return "harmonic: all modes as given"


#: Plausible range of vibrational wavenumbers, cm^-1, outside which a warning is given. The upper
#: bound lies above the highest molecular fundamental (H2 stretch, 4161 cm^-1; NIST Chemistry WebBook);
#: the lower bound (harmonic treatment only) is common practice, no source: below it the harmonic
#: entropy of one mode grows without bound as the frequency goes to zero.
FREQUENCY_WARNING_RANGE_CM = (10.0, 5000.0)


def _warn_frequency_range(energies_ev: np.ndarray, species: str, unit: str, treatment: "LowFrequencyTreatment") -> None:
    """CorrectionWarning for wavenumbers outside :data:`FREQUENCY_WARNING_RANGE_CM` (unit mix-ups, soft modes)."""
    from ecatlab.errors import CorrectionWarning

    cm = np.abs(np.asarray(energies_ev, dtype=float)) / WAVENUMBER_IN_EV
    low, high = FREQUENCY_WARNING_RANGE_CM
    if (cm > high).any():
        warnings.warn(
            f"{species}: {int((cm > high).sum())} mode(s) above {high:g} cm^-1 (highest {cm.max():.4g} cm^-1, given in {unit}); "
            "no molecular vibration is that high: check the unit (cm^-1, meV or THz)", CorrectionWarning, stacklevel=3)
    if treatment.method == "harmonic" and (cm < low).any():
        warnings.warn(
            f"{species}: {int((cm < low).sum())} mode(s) below {low:g} cm^-1 (lowest {cm.min():.3g} cm^-1) dominate the harmonic "
            "entropy; use the low-frequency treatment (low_frequency='quasi-rrho' or 'cutoff'; CLI --low-frequency) "
            "or check the unit", CorrectionWarning, stacklevel=3)


def _apply_mode_policies(
    energies_ev: np.ndarray,
    species: str,
    imaginary: str,
    low_frequency: LowFrequencyTreatment,
) -> tuple[np.ndarray, tuple[ModeChange, ...]]:
    """Apply the imaginary-mode policy then the cutoff; return used energies (eV) and changes."""
    if imaginary not in _IMAGINARY_POLICIES:
        raise ThermochemistryError(
            f"unknown imaginary-mode policy {imaginary!r}; use one of {', '.join(_IMAGINARY_POLICIES)}"
        )
    to_cm = 1.0 / WAVENUMBER_IN_EV
    changes: list[ModeChange] = []
    kept: list[float] = []
    for index, eps in enumerate(energies_ev):
        if eps < 0:
            if imaginary == "raise":
                raise ThermochemistryError(
                    f"{species}: mode {index} is imaginary ({abs(eps) * to_cm:.1f}i cm^-1). "
                    "A large imaginary mode means the structure is not a minimum (re-relax it); a small "
                    "one is usually numerical noise. Pass imaginary='drop' or imaginary='flip' to accept it; "
                    "the choice is recorded in the results."
                )
            if imaginary == "drop":
                changes.append(ModeChange(index, eps * to_cm, None, "dropped imaginary"))
                continue
            eps = -eps
            changes.append(ModeChange(index, -eps * to_cm, eps * to_cm, "made real"))
        if eps == 0:
            raise ThermochemistryError(
                f"{species}: mode {index} has zero frequency; its harmonic entropy is infinite. "
                "Remove it (translation/rotation of a gas molecule) or use a cutoff / quasi-RRHO treatment."
            )
        if low_frequency.method == "cutoff":
            cutoff_ev = low_frequency.cutoff_cm * WAVENUMBER_IN_EV
            if eps < cutoff_ev:
                original = changes[-1].original_cm if changes and changes[-1].index == index else eps * to_cm
                if changes and changes[-1].index == index:
                    changes.pop()
                    action = "made real, raised to cutoff"
                else:
                    action = "raised to cutoff"
                changes.append(ModeChange(index, original, low_frequency.cutoff_cm, action))
                eps = cutoff_ev
        kept.append(eps)
    return np.asarray(kept, dtype=float), tuple(changes)


# ---------------------------------------------------------------------------------------------
# harmonic oscillator pieces (vectorised over temperature and modes)
# ---------------------------------------------------------------------------------------------
def _reduced(energies_ev: np.ndarray, temperature: np.ndarray) -> np.ndarray:
    """x = eps / (k_B T), shape temperature.shape + (n_modes,)."""
    return energies_ev / (BOLTZMANN_EV * temperature[..., None])


def _harmonic_heat_integral(energies_ev: np.ndarray, temperature: np.ndarray) -> np.ndarray:
    """sum_i eps_i / (exp(eps_i / kT) - 1), eV."""
    x = _reduced(energies_ev, temperature)
    with np.errstate(over="ignore"):
        return np.sum(energies_ev / np.expm1(x), axis=-1)


def _harmonic_entropy_per_mode(energies_ev: np.ndarray, temperature: np.ndarray) -> np.ndarray:
    """k_B [x/(e^x - 1) - ln(1 - e^-x)] per mode, eV/K."""
    x = _reduced(energies_ev, temperature)
    with np.errstate(over="ignore"):
        return BOLTZMANN_EV * (x / np.expm1(x) - np.log(-np.expm1(-x)))


def _free_rotor_entropy_per_mode(
    energies_ev: np.ndarray, temperature: np.ndarray, treatment: LowFrequencyTreatment
) -> np.ndarray:
    """Grimme's free-rotor entropy per mode, eV/K.

    mu = h / (8 pi^2 nu), mu' = mu B_av / (mu + B_av),
    S_R = k_B [1/2 + ln( (8 pi^3 mu' k_B T / h^2)^(1/2) )].
    """
    nu_hz = energies_ev / PLANCK_EV
    mu = PLANCK_J / (8.0 * math.pi**2 * nu_hz)
    b_av = treatment.average_moment_kg_m2
    mu_eff = mu * b_av / (mu + b_av)
    arg = 8.0 * math.pi**3 * mu_eff * BOLTZMANN_J * temperature[..., None] / PLANCK_J**2
    return BOLTZMANN_EV * (0.5 + 0.5 * np.log(arg))


def _vibrational_entropy(
    energies_ev: np.ndarray, temperature: np.ndarray, treatment: LowFrequencyTreatment
) -> np.ndarray:
    if energies_ev.size == 0:
        return np.zeros(temperature.shape)
    s_harm = _harmonic_entropy_per_mode(energies_ev, temperature)
    if treatment.method != "quasi-rrho":
        return np.sum(s_harm, axis=-1)
    s_rot = _free_rotor_entropy_per_mode(energies_ev, temperature, treatment)
    omega_cm = energies_ev / WAVENUMBER_IN_EV
    weight = 1.0 / (1.0 + (treatment.rotor_switch_cm / omega_cm) ** treatment.switch_exponent)
    return np.sum(weight * s_harm + (1.0 - weight) * s_rot, axis=-1)


# ---------------------------------------------------------------------------------------------
# results
# ---------------------------------------------------------------------------------------------
@dataclass(frozen=True)
class ThermoCorrection:
    """Thermochemical correction of one species at given conditions (all energies in eV).

    ``free_energy_correction = zpe + heat_integral - temperature * entropy``; add it to the
    electronic energy to get the free energy. For an ideal gas the heat integral includes the
    translational, rotational and pV terms.

    Attributes
    ----------
    species : str
    temperature : float or ndarray
        K.
    pressure_bar : float or ndarray or None
        bar; None for an adsorbate (no pressure dependence).
    zpe : float
        Zero-point energy, eV.
    heat_integral : float or ndarray
        ``CpdT`` = integral of C_p from 0 to T, eV.
    entropy : float or ndarray
        S, eV/K.
    ts : float or ndarray
        T S, eV.
    free_energy_correction : float or ndarray
        ``ZPE + CpdT - TS``, eV.
    mode_changes : tuple of ModeChange
        Modes modified by the imaginary / low-frequency policies.
    imaginary_policy : str
    low_frequency : str
        Description of the low-frequency treatment.
    """

    species: str
    temperature: float | np.ndarray
    pressure_bar: float | np.ndarray | None
    zpe: float
    heat_integral: float | np.ndarray
    entropy: float | np.ndarray
    ts: float | np.ndarray
    free_energy_correction: float | np.ndarray
    mode_changes: tuple[ModeChange, ...] = ()
    imaginary_policy: str = "raise"
    low_frequency: str = "harmonic: all modes as given"

    def as_dict(self) -> dict:
        """Plain dict with the table column names ZPE, CpdT, TS, G_correction (eV) and the notes."""
        return {
            "species": self.species,
            "temperature_K": self.temperature,
            "pressure_bar": self.pressure_bar,
            "ZPE": self.zpe,
            "CpdT": self.heat_integral,
            "TS": self.ts,
            "G_correction": self.free_energy_correction,
            "S_J_per_mol_K": entropy_in_j_per_mol_k(self.entropy) if np.ndim(self.entropy) else float(entropy_in_j_per_mol_k(self.entropy)),
            "imaginary_policy": self.imaginary_policy,
            "low_frequency": self.low_frequency,
            "modes_changed": "; ".join(c.describe() for c in self.mode_changes),
        }

    def _repr_html_(self) -> str:  # notebook display
        d = self.as_dict()
        rows = "".join(f"<tr><th style='text-align:left'>{k}</th><td>{v}</td></tr>" for k, v in d.items())
        return f"<table>{rows}</table>"


# ---------------------------------------------------------------------------------------------
# harmonic adsorbate
# ---------------------------------------------------------------------------------------------
@dataclass(frozen=True)
class HarmonicAdsorbate:
    """Adsorbate treated as 3N independent harmonic oscillators.

    Build it with :meth:`from_frequencies`, which applies the imaginary-mode and low-frequency
    policies (and records what they changed).

    Notes
    -----
    With mode energies ``eps_i = h nu_i`` and ``x_i = eps_i / (k_B T)``:

    * ``ZPE = 1/2 sum_i eps_i``
    * ``CpdT = int_0^T C_p dT = sum_i eps_i / (exp(x_i) - 1)`` (C_p ~ C_v for a harmonic solid)
    * ``S = k_B sum_i [x_i / (exp(x_i) - 1) - ln(1 - exp(-x_i))]``
    * ``G_correction = ZPE + CpdT - T S`` (the Helmholtz energy of the oscillators, eV)

    With the quasi-RRHO treatment the entropy of each mode becomes
    ``w_i S_vib,i + (1 - w_i) S_rot,i`` with ``w_i = 1 / (1 + (omega_0/omega_i)^alpha)`` and the
    free-rotor entropy of Grimme (2012); ZPE and CpdT are unchanged.

    Attributes
    ----------
    species : str
        Label used in messages and results.
    mode_energies_ev : tuple of float
        Mode energies actually used, eV (after the policies).
    mode_changes : tuple of ModeChange
    imaginary_policy : {"raise", "drop", "flip"}
    low_frequency : LowFrequencyTreatment
    """

    species: str
    mode_energies_ev: tuple[float, ...]
    mode_changes: tuple[ModeChange, ...] = ()
    imaginary_policy: str = "raise"
    low_frequency: LowFrequencyTreatment = field(default_factory=LowFrequencyTreatment)

    def __post_init__(self):
        arr = np.asarray(self.mode_energies_ev, dtype=float)
        if np.any(~np.isfinite(arr)) or np.any(arr <= 0):
            raise ThermochemistryError(
                f"{self.species}: mode energies used must be positive and finite; "
                "build the model with HarmonicAdsorbate.from_frequencies to apply the imaginary-mode policy"
            )

    @classmethod
    def from_frequencies(
        cls,
        frequencies: Sequence[complex] | np.ndarray,
        unit: str,
        *,
        species: str = "adsorbate",
        imaginary: str = "raise",
        low_frequency: LowFrequencyTreatment | str | None = None,
    ) -> "HarmonicAdsorbate":
        """Build the model from a list of frequencies.

        Parameters
        ----------
        frequencies : sequence of float or complex
            Vibrational frequencies in ``unit``; negative or complex = imaginary.
        unit : {"cm^-1", "meV", "THz"}
            Unit of ``frequencies``; required.
        species : str
            Name used in error messages and results.
        imaginary : {"raise", "drop", "flip"}
            ``"raise"`` (default) stops with an error naming the species and the mode.
        low_frequency : LowFrequencyTreatment or {"harmonic", "cutoff", "quasi-rrho"} or None
            Default harmonic.
        """
        treatment = LowFrequencyTreatment.coerce(low_frequency)
        signed = to_electronvolt(frequencies, unit)
        if signed.size == 0:
            raise ThermochemistryError(f"{species}: no vibrational frequencies given")
        used, changes = _apply_mode_policies(signed, species, imaginary, treatment)
        if used.size == 0:
            raise ThermochemistryError(f"{species}: every mode was dropped; nothing left to compute")
        _warn_frequency_range(used, species, unit, treatment)
        return cls(species, tuple(float(e) for e in used), changes, imaginary, treatment)

    @property
    def _eps(self) -> np.ndarray:
        return np.asarray(self.mode_energies_ev, dtype=float)

    def zero_point_energy(self) -> float:
        """ZPE = 1/2 sum_i h nu_i, eV."""
        return float(0.5 * np.sum(self._eps))

    def heat_integral(self, temperature) -> float | np.ndarray:
        """int_0^T C_p dT in eV at ``temperature`` (K, scalar or array)."""
        t = _temperature_array(temperature)
        return _scalar_or_array(_harmonic_heat_integral(self._eps, t))

    def entropy(self, temperature) -> float | np.ndarray:
        """Vibrational entropy S in eV/K at ``temperature`` (K, scalar or array)."""
        t = _temperature_array(temperature)
        return _scalar_or_array(_vibrational_entropy(self._eps, t, self.low_frequency))

    def free_energy_correction(self, temperature) -> float | np.ndarray:
        """ZPE + CpdT - T S in eV at ``temperature`` (K)."""
        t = _temperature_array(temperature)
        return _scalar_or_array(
            self.zero_point_energy()
            + _harmonic_heat_integral(self._eps, t)
            - t * _vibrational_entropy(self._eps, t, self.low_frequency)
        )

    def correction(self, temperature) -> ThermoCorrection:
        """All terms at ``temperature`` (K) as a :class:`ThermoCorrection`."""
        t = _temperature_array(temperature)
        zpe = self.zero_point_energy()
        cpdt = _harmonic_heat_integral(self._eps, t)
        s = _vibrational_entropy(self._eps, t, self.low_frequency)
        return ThermoCorrection(
            species=self.species,
            temperature=_scalar_or_array(t),
            pressure_bar=None,
            zpe=zpe,
            heat_integral=_scalar_or_array(cpdt),
            entropy=_scalar_or_array(s),
            ts=_scalar_or_array(t * s),
            free_energy_correction=_scalar_or_array(zpe + cpdt - t * s),
            mode_changes=self.mode_changes,
            imaginary_policy=self.imaginary_policy,
            low_frequency=self.low_frequency.describe(),
        )


# ---------------------------------------------------------------------------------------------
# rotational symmetry from geometry
# ---------------------------------------------------------------------------------------------
@dataclass(frozen=True)
class RotationalSymmetry:
    """Rotational symmetry of a molecule.

    Attributes
    ----------
    point_group : str
        Schoenflies symbol (``"D*h"`` for linear centrosymmetric); ``"given"`` for an override.
    symmetry_number : int
        Number of indistinguishable orientations reached by proper rotations (sigma).
    linear : bool
    source : str
        ``"detected (pymatgen PointGroupAnalyzer, tolerance ...)"`` or ``"given"``.
    """

    point_group: str
    symmetry_number: int
    linear: bool
    source: str


def symmetry_number_from_point_group(symbol: str) -> int:
    """Rotational symmetry number sigma of a Schoenflies point group.

    C1, Ci, Cs, C*v: 1; Cn, Cnv, Cnh: n; Dn, Dnh, Dnd: 2n; Sn: n/2; D*h: 2; T, Td, Th: 12;
    O, Oh: 24; I, Ih: 60.
    """
    s = symbol.strip()
    fixed = {"C1": 1, "Ci": 1, "Cs": 1, "C*v": 1, "D*h": 2, "T": 12, "Td": 12, "Th": 12,
             "O": 24, "Oh": 24, "I": 60, "Ih": 60}
    if s in fixed:
        return fixed[s]
    import re

    m = re.fullmatch(r"([CDS])(\d+)([vhd]?)", s)
    if not m:
        raise ThermochemistryError(f"unknown point group symbol {symbol!r}")
    letter, n, _ = m.group(1), int(m.group(2)), m.group(3)
    if letter == "C":
        return n
    if letter == "D":
        return 2 * n
    return max(n // 2, 1)


#: Distance tolerances (angstrom) tried, tightest first, when counting proper rotations.
SYMMETRY_TOLERANCES_ANGSTROM: tuple[float, ...] = (0.01, 0.05, 0.15)


def detect_rotational_symmetry(
    symbols: Sequence[str],
    positions_angstrom,
    *,
    tolerance_angstrom: float | Sequence[float] | None = None,
    eigen_tolerance: float | None = None,
) -> RotationalSymmetry:
    """Point group, rotational symmetry number and linearity from a geometry.

    The symmetry number sigma is the order of the molecule's group of *proper* rotations, counted
    directly: candidate axes (principal axes, atom directions, midpoints and normals of pairs of
    like atoms) and orders 2-8 are tested by mapping every atom onto a like atom within a distance
    tolerance, and the group generated by the accepted rotations is closed (every product must
    also map the molecule onto itself). This is done at each tolerance of
    :data:`SYMMETRY_TOLERANCES_ANGSTROM` and the largest consistent group is kept, so exact
    geometries keep their full symmetry (no loosening that loses operations) and geometries with
    a few hundredths of an angstrom of noise recover it. The Schoenflies symbol is taken from
    pymatgen's ``PointGroupAnalyzer`` at the first of several tolerances whose symbol has the same
    sigma; when none agrees the label names the rotation group's order.

    Parameters
    ----------
    symbols : sequence of str
        Element symbols.
    positions_angstrom : array_like, shape (N, 3)
        Cartesian coordinates in angstrom.
    tolerance_angstrom : float or sequence of float, optional
        Distance tolerance(s) for symmetry operations, angstrom (default
        :data:`SYMMETRY_TOLERANCES_ANGSTROM`).
    eigen_tolerance : float, optional
        Ignored (kept for compatibility with earlier versions).

    Returns
    -------
    RotationalSymmetry
    """
    coords = np.asarray(positions_angstrom, dtype=float)
    if coords.shape != (len(symbols), 3) or not np.all(np.isfinite(coords)):
        raise ThermochemistryError(f"positions must be finite with shape ({len(symbols)}, 3), got {coords.shape}")
    if len(symbols) == 1:
        return RotationalSymmetry("Kh", 1, False, "single atom")
    tolerances = SYMMETRY_TOLERANCES_ANGSTROM if tolerance_angstrom is None else tuple(np.atleast_1d(np.asarray(tolerance_angstrom, dtype=float)))
    masses = np.asarray(_atomic_masses_amu(symbols))
    centred = coords - (masses[:, None] * coords).sum(axis=0) / masses.sum()
    labels = np.unique(np.asarray(list(symbols)), return_inverse=True)[1]
    linear = _is_collinear(coords, tolerance_angstrom=LINEAR_TOLERANCE_ANGSTROM)
    if linear:
        tol = max(tolerances)
        centro = _maps_onto_itself(-np.eye(3), centred, labels, tol)
        symbol = "D*h" if centro else "C*v"
        return RotationalSymmetry(symbol, 2 if centro else 1, True, f"detected (collinear; inversion test at {tol:g} A)")
    best, best_tol = 1, tolerances[0]
    for tol in tolerances:
        order = _rotation_group_order(centred, labels, tol)
        if order > best:
            best, best_tol = order, tol
    symbol = _schoenflies_label(symbols, coords, best)
    return RotationalSymmetry(
        point_group=symbol,
        symmetry_number=best,
        linear=False,
        source=f"detected (proper rotations counted at tolerance {best_tol:g} A; label from pymatgen PointGroupAnalyzer)",
    )


def _permutation(rotation: np.ndarray, centred: np.ndarray, labels: np.ndarray, tol: float) -> tuple[int, ...] | None:
    """The atom permutation a rotation induces (each atom onto a like atom within ``tol``), or None."""
    moved = centred @ rotation.T
    d = np.linalg.norm(moved[:, None, :] - centred[None, :, :], axis=-1)
    d = np.where(labels[:, None] == labels[None, :], d, np.inf)
    target = d.argmin(axis=1)
    if not np.all(d[np.arange(len(centred)), target] < tol) or len(set(target.tolist())) != len(target):
        return None
    return tuple(int(t) for t in target)


def _maps_onto_itself(rotation: np.ndarray, centred: np.ndarray, labels: np.ndarray, tol: float) -> bool:
    return _permutation(rotation, centred, labels, tol) is not None


def _axis_rotation(axis: np.ndarray, angle: float) -> np.ndarray:
    x, y, z = axis
    c, s_, C = math.cos(angle), math.sin(angle), 1 - math.cos(angle)
    return np.array([[c + x * x * C, x * y * C - z * s_, x * z * C + y * s_],
                     [y * x * C + z * s_, c + y * y * C, y * z * C - x * s_],
                     [z * x * C - y * s_, z * y * C + x * s_, c + z * z * C]])


def _best_proper_rotation_rms(centred: np.ndarray, perm: tuple[int, ...]) -> float:
    """RMS distance (angstrom) after the best proper rotation taking every atom i onto atom perm[i] (Kabsch)."""
    target = centred[list(perm)]
    h = centred.T @ target
    u, _, vt = np.linalg.svd(h)
    d = np.sign(np.linalg.det(vt.T @ u.T)) or 1.0
    r = vt.T @ np.diag([1.0, 1.0, d]) @ u.T
    return float(np.sqrt(((centred @ r.T - target) ** 2).sum(axis=1).mean()))


def _rotation_group_order(centred: np.ndarray, labels: np.ndarray, tol: float) -> int:
    """Order of the group of proper rotations mapping the molecule onto itself within ``tol``.

    Rotations found about candidate axes induce atom permutations; the group they generate is
    closed exactly on permutations, and every member must be realised by a proper rotation
    (Kabsch fit within ``tol``), so noisy geometries neither lose nor invent operations.
    """
    n = len(centred)
    candidates = [np.eye(3)[k] for k in range(3)]
    inertia = np.linalg.eigh((centred**2).sum() * np.eye(3) - centred.T @ centred)[1]
    candidates += [inertia[:, k] for k in range(3)]
    candidates += [v for v in centred if np.linalg.norm(v) > 0.1]
    for i in range(n):
        for j in range(i + 1, n):
            if labels[i] != labels[j]:
                continue
            candidates.append(centred[i] + centred[j])
            candidates.append(np.cross(centred[i], centred[j]))
    axes: list[np.ndarray] = []
    for v in candidates:
        norm = np.linalg.norm(v)
        if norm < 1e-6:
            continue
        u = v / norm
        if not any(abs(abs(float(u @ w)) - 1.0) < 1e-4 for w in axes):
            axes.append(u)
    identity = tuple(range(n))
    group = {identity}
    for u in axes:
        for order in range(2, 9):
            perm = _permutation(_axis_rotation(u, 2 * math.pi / order), centred, labels, tol)
            if perm is not None:
                group.add(perm)
    # close the set of permutations under composition; every member must be a proper rotation
    frontier = list(group)
    while frontier:
        new = []
        for a in frontier:
            for b in list(group):
                for c in (tuple(a[k] for k in b), tuple(b[k] for k in a)):
                    if c not in group:
                        if _best_proper_rotation_rms(centred, c) > tol:
                            return 1  # the accepted operations do not form a group at this tolerance
                        group.add(c)
                        new.append(c)
                        if len(group) > 120:
                            return 1
        frontier = new
    return len(group)


def _schoenflies_label(symbols, coords, sigma: int) -> str:
    try:
        from pymatgen.core import Molecule
        from pymatgen.symmetry.analyzer import PointGroupAnalyzer
    except ImportError:  # pragma: no cover - pymatgen is a dependency
        return f"rotation group of order {sigma}"
    molecule = Molecule(list(symbols), coords)
    for tol, eig in ((0.3, 0.01), (0.1, 0.01), (0.3, 0.05), (0.3, 0.1), (0.05, 0.01), (0.5, 0.1)):
        try:
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")
                symbol = PointGroupAnalyzer(molecule, tolerance=tol, eigen_tolerance=eig).sch_symbol
            if symbol not in ("C*v", "D*h") and symmetry_number_from_point_group(symbol) == sigma:
                return symbol
        except Exception:  # noqa: BLE001 - pymatgen's closure can fail on noisy input; try the next tolerance
            continue
    return f"rotation group of order {sigma}"


#: Largest distance (angstrom) of an atom from the molecular axis for the molecule to count as linear.
LINEAR_TOLERANCE_ANGSTROM: float = 0.1


def _is_collinear(coords: np.ndarray, tolerance_angstrom: float) -> bool:
    """True if every atom lies within ``tolerance_angstrom`` of one straight line."""
    centred = coords - coords.mean(axis=0)
    _, _, vt = np.linalg.svd(centred)
    axis = vt[0]
    perpendicular = centred - np.outer(centred @ axis, axis)
    return bool(np.max(np.linalg.norm(perpendicular, axis=1)) < tolerance_angstrom)


# ---------------------------------------------------------------------------------------------
# ideal-gas molecule
# ---------------------------------------------------------------------------------------------
def _atomic_masses_amu(symbols: Sequence[str]) -> tuple[float, ...]:
    from pymatgen.core import Element

    masses = []
    for s in symbols:
        try:
            masses.append(float(Element(s).atomic_mass))
        except ValueError as exc:
            raise ThermochemistryError(f"unknown element symbol {s!r}") from exc
    return tuple(masses)


def _atomic_numbers(symbols: Sequence[str]) -> list[int]:
    from pymatgen.core import Element

    return [Element(s).Z for s in symbols]


@dataclass(frozen=True)
class IdealGasMolecule:
    """A gas molecule in the ideal-gas, rigid-rotor, harmonic-oscillator model.

    Build it with :meth:`from_geometry`.

    Notes
    -----
    With ``x_i = h nu_i / (k_B T)``, mass ``m``, principal moments ``I_A, I_B, I_C`` and
    rotational symmetry number ``sigma``, standard pressure ``p0 = 1 bar``:

    * ``H - E_elec = ZPE + int_0^T C_p dT`` with
      ``int_0^T C_p dT = 5/2 k_B T`` (translation + pV) ``+ k_B T`` (linear) or ``3/2 k_B T``
      (nonlinear rotation) ``+ sum_i h nu_i / (exp(x_i) - 1)``.
    * ``S_trans = k_B [ln((2 pi m k_B T / h^2)^(3/2) k_B T / p0) + 5/2]``
    * ``S_rot = k_B [ln(8 pi^2 I k_B T / (sigma h^2)) + 1]`` (linear) or
      ``k_B [ln(sqrt(pi I_A I_B I_C) / sigma (8 pi^2 k_B T / h^2)^(3/2)) + 3/2]`` (nonlinear)
    * ``S_vib = k_B sum_i [x_i / (exp(x_i) - 1) - ln(1 - exp(-x_i))]``
    * ``S_elec = k_B ln(spin_multiplicity)``
    * ``S(T, p) = S_trans + S_rot + S_vib + S_elec - k_B ln(p / p0)``
    * ``G - E_elec = H - E_elec - T S``; hence ``mu(p) - mu(p0) = k_B T ln(p / p0)`` exactly.

    Attributes
    ----------
    name : str
    symbols : tuple of str
    positions_angstrom : tuple of (x, y, z)
    masses_amu : tuple of float
    mode_energies_ev : tuple of float
        Vibrational mode energies used (3N-5 or 3N-6 before any dropped imaginary mode), eV.
    spin_multiplicity : int
        2S + 1 (O2: 3).
    symmetry : RotationalSymmetry
    mode_changes : tuple of ModeChange
    imaginary_policy : str
    low_frequency : LowFrequencyTreatment
    """

    name: str
    symbols: tuple[str, ...]
    positions_angstrom: tuple[tuple[float, float, float], ...]
    masses_amu: tuple[float, ...]
    mode_energies_ev: tuple[float, ...]
    spin_multiplicity: int
    symmetry: RotationalSymmetry
    mode_changes: tuple[ModeChange, ...] = ()
    imaginary_policy: str = "raise"
    low_frequency: LowFrequencyTreatment = field(default_factory=LowFrequencyTreatment)

    @classmethod
    def from_geometry(
        cls,
        name: str,
        symbols: Sequence[str],
        positions_angstrom,
        frequencies: Sequence[complex] | np.ndarray,
        unit: str,
        *,
        spin_multiplicity: int,
        charge: int = 0,
        symmetry_number: int | None = None,
        linear: bool | None = None,
        masses_amu: Sequence[float] | None = None,
        imaginary: str = "raise",
        low_frequency: LowFrequencyTreatment | str | None = None,
        symmetry_tolerance_angstrom: float = 0.3,
    ) -> "IdealGasMolecule":
        """Build the model, detecting symmetry number and linearity unless given.

        Parameters
        ----------
        name : str
            Label used in messages.
        symbols : sequence of str
            Element symbols, one per atom.
        positions_angstrom : array_like, shape (N, 3)
            Cartesian geometry in angstrom.
        frequencies : sequence of float or complex
            Exactly the 3N-5 (linear) or 3N-6 (nonlinear) vibrational frequencies, in ``unit``.
            Translations and rotations must not be included: modes are never chosen by sorting.
        unit : {"cm^-1", "meV", "THz"}
        spin_multiplicity : int
            2S + 1 of the electronic ground state (singlet 1, doublet 2, triplet 3). Must be a
            positive integer whose parity matches the electron count (checked with ``charge``).
        charge : int
            Molecular charge, used only for the parity check.
        symmetry_number : int, optional
            Override for the detected rotational symmetry number.
        linear : bool, optional
            Override for the detected linearity.
        masses_amu : sequence of float, optional
            Atomic masses in amu; default pymatgen's standard atomic weights.
        imaginary : {"raise", "drop", "flip"}
        low_frequency : LowFrequencyTreatment or str or None
        symmetry_tolerance_angstrom : float
            Tolerance passed to the point-group detection.
        """
        symbols = tuple(str(s) for s in symbols)
        coords = np.asarray(positions_angstrom, dtype=float)
        if coords.shape != (len(symbols), 3) or not np.all(np.isfinite(coords)):
            raise ThermochemistryError(
                f"{name}: positions must be finite with shape ({len(symbols)}, 3), got {coords.shape}"
            )
        # spin
        if isinstance(spin_multiplicity, bool) or not isinstance(spin_multiplicity, (int, np.integer)):
            if isinstance(spin_multiplicity, float) and spin_multiplicity.is_integer():
                spin_multiplicity = int(spin_multiplicity)
            else:
                raise ThermochemistryError(
                    f"{name}: spin_multiplicity must be an integer 2S+1 (1 singlet, 2 doublet, 3 triplet), "
                    f"got {spin_multiplicity!r}; a half-integer looks like a total spin S"
                )
        if spin_multiplicity < 1:
            raise ThermochemistryError(f"{name}: spin_multiplicity must be >= 1 (it is 2S+1), got {spin_multiplicity}")
        electrons = sum(_atomic_numbers(symbols)) - int(charge)
        if (electrons + spin_multiplicity) % 2 == 0:
            raise ThermochemistryError(
                f"{name}: spin_multiplicity {spin_multiplicity} is impossible with {electrons} electrons "
                f"(an {'even' if electrons % 2 == 0 else 'odd'} electron count needs an "
                f"{'odd' if electrons % 2 == 0 else 'even'} multiplicity); did you give the total spin S instead of 2S+1?"
            )
        if spin_multiplicity - 1 > electrons:
            raise ThermochemistryError(f"{name}: spin_multiplicity {spin_multiplicity} needs more than {electrons} unpaired electrons")
        # masses
        if masses_amu is None:
            masses = _atomic_masses_amu(symbols)
        else:
            masses = tuple(float(m) for m in masses_amu)
            if len(masses) != len(symbols) or any(not (m > 0) for m in masses):
                raise ThermochemistryError(f"{name}: masses_amu must give one positive mass per atom")
        # symmetry
        if symmetry_number is None or linear is None:
            detected = detect_rotational_symmetry(symbols, coords, tolerance_angstrom=symmetry_tolerance_angstrom)
        else:
            detected = None
        if symmetry_number is not None:
            if isinstance(symmetry_number, bool) or int(symmetry_number) != symmetry_number or symmetry_number < 1:
                raise ThermochemistryError(f"{name}: symmetry_number must be a positive integer, got {symmetry_number!r}")
        sigma = int(symmetry_number) if symmetry_number is not None else detected.symmetry_number
        is_linear = bool(linear) if linear is not None else detected.linear
        if detected is None:
            symmetry = RotationalSymmetry("given", sigma, is_linear, "given")
        elif symmetry_number is not None or linear is not None:
            symmetry = RotationalSymmetry(detected.point_group, sigma, is_linear, detected.source + "; overridden by caller")
        else:
            symmetry = detected
        # modes
        n_atoms = len(symbols)
        expected = 0 if n_atoms == 1 else (3 * n_atoms - 5 if is_linear else 3 * n_atoms - 6)
        signed = to_electronvolt(frequencies, unit) if np.size(frequencies) else np.zeros(0)
        if signed.size != expected:
            raise ThermochemistryError(
                f"{name}: expected {expected} vibrational frequencies for a {'linear' if is_linear else 'nonlinear'} "
                f"molecule of {n_atoms} atoms (3N-{5 if is_linear else 6}), got {signed.size}. Give only the "
                "vibrations: remove translations and rotations yourself (they are not picked by sorting)."
            )
        treatment = LowFrequencyTreatment.coerce(low_frequency)
        used, changes = _apply_mode_policies(signed, name, imaginary, treatment)
        return cls(
            name=name,
            symbols=symbols,
            positions_angstrom=tuple(tuple(float(c) for c in row) for row in coords),
            masses_amu=masses,
            mode_energies_ev=tuple(float(e) for e in used),
            spin_multiplicity=int(spin_multiplicity),
            symmetry=symmetry,
            mode_changes=changes,
            imaginary_policy=imaginary,
            low_frequency=treatment,
        )

    # -- geometry -------------------------------------------------------------------------------
    @property
    def _eps(self) -> np.ndarray:
        return np.asarray(self.mode_energies_ev, dtype=float)

    @property
    def mass_kg(self) -> float:
        """Total mass in kg."""
        return float(sum(self.masses_amu)) * ATOMIC_MASS_KG

    def principal_moments_kg_m2(self) -> np.ndarray:
        """Principal moments of inertia (ascending) in kg m^2, about the centre of mass."""
        m = np.asarray(self.masses_amu, dtype=float)
        r = np.asarray(self.positions_angstrom, dtype=float)
        r = r - (m[:, None] * r).sum(axis=0) / m.sum()
        inertia = np.zeros((3, 3))
        for mi, ri in zip(m, r):
            inertia += mi * (np.dot(ri, ri) * np.eye(3) - np.outer(ri, ri))
        return np.linalg.eigvalsh(inertia) * ATOMIC_MASS_KG * ANGSTROM_M**2

    @property
    def _rotation_kind(self) -> str:
        if len(self.symbols) == 1:
            return "monatomic"
        return "linear" if self.symmetry.linear else "nonlinear"

    # -- thermochemistry ------------------------------------------------------------------------
    def zero_point_energy(self) -> float:
        """ZPE = 1/2 sum_i h nu_i, eV."""
        return float(0.5 * np.sum(self._eps))

    def heat_integral(self, temperature) -> float | np.ndarray:
        """int_0^T C_p dT in eV (translation + pV + rotation + vibration)."""
        t = _temperature_array(temperature)
        return _scalar_or_array(self._heat_integral(t))

    def _heat_integral(self, t: np.ndarray) -> np.ndarray:
        rot = {"monatomic": 0.0, "linear": 1.0, "nonlinear": 1.5}[self._rotation_kind]
        vib = _harmonic_heat_integral(self._eps, t) if self._eps.size else np.zeros(t.shape)
        return (2.5 + rot) * BOLTZMANN_EV * t + vib

    def enthalpy_correction(self, temperature) -> float | np.ndarray:
        """H - E_elec = ZPE + int_0^T C_p dT, eV."""
        t = _temperature_array(temperature)
        return _scalar_or_array(self.zero_point_energy() + self._heat_integral(t))

    def entropy_terms(self, temperature, pressure_bar) -> dict[str, float | np.ndarray]:
        """Entropy contributions in eV/K: translation (1 bar), rotation, vibration, electronic,
        pressure (-k_B ln(p/p0)) and their total."""
        t = _temperature_array(temperature)
        p = _pressure_pa(pressure_bar)
        t, p = np.broadcast_arrays(t, p)
        k = BOLTZMANN_J
        s_trans = BOLTZMANN_EV * (
            np.log((2.0 * math.pi * self.mass_kg * k * t / PLANCK_J**2) ** 1.5 * k * t / STANDARD_PRESSURE_PA) + 2.5
        )
        kind = self._rotation_kind
        sigma = self.symmetry.symmetry_number
        moments = self.principal_moments_kg_m2()
        if kind == "monatomic":
            s_rot = np.zeros(t.shape)
        elif kind == "linear":
            s_rot = BOLTZMANN_EV * (np.log(8.0 * math.pi**2 * moments[-1] * k * t / (sigma * PLANCK_J**2)) + 1.0)
        else:
            s_rot = BOLTZMANN_EV * (
                np.log(math.sqrt(math.pi * np.prod(moments)) / sigma * (8.0 * math.pi**2 * k * t / PLANCK_J**2) ** 1.5)
                + 1.5
            )
        s_vib = _vibrational_entropy(self._eps, t, self.low_frequency)
        s_elec = np.full(t.shape, BOLTZMANN_EV * math.log(self.spin_multiplicity))
        s_pressure = -BOLTZMANN_EV * np.log(p / STANDARD_PRESSURE_PA)
        total = s_trans + s_rot + s_vib + s_elec + s_pressure
        return {
            "translation": _scalar_or_array(s_trans),
            "rotation": _scalar_or_array(s_rot),
            "vibration": _scalar_or_array(s_vib),
            "electronic": _scalar_or_array(s_elec),
            "pressure": _scalar_or_array(s_pressure),
            "total": _scalar_or_array(total),
        }

    def entropy(self, temperature, pressure_bar) -> float | np.ndarray:
        """S(T, p) in eV/K; ``pressure_bar`` in bar (required)."""
        return self.entropy_terms(temperature, pressure_bar)["total"]

    def free_energy_correction(self, temperature, pressure_bar) -> float | np.ndarray:
        """G - E_elec = ZPE + CpdT - T S(T, p), eV."""
        t = _temperature_array(temperature)
        s = np.asarray(self.entropy(t, pressure_bar))
        return _scalar_or_array(self.zero_point_energy() + self._heat_integral(t) - t * s)

    def correction(self, temperature, pressure_bar) -> ThermoCorrection:
        """All terms at ``temperature`` (K) and ``pressure_bar`` (bar)."""
        t = _temperature_array(temperature)
        s = np.asarray(self.entropy(t, pressure_bar))
        t_b, _ = np.broadcast_arrays(t, s)
        zpe = self.zero_point_energy()
        cpdt = np.broadcast_to(self._heat_integral(t), s.shape)
        return ThermoCorrection(
            species=self.name,
            temperature=_scalar_or_array(t_b),
            pressure_bar=_scalar_or_array(np.asarray(pressure_bar, dtype=float)),
            zpe=zpe,
            heat_integral=_scalar_or_array(cpdt),
            entropy=_scalar_or_array(s),
            ts=_scalar_or_array(t_b * s),
            free_energy_correction=_scalar_or_array(zpe + cpdt - t_b * s),
            mode_changes=self.mode_changes,
            imaginary_policy=self.imaginary_policy,
            low_frequency=self.low_frequency.describe(),
        )
