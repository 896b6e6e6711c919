"""The electrochemical conditions of an analysis: one validated, frozen value.

:class:`Conditions` carries the potential scale, the pH and the temperature (and, where a
single potential is meant, that potential). It is checked once, in its constructor, and passed
everywhere these numbers travel (engine, explorer, networks, volcanoes, uncertainty, kinetics,
Pourbaix, reports), so the allowed ranges exist in one place only.
"""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass

import numpy as np

from ecatlab.constants import STANDARD_TEMPERATURE, thermal_voltage_per_pH
from ecatlab.errors import ConditionError, ConditionsWarning

__all__ = [
    "Conditions",
    "SCALES",
    "PH_RANGE",
    "TEMPERATURE_RANGE_K",
    "POTENTIAL_RANGE_V",
    "check_scale",
    "check_pH",
    "check_temperature",
    "check_potential",
]

#: Potential scales: reversible and standard hydrogen electrode.
SCALES = ("RHE", "SHE")
#: Accepted pH range (aqueous electrolytes, strong acids and bases included).
PH_RANGE = (-2.0, 16.0)
#: Accepted temperature range, K. Outside 273.15-373.15 K liquid water at 1 bar does not exist and
#: a :class:`ConditionsWarning` says so.
TEMPERATURE_RANGE_K = (200.0, 1000.0)
#: Accepted electrode potentials, V on either scale (well beyond any aqueous window).
POTENTIAL_RANGE_V = (-10.0, 10.0)
_LIQUID_WATER_K = (273.15, 373.15)


def _short(value) -> str:
    text = repr(value)
    return text if len(text) <= 60 else text[:57] + "..."


def check_scale(scale) -> str:
    """'RHE' or 'SHE' (case-insensitive) -> canonical upper-case name."""
    sc = str(scale).strip().upper()
    if sc not in SCALES:
        raise ConditionError(f"unknown potential scale {_short(scale)}; use 'RHE' or 'SHE'")
    return sc


def check_temperature(temperature) -> float:
    """One finite temperature in K within :data:`TEMPERATURE_RANGE_K`."""
    try:
        t = np.asarray(temperature, dtype=float)
    except (TypeError, ValueError):
        raise ConditionError(f"temperature must be a number of kelvin, got {_short(temperature)}") from None
    if t.ndim != 0 or not math.isfinite(float(t)):
        raise ConditionError(f"temperature must be one finite number of kelvin, got {_short(temperature)}")
    t = float(t)
    lo, hi = TEMPERATURE_RANGE_K
    if not lo <= t <= hi:
        raise ConditionError(f"temperature {t:g} K is outside {lo:g}-{hi:g} K; give the temperature in kelvin")
    if not _LIQUID_WATER_K[0] <= t <= _LIQUID_WATER_K[1]:
        warnings.warn(
            f"T = {t:g} K is outside the liquid range of water at 1 bar (273.15-373.15 K); aqueous species and "
            "H2O(l) are extrapolated",
            ConditionsWarning,
            stacklevel=3,
        )
    return t


def _check_range(value, what: str, unit: str, bounds: tuple[float, float], outside: str):
    """Finite number(s) within ``bounds``; float or float array; a ConditionError naming ``what`` otherwise."""
    try:
        arr = np.asarray(value, dtype=float)
    except (TypeError, ValueError):
        raise ConditionError(f"{what} must be a number{unit}, got {_short(value)}") from None
    if arr.size == 0:
        raise ConditionError(f"{what} is empty; give a number{unit}")
    if not np.all(np.isfinite(arr)):
        raise ConditionError(f"{what} must be finite, got {_short(value)}")
    lo, hi = bounds
    if np.any((arr < lo) | (arr > hi)):
        raise ConditionError(outside.format(value=_short(value), lo=lo, hi=hi))
    return float(arr) if arr.ndim == 0 else arr


def check_pH(pH):
    """Finite pH (scalar or array) within :data:`PH_RANGE`; returns float or a float array."""
    return _check_range(pH, "pH", "", PH_RANGE, "pH {value} is outside the aqueous range ({lo:g} to {hi:g})")


