"""Built-in gas-molecule library and the thermochemical corrections of reference molecules.

The library is data: ``ecatlab/data/gas_library.json`` (schema ``ecatlab.gas-library/1``, a source
per molecule; built by ``scripts/make_gas_library.py`` from bond lengths and angles) and the water
vapour-pressure coefficients in ``ecatlab/data/vapour_pressure.json``.

Every molecule has a geometry (built from bond lengths and angles), a spin multiplicity and
its fundamental vibrational frequencies (cm^-1). Values are experimental ones as tabulated in
NIST CCCBDB (geometries; experimental fundamentals going back to Shimanouchi's tables and, for
diatomics, Huber & Herzberg), **written here from memory** and rounded to the digits shown; the
``source`` field of each record says so. They are good to a few cm^-1 and about 0.005 angstrom,
which moves ZPE by < 0.002 eV and S(298 K) by < 0.1 J/mol/K for the small molecules (checked in
the tests against the cantera gri30 NASA polynomials).

The rotational symmetry number and linearity of each molecule are *not* stored: they are
detected from the geometry with pymatgen's ``PointGroupAnalyzer`` (see
:func:`ecatlab.thermochemistry.detect_rotational_symmetry`) and can be overridden.

Liquid references (``"H2O(l)"``) are treated as the ideal gas at the liquid's vapour pressure,
where liquid and vapour have the same chemical potential: water at 0.035 bar, about its vapour
pressure at 298.15 K (common practice in CHE work, e.g. Norskov et al., J. Phys. Chem. B 108,
17886 (2004)). The pressure is an argument and is reported in every table.
"""

from __future__ import annotations

import math
import re
import warnings
from dataclasses import dataclass, replace
from functools import lru_cache
from typing import Iterable, Mapping, Sequence

import numpy as np

from ecatlab.constants import STANDARD_TEMPERATURE
from ecatlab.errors import CorrectionWarning, ThermochemistryError
from ecatlab.thermochemistry import (
    IdealGasMolecule,
    LowFrequencyTreatment,
    RotationalSymmetry,
    detect_rotational_symmetry,
)

__all__ = [
    "GasRecord",
    "GAS_LIBRARY",
    "gas_record",
    "gas_molecule",
    "available_gases",
    "DEFAULT_WATER_VAPOUR_PRESSURE_BAR",
    "water_vapour_pressure_bar",
    "water_pressure_convention_bar",
    "reference_corrections",
]

#: Water vapour pressure used for H2O(l) by default, bar (0.035 bar; common practice, CHE papers).
DEFAULT_WATER_VAPOUR_PRESSURE_BAR: float = 0.035

_GAS_FILE = "gas_library.json"
_VAPOUR_FILE = "vapour_pressure.json"


@dataclass(frozen=True)
class GasRecord:
    """Stored data of one gas molecule.

    Attributes
    ----------
    formula : str
        Name used as library key (``"H2O"``).
    symbols : tuple of str
    positions_angstrom : tuple of (x, y, z)
        Cartesian geometry, angstrom.
    frequencies_cm : tuple of float
        Fundamental vibrational frequencies, cm^-1 (degenerate modes repeated).
    spin_multiplicity : int
        2S + 1.
    source : str
        Where geometry and frequencies come from.
    """

    formula: str
    symbols: tuple[str, ...]
    positions_angstrom: tuple[tuple[float, float, float], ...]
    frequencies_cm: tuple[float, ...]
    spin_multiplicity: int
    source: str


def _load_json(name: str, schema: str) -> dict:
    import json
    from importlib import resources

    data = json.loads(resources.files("ecatlab").joinpath("data").joinpath(name).read_text(encoding="utf-8"))
    if data.get("schema") != schema:
        raise ThermochemistryError(f"{name}: unknown schema {data.get('schema')!r}; expected {schema!r}")
    return data


def _load_gas_library() -> dict[str, GasRecord]:
    data = _load_json(_GAS_FILE, "ecatlab.gas-library/1")
    out = {}
    for m in data["molecules"]:
        pos = tuple(tuple(float(x) for x in p) for p in m["positions_angstrom"])
        out[m["formula"]] = GasRecord(m["formula"], tuple(m["symbols"]), pos, tuple(float(f) for f in m["frequencies_cm"]),
                                      int(m["spin_multiplicity"]), m["source"])
    return out


#: The built-in gas molecules, read from ``ecatlab/data/gas_library.json`` (a source per molecule;
#: regenerate with ``scripts/make_gas_library.py``).
GAS_LIBRARY: dict[str, GasRecord] = _load_gas_library()
#: Antoine coefficients of liquid water, from ``ecatlab/data/vapour_pressure.json``.
_WATER_ANTOINE: dict = next(r for r in _load_json(_VAPOUR_FILE, "ecatlab.vapour-pressure/1")["rows"] if r["species"] == "H2O(l)")


def available_gases() -> list[str]:
    """Names of the molecules in the built-in library."""
    return sorted(GAS_LIBRARY)


