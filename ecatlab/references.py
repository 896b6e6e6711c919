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
from typing import Iterable, Mapping

import numpy as np
import pandas as pd

from ecatlab.constants import KJ_PER_MOL_IN_EV, STANDARD_TEMPERATURE
from ecatlab.errors import ReferenceSchemeError
from ecatlab.notation import Species

__all__ = [
    "ReferenceScheme",
    "FORMATION_GIBBS_KJ_PER_MOL",
    "FORMATION_TABLE_SOURCE",
    "DEFAULT_REFERENCES",
    "default_reference_corrections",
]

#: Standard Gibbs energies of formation, kJ/mol, at 298.15 K and 1 bar (aqueous: 1 mol/kg).
#: Source: The NBS Tables of Chemical Thermodynamic Properties (Wagman et al., J. Phys. Chem. Ref.
#: Data 11, Suppl. 2, 1982), as reproduced in the CRC Handbook of Chemistry and Physics
#: ("Standard thermodynamic properties of chemical substances"). Values transcribed from memory of
#: those tables; the tests cross-check the gas-phase entries against the `chemicals` package.
FORMATION_GIBBS_KJ_PER_MOL: dict[str, float] = {
    "H2(g)": 0.0,
    "O2(g)": 0.0,
    "N2(g)": 0.0,
    "H2O(l)": -237.129,
    "H2O(g)": -228.572,
    "H2O2(l)": -120.35,
    "H2O2(aq)": -134.03,
    "CO(g)": -137.168,
    "CO2(g)": -394.359,
    "CH4(g)": -50.72,
    "CH3OH(l)": -166.27,
    "CH3OH(g)": -161.96,
    "CH3OH(aq)": -175.31,
    "HCOOH(l)": -361.35,
    "HCOOH(aq)": -372.3,
    "CH2O(g)": -102.53,
    "C2H4(g)": 68.15,
    "C2H6(g)": -32.82,
    "C2H5OH(l)": -174.78,
    "C2H5OH(aq)": -181.64,
    "CH3COOH(l)": -389.9,
    "CH3COOH(aq)": -396.46,
    "NH3(g)": -16.45,
    "NH3(aq)": -26.50,
    "N2H4(l)": 149.34,
    "N2H4(g)": 159.35,
}
FORMATION_TABLE_SOURCE = (
    "standard Gibbs energies of formation at 298.15 K (NBS tables, Wagman et al. 1982, via the CRC Handbook)"
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
        Table indexed by reference species key with columns ``ZPE``, ``CpdT``, ``TS`` in eV, and a
        sentence saying where the numbers come from.
    """
    # Computed from the built-in gas library (ecatlab.molecules / ecatlab.thermochemistry): ideal
    # gas, rigid rotor, harmonic oscillator at `temperature`, gases at 1 bar, H2O(l) as vapour at
    # 0.035 bar (common practice). Rows for every library molecule as gas, so that any choice of
    # reference molecules finds its corrections. Imported lazily to keep `import ecatlab` light.
    from ecatlab.molecules import DEFAULT_WATER_VAPOUR_PRESSURE_BAR, available_gases, reference_corrections

    keys = [f"{formula}(g)" for formula in available_gases()] + ["H2O(l)"]
    table = reference_corrections(keys, float(temperature))
    source = (
        f"computed at {float(temperature):g} K from the built-in gas library (ideal gas, rigid rotor, harmonic "
        f"fundamentals; gases at 1 bar, H2O(l) as vapour at {DEFAULT_WATER_VAPOUR_PRESSURE_BAR:g} bar)"
    )
    return table[["ZPE", "CpdT", "TS"]].astype(float).rename_axis(None), source


@dataclass(frozen=True)
class ReferenceScheme:
    """The reference molecules and the free energies of molecular species relative to them.

    Parameters
    ----------
    references : tuple of str
        Reference molecules, one per element they introduce (default H2(g), H2O(l), CO2(g), N2(g)).
        Their element-count matrix must have full column rank.
    temperature : float
        Temperature in K at which corrections apply (formation energies are tabulated at 298.15 K).
    overrides : mapping of str to float
        User free energies (eV, relative to the references) that replace tabulated ones, e.g. a DFT
        value for O2(g) or CO(g).
    corrections : DataFrame, optional
        ZPE/CpdT/TS (eV) of the reference molecules; default from
        :func:`default_reference_corrections` at ``temperature``.
    """

    references: tuple[str, ...] = DEFAULT_REFERENCES
    temperature: float = STANDARD_TEMPERATURE
    overrides: Mapping[str, float] = field(default_factory=dict)
    corrections: pd.DataFrame | None = field(default=None, compare=False, repr=False)
    correction_source: str = ""

    def __post_init__(self) -> None:
        refs = tuple(Species.parse(r).key for r in self.references)
        for key in refs:
            if not Species.parse(key).is_molecule:
                raise ReferenceSchemeError(f"reference {key!r} must be a molecule with a phase, e.g. 'H2O(l)'")
        object.__setattr__(self, "references", refs)
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
            if not np.isfinite(value):
                raise ReferenceSchemeError(f"override {key!r}: free energy must be a finite number of eV, got {value!r}")
            clean[sp.key] = float(value)
        object.__setattr__(self, "overrides", clean)
        if self.corrections is None:
            table, source = default_reference_corrections(self.temperature)
            object.__setattr__(self, "corrections", table)
            if not self.correction_source:
                object.__setattr__(self, "correction_source", source)
        else:
            table = pd.DataFrame(self.corrections).copy()
            missing = [r for r in refs if r not in table.index]
            cols = [c for c in ("ZPE", "CpdT", "TS") if c not in table.columns]
            if missing or cols:
                raise ReferenceSchemeError(
                    f"reference corrections table lacks rows {missing} or columns {cols}; "
                    "give ZPE, CpdT and TS in eV for every reference molecule"
                )
            object.__setattr__(self, "corrections", table)
            if not self.correction_source:
                object.__setattr__(self, "correction_source", "user-supplied table")

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
        """Free energy of a gas, liquid or aqueous species relative to the references, eV.

        ``G_rel = [Delta_f G(X) - sum_i n_i Delta_f G(ref_i)] / (N_A e)`` from the formation table
        (298.15 K), unless overridden. The reference molecules themselves are 0 by definition.
        """
        sp = Species.parse(species) if isinstance(species, str) else species
        if sp.key in self.references:
            return 0.0
        if sp.key in self.overrides:
            return self.overrides[sp.key]
        if not sp.is_molecule:
            raise ReferenceSchemeError(f"{sp.key} is not a molecule; adsorbate energies come from the energy table")
        if sp.key not in FORMATION_GIBBS_KJ_PER_MOL:
            raise ReferenceSchemeError(
                f"no standard Gibbs energy of formation for {sp.key} in the built-in table; give its free energy "
                "relative to the references with ReferenceScheme(overrides={...}) (eV)"
            )
        coefs = self.balance(sp.elements)
        missing_refs = [r for r in self.references if r not in FORMATION_GIBBS_KJ_PER_MOL and abs(coefs[r]) > 0]
        if missing_refs:
            raise ReferenceSchemeError(f"no formation energy for reference(s) {missing_refs} to reference {sp.key}")
        g = FORMATION_GIBBS_KJ_PER_MOL[sp.key] - sum(
            c * FORMATION_GIBBS_KJ_PER_MOL[r] for r, c in coefs.items() if abs(c) > 0
        )
        return float(g * KJ_PER_MOL_IN_EV)

    def known_molecules(self) -> list[str]:
        """Molecules whose free energy the scheme can give."""
        return sorted(set(FORMATION_GIBBS_KJ_PER_MOL) | set(self.overrides) | set(self.references))

    # -- corrections --------------------------------------------------------------------------------
    def reference_correction(self) -> pd.Series:
        """ZPE + CpdT - TS of each reference molecule (eV), indexed by reference key."""
        t = self.corrections.loc[list(self.references)]
        return (t["ZPE"] + t["CpdT"] - t["TS"]).astype(float)

    def at_temperature(self, temperature: float) -> "ReferenceScheme":
        """The same scheme at another temperature (K): same references and overrides, default
        reference corrections recomputed. A user-given correction table is valid at one temperature
        only and is refused (give one for the new temperature)."""
        t = float(temperature)
        if abs(t - self.temperature) < 1e-9:
            return self
        if self.correction_source == "user-supplied table" or getattr(self, "_user_corrections", False):
            raise ReferenceSchemeError(
                f"the reference scheme carries a user-given reference-correction table for {self.temperature:g} K; "
                f"it cannot be used at {t:g} K. Build ReferenceScheme(corrections=...) with corrections for {t:g} K"
            )
        return ReferenceScheme(self.references, t, dict(self.overrides))

    def describe(self) -> str:
        """One line naming the scheme, for table captions and figure notes."""
        refs = ", ".join(self.references)
        return (
            f"CHE model; references {refs}; molecules from {FORMATION_TABLE_SOURCE}"
            + (f"; overridden: {', '.join(sorted(self.overrides))}" if self.overrides else "")
            + f"; reference corrections: {self.correction_source}"
        )

    def to_dict(self) -> dict:
        """Plain-data form with a schema version."""
        return {
            "schema": "ecatlab.references/1",
            "references": list(self.references),
            "temperature": self.temperature,
            "overrides": dict(self.overrides),
            "corrections": self.corrections.to_dict(),
            "correction_source": self.correction_source,
        }

    @classmethod
    def from_dict(cls, data: Mapping) -> "ReferenceScheme":
        if data.get("schema") != "ecatlab.references/1":
            raise ReferenceSchemeError(f"unknown reference-scheme schema {data.get('schema')!r}")
        return cls(
            tuple(data["references"]),
            float(data["temperature"]),
            dict(data.get("overrides", {})),
            pd.DataFrame(data["corrections"]),
            data.get("correction_source", ""),
        )