def check_potential(potential):
    """Finite potential(s) in V within :data:`POTENTIAL_RANGE_V`; returns float or a float array."""
    return _check_range(potential, "potential", " of volts", POTENTIAL_RANGE_V, "potential {value} V is outside {lo:g} to {hi:g} V")


@dataclass(frozen=True)
class Conditions:
    """Scale, pH and temperature of an analysis (validated once; immutable and hashable).

    Parameters
    ----------
    scale : {"RHE", "SHE"}
        Potential scale of every potential given or returned (case-insensitive).
    pH : float
        pH of the electrolyte, -2 to 16.
    temperature : float
        Temperature in K (200-1000 K; a warning outside liquid water's range).
    potential : float, optional
        One applied potential in V on ``scale``, where an analysis needs one.

    Examples
    --------
    >>> c = Conditions("rhe", pH=13, temperature=298.15)
    >>> c.scale, round(c.nernst_shift, 4)
    ('RHE', 0.7691)
    """

    scale: str = "RHE"
    pH: float = 0.0
    temperature: float = STANDARD_TEMPERATURE
    potential: float | None = None

    def __post_init__(self) -> None:
        object.__setattr__(self, "scale", check_scale(self.scale))
        p = check_pH(self.pH)
        if not isinstance(p, float):
            raise ConditionError("Conditions takes one pH value; evaluate arrays of pH with the engine functions")
        object.__setattr__(self, "pH", p)
        object.__setattr__(self, "temperature", check_temperature(self.temperature))
        if self.potential is not None:
            u = check_potential(self.potential)
            if not isinstance(u, float):
                raise ConditionError("Conditions takes one potential; pass arrays of potentials to the engine functions")
            object.__setattr__(self, "potential", u)

    @classmethod
    def coerce(cls, conditions=None, *, scale=None, pH=None, temperature=None, potential=None) -> "Conditions":
        """A Conditions from an existing one (fields given here replace its own) or from the fields."""
        base = conditions if isinstance(conditions, Conditions) else cls()
        if conditions is not None and not isinstance(conditions, Conditions):
            raise ConditionError(f"conditions must be a Conditions value, got {type(conditions).__name__}")
        return cls(
            base.scale if scale is None else scale,
            base.pH if pH is None else pH,
            base.temperature if temperature is None else temperature,
            base.potential if potential is None else potential,
        )

    @property
    def thermal_voltage_per_pH(self) -> float:
        """k_B T ln(10) / e in V per pH unit at this temperature."""
        return float(thermal_voltage_per_pH(self.temperature))

    @property
    def nernst_shift(self) -> float:
        """k_B T ln(10) pH in eV (U_RHE - U_SHE in V)."""
        return self.thermal_voltage_per_pH * self.pH

    def to_she(self, potential):
        """Convert potential(s) on this scale to the SHE scale, V."""
        return np.asarray(potential, dtype=float) - (self.nernst_shift if self.scale == "RHE" else 0.0)

    def to_rhe(self, potential):
        """Convert potential(s) on this scale to the RHE scale, V."""
        return np.asarray(potential, dtype=float) + (self.nernst_shift if self.scale == "SHE" else 0.0)

    def describe(self) -> str:
        """'U = +0.800 V vs RHE, pH 0, T = 298.15 K' (without a potential: 'pH 0, T = 298.15 K, V vs RHE'), for captions."""
        if self.potential is None:
            return f"pH {self.pH:g}, T = {self.temperature:g} K, V vs {self.scale}"
        return f"U = {self.potential:+.3f} V vs {self.scale}, pH {self.pH:g}, T = {self.temperature:g} K"

    def to_dict(self) -> dict:
        return {"schema": "ecatlab.conditions/1", "scale": self.scale, "pH": self.pH, "temperature": self.temperature, "potential": self.potential}

    @classmethod
    def from_dict(cls, data) -> "Conditions":
        if data.get("schema") != "ecatlab.conditions/1":
            raise ConditionError(f"unknown conditions schema {data.get('schema')!r}; expected 'ecatlab.conditions/1'")
        return cls(data["scale"], data["pH"], data["temperature"], data.get("potential"))