def _formula_of(name: str) -> tuple[str, str | None]:
    """Split ``"H2O(l)"`` into ``("H2O", "l")``; ``"CO2"`` gives ``("CO2", None)``."""
    m = re.fullmatch(r"\s*([A-Za-z0-9]+)\s*(?:\((g|l|aq)\))?\s*", str(name))
    if not m:
        raise ThermochemistryError(f"cannot read gas name {name!r}; write a formula such as 'H2O' or 'H2O(l)'")
    return m.group(1), m.group(2)


def gas_record(name: str) -> GasRecord:
    """The stored record of a library molecule (``"H2O"``, ``"H2O(g)"`` or ``"H2O(l)"``)."""
    formula, _ = _formula_of(name)
    try:
        return GAS_LIBRARY[formula]
    except KeyError:
        raise ThermochemistryError(
            f"no gas molecule {formula!r} in the built-in library; known: {', '.join(available_gases())}. "
            "Build your own with IdealGasMolecule.from_geometry."
        ) from None


def gas_molecule(
    name: str,
    *,
    symmetry_number: int | None = None,
    linear: bool | None = None,
    low_frequency: LowFrequencyTreatment | str | None = None,
) -> IdealGasMolecule:
    """Ideal-gas model of a library molecule, symmetry detected from its geometry unless given.

    Parameters
    ----------
    name : str
        Library formula, optionally with a phase tag (ignored here).
    symmetry_number, linear : optional
        Overrides of the detected values.
    low_frequency : optional
        Treatment of soft modes (default harmonic).
    """
    rec = gas_record(name)
    if symmetry_number is None or linear is None:
        detected = _library_symmetry(rec.formula)
        symmetry_number = detected.symmetry_number if symmetry_number is None else symmetry_number
        linear = detected.linear if linear is None else linear
        if symmetry_number == detected.symmetry_number and linear == detected.linear:
            return _with_symmetry(rec, detected, low_frequency)
    return IdealGasMolecule.from_geometry(
        rec.formula,
        rec.symbols,
        rec.positions_angstrom,
        rec.frequencies_cm,
        "cm^-1",
        spin_multiplicity=rec.spin_multiplicity,
        symmetry_number=symmetry_number,
        linear=linear,
        low_frequency=low_frequency,
    )


@lru_cache(maxsize=None)
def _library_symmetry(formula: str) -> RotationalSymmetry:
    rec = GAS_LIBRARY[formula]
    return detect_rotational_symmetry(rec.symbols, rec.positions_angstrom)


def _with_symmetry(rec: GasRecord, symmetry: RotationalSymmetry, low_frequency) -> IdealGasMolecule:
    model = IdealGasMolecule.from_geometry(
        rec.formula, rec.symbols, rec.positions_angstrom, rec.frequencies_cm, "cm^-1",
        spin_multiplicity=rec.spin_multiplicity, symmetry_number=symmetry.symmetry_number,
        linear=symmetry.linear, low_frequency=low_frequency,
    )
    return replace(model, symmetry=symmetry)


def water_vapour_pressure_bar(temperature) -> float | np.ndarray:
    """Vapour pressure of liquid water from the Antoine equation, bar.

    ``log10(p / bar) = A - B / (T / K + C)`` with A = 4.6543, B = 1435.264, C = -64.848
    (Bridgeman & Aldrich 1964, as listed in the NIST Chemistry WebBook for 255.9-373 K; from
    memory). Gives 0.0318 bar at 298.15 K; the CHE convention rounds up to 0.035 bar. Within
    3 % of IAPWS-95 between 280 and 360 K (4 % at 275 K; tested against ``chemicals``).

    Parameters
    ----------
    temperature : float or array_like
        K, 255.9 to 373 K.
    """
    t = np.asarray(temperature, dtype=float)
    c = _WATER_ANTOINE
    if np.any(~np.isfinite(t)) or np.any(t < c["T_min_K"]) or np.any(t > c["T_max_K"] + 0.05):
        raise ThermochemistryError(
            f"water Antoine equation valid for {c['T_min_K']:g}-{c['T_max_K']:g} K only (liquid water at 1 bar), got {temperature!r}"
        )
    p = 10.0 ** (c["A"] - c["B"] / (t + c["C"]))
    return float(p) if p.ndim == 0 else p


def water_pressure_convention_bar(temperature) -> float:
    """Pressure of water vapour that stands for H2O(l) in the CHE convention, bar.

    0.035 bar at 298.15 K (common practice in CHE work, e.g. Norskov et al., J. Phys. Chem. B 108,
    17886 (2004)), scaled at other temperatures with the ratio of Antoine vapour pressures,
    ``0.035 bar * p_sat(T) / p_sat(298.15 K)`` (:func:`water_vapour_pressure_bar`), so that the
    liquid's temperature dependence (its entropy, via the vapour-pressure curve) enters and the
    value is continuous in T.
    """
    t = float(temperature)
    if abs(t - STANDARD_TEMPERATURE) < 1e-9:
        return DEFAULT_WATER_VAPOUR_PRESSURE_BAR
    return float(DEFAULT_WATER_VAPOUR_PRESSURE_BAR * water_vapour_pressure_bar(t) / water_vapour_pressure_bar(STANDARD_TEMPERATURE))


