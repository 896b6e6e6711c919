"""Reference scheme: which molecules energies are measured against, and the free energies of
gas and liquid species relative to them.

Every free energy in ecatlab is *relative to the reference molecules* (default H2(g), H2O(l),
CO2(g), N2(g)) and, for adsorbates, to the clean surface. For a species X with composition
``c`` the reference coefficients ``n`` solve ``A n = c`` (``A``: element counts of the reference
molecules), and

    G_rel(X) = G(X) - sum_i n_i G(ref_i)            [eV]

For molecules, G_rel comes from standard Gibbs energies of formation (298.15 K, 1 bar, aqueous
species at unit molality), tabulated in :data:`FORMATION_GIBBS_KJ_PER_MOL`, so equilibrium
potentials come out right; for instance O2(g) lies 4.92 eV above 2 H2O(l) - 2 H2(g).
For adsorbates, :mod:`ecatlab.energies` applies the same balance to DFT adsorption energies.

The proton-electron pair follows the computational hydrogen electrode; see :mod:`ecatlab.che`.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from functools import lru_cache
from typing import Iterable, Mapping

import numpy as np
import pandas as pd

from ecatlab.constants import KJ_PER_MOL_IN_EV, STANDARD_TEMPERATURE
from ecatlab.errors import ReferenceSchemeError
from ecatlab.notation import Species

__all__ = [
    "ReferenceScheme",
    "FORMATION_GIBBS_KJ_PER_MOL",
    "formation_data",
    "standard_free_energy_shift",
    "compute_reference_corrections",
    "FORMATION_TABLE_SOURCE",
    "DEFAULT_REFERENCES",
    "default_reference_corrections",
]

_FORMATION_FILE = "formation_thermo.json"


@lru_cache(maxsize=None)
def formation_data() -> pd.DataFrame:
    """The shipped formation data (``ecatlab/data/formation_thermo.json``), indexed by species key.

    Columns ``dfG`` and ``dfH`` (kJ/mol, 298.15 K, 1 bar; aqueous solutes at 1 mol/kg), ``S``
    (J/(mol K)) and ``source`` (the citation of each row). The file carries a schema version.
    """
    import json
    from importlib import resources

    raw = json.loads(resources.files("ecatlab").joinpath("data").joinpath(_FORMATION_FILE).read_text(encoding="utf-8"))
    if raw.get("schema") != "ecatlab.formation-data/1":
        raise ReferenceSchemeError(f"{_FORMATION_FILE}: unknown schema {raw.get('schema')!r}; expected 'ecatlab.formation-data/1'")
    frame = pd.DataFrame(raw["rows"]).set_index("species")
    return frame


def __getattr__(name: str):
    # FORMATION_GIBBS_KJ_PER_MOL is read from the data file on first use (kept for compatibility).
    if name == "FORMATION_GIBBS_KJ_PER_MOL":
        return {k: float(v) for k, v in formation_data()["dfG"].items() if not k.endswith("(s)")}
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")


FORMATION_TABLE_SOURCE = (
    "standard Gibbs energies of formation at 298.15 K (NBS tables, Wagman et al. 1982, via the CRC Handbook), "
    "carried to T with the gas library's ideal-gas thermochemistry (aqueous and other condensed species: "
    "tabulated entropy, constant enthalpy and entropy)"
)

DEFAULT_REFERENCES: tuple[str, ...] = ("H2(g)", "H2O(l)", "CO2(g)", "N2(g)")


def default_reference_corrections(temperature: float) -> tuple[pd.DataFrame, str]:
    """ZPE, integral of Cp dT and T*S of the reference molecules at ``temperature``.

    Parameters
    ----------
    temperature : float
        Temperature in K.

    Returns
    -------
    (DataFrame, str)
        Table indexed by species key with columns ``ZPE``, ``CpdT``, ``TS`` in eV (a copy), and a
        sentence saying where the numbers come from.

    Notes
    -----
    Computed from the built-in gas library (ideal gas, rigid rotor, harmonic oscillator, gases at
    1 bar, H2O(l) as its vapour at the CHE convention pressure, see
    :func:`ecatlab.molecules.water_pressure_convention_bar`). At 298.15 K the table shipped in
    ``ecatlab/data/reference_corrections_298K.csv`` is used (a test recomputes it).
    """
    table, source = _default_corrections_cached(round(float(temperature), 9))
    return table.copy(), source


@lru_cache(maxsize=64)
def _default_corrections_cached(temperature: float) -> tuple[pd.DataFrame, str]:
    from ecatlab.molecules import DEFAULT_WATER_VAPOUR_PRESSURE_BAR

    source = (
        f"computed at {temperature:g} K from the built-in gas library (ideal gas, rigid rotor, harmonic "
        f"fundamentals; gases at 1 bar, H2O(l) as vapour at {DEFAULT_WATER_VAPOUR_PRESSURE_BAR:g} bar at 298.15 K, "
        "scaled with the vapour-pressure ratio at other temperatures)"
    )
    if abs(temperature - STANDARD_TEMPERATURE) < 1e-9:
        from importlib import resources

        text = resources.files("ecatlab").joinpath("data").joinpath("reference_corrections_298K.csv").read_text(encoding="utf-8")
        import io

        table = pd.read_csv(io.StringIO(text), comment="#", index_col=0)
        return table[["ZPE", "CpdT", "TS"]].astype(float).rename_axis(None), source
    return compute_reference_corrections(temperature), source


def compute_reference_corrections(temperature: float) -> pd.DataFrame:
    """ZPE, CpdT, TS (eV) of every library gas at 1 bar and of H2O(l), computed at ``temperature`` (K)."""
    from ecatlab.molecules import available_gases, reference_corrections

    keys = [f"{formula}(g)" for formula in available_gases()] + ["H2O(l)"]
    table = reference_corrections(keys, float(temperature))
    return table[["ZPE", "CpdT", "TS"]].astype(float).rename_axis(None)


@lru_cache(maxsize=4096)
def standard_free_energy_shift(key: str, temperature: float) -> float:
    """G°(X, T) - G°(X, 298.15 K) of one species in its standard state, kJ/mol.

    * Gases of the built-in library: ideal-gas statistical thermodynamics at 1 bar
      (:meth:`ecatlab.thermochemistry.IdealGasMolecule.free_energy_correction`).
    * H2O(l): its vapour at the CHE convention pressure, which follows the vapour pressure, so the
      liquid's own entropy and heat capacity enter (phase equilibrium, G_l(T) = G_g(T, p_sat(T))).
    * Other species (aqueous solutes, other liquids, gases outside the library): constant enthalpy
      and entropy, ``-(T - 298.15 K) S°`` with the tabulated S° (the heat-capacity term is neglected;
      about 1 meV per 10 K for typical solutes).
    """
    t = float(temperature)
    if abs(t - STANDARD_TEMPERATURE) < 1e-9:
        return 0.0
    from ecatlab.constants import EV_IN_KJ_PER_MOL
    from ecatlab.molecules import GAS_LIBRARY, gas_molecule, water_pressure_convention_bar

    sp = Species.parse(key)
    formula = key.split("(")[0]
    if sp.phase == "g" and formula in GAS_LIBRARY:
        model = gas_molecule(formula)
        shift = model.free_energy_correction(t, 1.0) - model.free_energy_correction(STANDARD_TEMPERATURE, 1.0)
        return float(shift) * EV_IN_KJ_PER_MOL
    if key == "H2O(l)":
        model = gas_molecule("H2O")
        p_t, p_0 = water_pressure_convention_bar(t), water_pressure_convention_bar(STANDARD_TEMPERATURE)
        shift = model.free_energy_correction(t, p_t) - model.free_energy_correction(STANDARD_TEMPERATURE, p_0)
        return float(shift) * EV_IN_KJ_PER_MOL
    data = formation_data()
    if key not in data.index:
        raise ReferenceSchemeError(f"no standard entropy for {key}: it cannot be carried to {t:g} K; override its free energy")
    return -(t - STANDARD_TEMPERATURE) * float(data.loc[key, "S"]) / 1000.0


class _FrozenMapping(dict):
    """A read-only, hashable dict (for :attr:`ReferenceScheme.overrides`)."""

    def _refuse(self, *args, **kwargs):
        raise TypeError("ReferenceScheme.overrides is read-only; build a new scheme with other overrides")

    __setitem__ = __delitem__ = clear = pop = popitem = setdefault = update = _refuse  # type: ignore[assignment]

    def __hash__(self) -> int:  # type: ignore[override]
        return hash(tuple(sorted(self.items())))

    def __reduce__(self):
        return (_FrozenMapping, (dict(self),))


@dataclass(frozen=True, eq=False)
class ReferenceScheme:
    """The reference molecules and the free energies of molecular species relative to them.

    Immutable and hashable; :func:`dataclasses.replace` keeps every field.

    Parameters
    ----------
    references : tuple of str
        Reference molecules, one per element they introduce (default H2(g), H2O(l), CO2(g), N2(g)).
        Their element-count matrix must have full column rank. Any independent set works: the
        proton-electron pair costs 1/2 G(H2(g)) relative to the set (0 when H2(g) is a reference).
    temperature : float
        Temperature in K of every free energy the scheme gives: molecules (carried from the
        298.15 K formation data to T, see :func:`standard_free_energy_shift`) and the default
        reference corrections.
    overrides : mapping of str to float
        User free energies (eV, relative to the references, at ``temperature``) that replace
        tabulated ones, e.g. a DFT value for O2(g) or CO(g). Stored read-only.
    corrections : DataFrame, optional
        User ZPE/CpdT/TS (eV) of the reference molecules, valid at ``temperature``; ``None`` (default)
        computes them from the gas library at ``temperature`` (:func:`default_reference_corrections`).
        The table in force is :attr:`correction_table`.
    correction_source : str
        Description of user corrections (default: "user-supplied table").
    """

    references: tuple[str, ...] = DEFAULT_REFERENCES
    temperature: float = STANDARD_TEMPERATURE
    overrides: Mapping[str, float] = field(default_factory=dict)
    corrections: pd.DataFrame | None = field(default=None, repr=False)
    correction_source: str = ""

    def __post_init__(self) -> None:
        refs = tuple(Species.parse(r).key for r in self.references)
        for key in refs:
            if not Species.parse(key).is_molecule:
                raise ReferenceSchemeError(f"reference {key!r} must be a molecule with a phase, e.g. 'H2O(l)'")
        object.__setattr__(self, "references", refs)
        from ecatlab.che.conditions import check_temperature

        object.__setattr__(self, "temperature", check_temperature(self.temperature))
        elements = sorted({el for r in refs for el in Species.parse(r).elements})
        matrix = np.array([[Species.parse(r).elements.get(el, 0.0) for r in refs] for el in elements])
        if matrix.shape[0] != matrix.shape[1] or np.linalg.matrix_rank(matrix) < len(refs):
            raise ReferenceSchemeError(
                f"reference molecules {refs} must introduce exactly one new element each "
                f"(elements {elements}); remove redundant references or add one per element"
            )
        object.__setattr__(self, "_elements", tuple(elements))
        object.__setattr__(self, "_inverse", np.linalg.inv(matrix))
        clean = {}
        for key, value in dict(self.overrides).items():
            sp = Species.parse(key)
            if not sp.is_molecule:
                raise ReferenceSchemeError(f"override {key!r}: only molecules (g/l/aq) can be overridden here")
            try:
                value = float(value)
            except (TypeError, ValueError):
                raise ReferenceSchemeError(f"override {key!r}: free energy must be a number of eV, got {value!r}") from None
            if not np.isfinite(value):
                raise ReferenceSchemeError(f"override {key!r}: free energy must be a finite number of eV, got {value!r}")
            clean[sp.key] = value
        object.__setattr__(self, "overrides", _FrozenMapping(clean))
        if self.corrections is not None:
            table = pd.DataFrame(self.corrections).copy()
            missing = [r for r in refs if r not in table.index]
            cols = [c for c in ("ZPE", "CpdT", "TS") if c not in table.columns]
            if missing or cols:
                raise ReferenceSchemeError(
                    f"reference corrections table lacks rows {missing} or columns {cols}; "
                    "give ZPE, CpdT and TS in eV for every reference molecule"
                )
            values = table[["ZPE", "CpdT", "TS"]].apply(pd.to_numeric, errors="coerce")
            if not np.isfinite(values.loc[list(refs)].to_numpy(dtype=float)).all():
                raise ReferenceSchemeError("reference corrections must be finite numbers of eV for every reference molecule")
            object.__setattr__(self, "corrections", table)
        object.__setattr__(self, "_molecule_cache", {})

    # -- identity --------------------------------------------------------------------------------
    def _key(self) -> tuple:
        user = None
        if self.corrections is not None:
            t = self.corrections.loc[list(self.references), ["ZPE", "CpdT", "TS"]].astype(float)
            user = tuple(map(tuple, np.round(t.to_numpy(), 12)))
        return (self.references, self.temperature, tuple(sorted(self.overrides.items())), user, self.correction_source)

    def __eq__(self, other) -> bool:
        if not isinstance(other, ReferenceScheme):
            return NotImplemented
        return self._key() == other._key()

    def __hash__(self) -> int:
        return hash(self._key())

    # -- composition balance --------------------------------------------------------------------
    @property
    def elements(self) -> tuple[str, ...]:
        """Elements covered by the reference molecules."""
        return self._elements  # type: ignore[attr-defined]

    def balance(self, elements: Mapping[str, float]) -> dict[str, float]:
        """Reference-molecule coefficients whose element counts equal ``elements``.

        Examples
        --------
        >>> ReferenceScheme().balance({"O": 2, "H": 1})  # OOH
        {'H2(g)': -1.5, 'H2O(l)': 2.0, 'CO2(g)': 0.0, 'N2(g)': 0.0}
        """
        unknown = [el for el in elements if el not in self.elements and abs(elements[el]) > 0]
        if unknown:
            raise ReferenceSchemeError(
                f"element(s) {', '.join(unknown)} cannot be built from the reference molecules "
                f"{', '.join(self.references)}; add a reference molecule containing them"
            )
        vec = np.array([float(elements.get(el, 0.0)) for el in self.elements])
        coef = self._inverse @ vec  # type: ignore[attr-defined]
        return {r: float(c) + 0.0 for r, c in zip(self.references, np.round(coef, 12))}

    def balance_matrix(self, species: Iterable[Species]) -> np.ndarray:
        """Coefficients for many species at once: array (n_species, n_references)."""
        rows = []
        for sp in species:
            try:
                rows.append(list(self.balance(sp.elements).values()))
            except ReferenceSchemeError as exc:
                raise ReferenceSchemeError(f"species {sp.key}: {exc}") from None
        return np.array(rows, dtype=float).reshape(-1, len(self.references))

    # -- molecular free energies ------------------------------------------------------------------
    def molecule_free_energy(self, species: Species | str) -> float:
        r"""Free energy of a gas, liquid or aqueous species relative to the references, eV, at :attr:`temperature`.

        Notes
        -----
        For a species X with reference coefficients n_i (``balance``):

        .. math::

            G_\mathrm{rel}(X, T) = \frac{1}{N_A}\Big[\Delta_f G^\circ(X) - \sum_i n_i \Delta_f G^\circ(\mathrm{ref}_i)
            + \delta(X, T) - \sum_i n_i\,\delta(\mathrm{ref}_i, T)\Big]

        with the 298.15 K formation data and :math:`\delta = G^\circ(T) - G^\circ(298.15\,\mathrm{K})`
        from :func:`standard_free_energy_shift`. Overrides win; reference molecules are 0.
        """
        sp = Species.parse(species) if isinstance(species, str) else species
        if sp.key in self.references:
            return 0.0
        if sp.key in self.overrides:
            return self.overrides[sp.key]
        cache = self._molecule_cache  # type: ignore[attr-defined]
        if sp.key in cache:
            return cache[sp.key]
        if not sp.is_molecule:
            raise ReferenceSchemeError(f"{sp.key} is not a molecule; adsorbate energies come from the energy table")
        data = formation_data()
        if sp.key not in data.index:
            raise ReferenceSchemeError(
                f"no standard Gibbs energy of formation for {sp.key} in the built-in table; give its free energy "
                "relative to the references with ReferenceScheme(overrides={...}) (eV)"
            )
        coefs = self.balance(sp.elements)
        missing_refs = [r for r in self.references if r not in data.index and abs(coefs[r]) > 0]
        if missing_refs:
            raise ReferenceSchemeError(f"no formation energy for reference(s) {missing_refs} to reference {sp.key}")
        t = self.temperature

        def g_t(key: str) -> float:
            return float(data.loc[key, "dfG"]) + standard_free_energy_shift(key, t)

        g = g_t(sp.key) - sum(c * g_t(r) for r, c in coefs.items() if abs(c) > 0)
        value = float(g * KJ_PER_MOL_IN_EV)
        cache[sp.key] = value
        return value

    def proton_electron_free_energy(self) -> float:
        """G_rel(H+ + e-) at U_RHE = 0 V: 1/2 G_rel(H2(g)) in this scheme, eV (0 when H2(g) is a reference)."""
        return 0.5 * self.molecule_free_energy("H2(g)")

    def known_molecules(self) -> list[str]:
        """Molecules whose free energy the scheme can give."""
        data = formation_data()
        tabulated = [k for k in data.index if not k.endswith("(s)")]
        return sorted(set(tabulated) | set(self.overrides) | set(self.references))

    # -- corrections --------------------------------------------------------------------------------
    @property
    def correction_table(self) -> pd.DataFrame:
        """The ZPE/CpdT/TS table in force (eV; a copy): the user's, or the default at :attr:`temperature`."""
        if self.corrections is not None:
            return self.corrections.copy()
        return default_reference_corrections(self.temperature)[0]

    @property
    def correction_provenance(self) -> str:
        """Where the reference corrections come from (one sentence)."""
        if self.corrections is not None:
            return self.correction_source or f"user-supplied table (for {self.temperature:g} K)"
        return default_reference_corrections(self.temperature)[1]

    def reference_correction(self) -> pd.Series:
        """ZPE + CpdT - TS of each reference molecule (eV), indexed by reference key."""
        t = self.correction_table.loc[list(self.references)]
        return (t["ZPE"] + t["CpdT"] - t["TS"]).astype(float)

    def at_temperature(self, temperature: float) -> "ReferenceScheme":
        """The same scheme at another temperature (K): same references and overrides, default
        reference corrections recomputed.

        Raises
        ------
        ReferenceSchemeError
            When the scheme carries user reference corrections (valid at one temperature) or
            overrides (free energies at one temperature): build a scheme for the new temperature.
        """
        from ecatlab.che.conditions import check_temperature

        t = check_temperature(temperature)
        if abs(t - self.temperature) < 1e-9:
            return self
        if self.corrections is not None:
            raise ReferenceSchemeError(
                f"the reference scheme carries a user-given reference-correction table for {self.temperature:g} K; "
                f"it cannot be used at {t:g} K. Build ReferenceScheme(corrections=...) with corrections for {t:g} K"
            )
        if self.overrides:
            raise ReferenceSchemeError(
                f"the reference scheme overrides {', '.join(sorted(self.overrides))} with free energies for "
                f"{self.temperature:g} K; build ReferenceScheme(temperature={t:g}, overrides=...) with values for {t:g} K"
            )
        return ReferenceScheme(self.references, t)

    def describe(self) -> str:
        """One line naming the scheme, for table captions and figure notes."""
        refs = ", ".join(self.references)
        return (
            f"CHE model; references {refs} at {self.temperature:g} K; molecules from {FORMATION_TABLE_SOURCE}"
            + (f"; overridden: {', '.join(sorted(self.overrides))}" if self.overrides else "")
            + f"; reference corrections: {self.correction_provenance}"
        )

    def to_dict(self) -> dict:
        """Plain-data form with a schema version (round-trips through :meth:`from_dict`)."""
        return {
            "schema": "ecatlab.references/2",
            "references": list(self.references),
            "temperature": self.temperature,
            "overrides": dict(self.overrides),
            "corrections": None if self.corrections is None else self.corrections[["ZPE", "CpdT", "TS"]].to_dict(),
            "correction_source": self.correction_source,
        }

    @classmethod
    def from_dict(cls, data: Mapping) -> "ReferenceScheme":
        schema = data.get("schema")
        if schema not in ("ecatlab.references/1", "ecatlab.references/2"):
            raise ReferenceSchemeError(f"unknown reference-scheme schema {schema!r}; expected 'ecatlab.references/2'")
        corrections = data.get("corrections")
        source = data.get("correction_source", "")
        if schema == "ecatlab.references/1" and str(source).startswith("computed at"):
            corrections, source = None, ""  # version 1 stored the default table; recompute it
        return cls(
            tuple(data["references"]),
            float(data["temperature"]),
            dict(data.get("overrides", {})),
            None if corrections is None else pd.DataFrame(corrections),
            source,
        )