def reference_corrections(
    keys: Iterable[str],
    temperature: float = STANDARD_TEMPERATURE,
    *,
    pressure_bar: float | Mapping[str, float] = 1.0,
    water_vapour_pressure_bar: float | str | None = "convention",
    symmetry_numbers: Mapping[str, int] | None = None,
):
    """ZPE, CpdT and TS (eV) of reference molecules at a temperature and pressure.

    ``G(ref) = E_DFT(ref) + ZPE + CpdT - TS``; gases at ``pressure_bar``; a liquid (``"(l)"``)
    as its vapour at the vapour pressure (water only, ``water_vapour_pressure_bar``).

    Parameters
    ----------
    keys : iterable of str
        Species keys such as ``"H2(g)"``, ``"H2O(l)"``, ``"CO2(g)"``.
    temperature : float
        K.
    pressure_bar : float or mapping
        Partial pressure of gases in bar (default 1 bar = standard state), or per key.
    water_vapour_pressure_bar : "convention", float or None
        Pressure at which H2O(l) is evaluated, bar. ``"convention"`` (default):
        :func:`water_pressure_convention_bar` (0.035 bar at 298.15 K, following the vapour pressure
        at other T). A number: that pressure (a :class:`~ecatlab.errors.CorrectionWarning` is issued if
        it is used more than 1 K from 298.15 K). ``None``: the Antoine vapour pressure at ``temperature``.
    symmetry_numbers : mapping, optional
        Overrides of detected rotational symmetry numbers, by formula.

    Returns
    -------
    pandas.DataFrame
        Indexed by key; columns ``ZPE``, ``CpdT``, ``TS``, ``G_correction`` (eV), ``pressure_bar``,
        ``temperature_K``, ``S_J_per_mol_K``, ``point_group``, ``symmetry_number``, ``treatment``.
    """
    import pandas as pd

    t = float(temperature)
    if not (math.isfinite(t) and t > 0):
        raise ThermochemistryError(f"temperature must be a positive number of kelvin, got {temperature!r}")
    rows = []
    for key in keys:
        formula, phase = _formula_of(key)
        if phase == "l":
            if formula != "H2O":
                raise ThermochemistryError(
                    f"{key}: only liquid water has a built-in liquid treatment; reference {formula} as a gas "
                    f"('{formula}(g)') or give its free energy directly"
                )
            if water_vapour_pressure_bar is None:
                p = water_vapour_pressure_bar_at(t)
                treatment = f"liquid as vapour at {p:.4g} bar (Antoine, {t:g} K)"
            elif isinstance(water_vapour_pressure_bar, str):
                if water_vapour_pressure_bar != "convention":
                    raise ThermochemistryError(
                        f"water_vapour_pressure_bar must be 'convention', a number of bar or None, got {water_vapour_pressure_bar!r}"
                    )
                p = water_pressure_convention_bar(t)
                treatment = f"liquid as vapour at {p:.4g} bar (CHE convention, {t:g} K)"
            else:
                p = float(water_vapour_pressure_bar)
                if not (math.isfinite(p) and p > 0):
                    raise ThermochemistryError(f"water_vapour_pressure_bar must be a positive number of bar, got {p!r}")
                if abs(t - STANDARD_TEMPERATURE) > 1.0:
                    warnings.warn(
                        f"H2O(l) is referenced through {p:g} bar of vapour, a 298.15 K value, at T = {t:g} K; "
                        "pass water_vapour_pressure_bar=None to use the vapour pressure at this temperature",
                        CorrectionWarning,
                        stacklevel=2,
                    )
                treatment = f"liquid as vapour at {p:g} bar"
        elif phase == "aq":
            raise ThermochemistryError(f"{key}: no built-in treatment for dissolved species; give their free energy directly")
        else:
            p = float(pressure_bar.get(key, 1.0)) if isinstance(pressure_bar, Mapping) else float(pressure_bar)
            treatment = f"ideal gas at {p:g} bar"
        sigma = (symmetry_numbers or {}).get(formula)
        model = gas_molecule(formula, symmetry_number=sigma)
        corr = model.correction(t, p)
        rows.append(
            {
                "key": key,
                "ZPE": corr.zpe,
                "CpdT": corr.heat_integral,
                "TS": corr.ts,
                "G_correction": corr.free_energy_correction,
                "temperature_K": t,
                "pressure_bar": p,
                "S_J_per_mol_K": corr.as_dict()["S_J_per_mol_K"],
                "point_group": model.symmetry.point_group,
                "symmetry_number": model.symmetry.symmetry_number,
                "treatment": treatment,
            }
        )
    return pd.DataFrame(rows).set_index("key").rename_axis(None)


#: Alias used inside :func:`reference_corrections`, whose argument shadows the function name.
water_vapour_pressure_bar_at = water_vapour_pressure_bar
