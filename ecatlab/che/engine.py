r"""The computational hydrogen electrode (CHE) engine.

This module holds the CHE equations of ecatlab. Everything is pure numpy, vectorised over
surfaces (and over potentials/pH where arrays are given).

Free energies of the charge carriers
------------------------------------
Relative to the reference molecules (H2(g) is one of them) and the standard hydrogen electrode,
with the applied potential U in V and k_B T ln(10) per pH unit:

.. math::

    G(e^-)   &= -e\,U_\mathrm{SHE} \\
    G(H^+)   &= \tfrac12 G(H_2) - k_B T \ln(10)\,\mathrm{pH} \\
    G(OH^-)  &= G(H_2O(l)) - G(H^+) \quad\text{(water autoprotolysis equilibrium)} \\
    U_\mathrm{SHE} &= U_\mathrm{RHE} - (k_B T \ln 10 / e)\,\mathrm{pH}

so a coupled proton-electron pair costs :math:`\tfrac12 G(H_2) - eU_\mathrm{RHE}`
(Nørskov et al., J. Phys. Chem. B 108, 17886 (2004)).

Step free energies
------------------
For step *i* with ``n_i`` electrons consumed (negative for oxidation) and ``p_i`` protons consumed
minus hydroxide ions consumed:

.. math::

    \Delta G_i(U, \mathrm{pH}) = \Delta G_i^{0} + p_i\,k_B T\ln(10)\,\mathrm{pH} + n_i\,e\,U_\mathrm{SHE}

where :math:`\Delta G_i^{0}` is the sum of the species free energies (adsorbates from the energy
table, molecules from the reference scheme). On the RHE scale this is
:math:`\Delta G_i^{0} + (p_i - n_i) k_B T \ln(10)\,\mathrm{pH} + n_i e U_\mathrm{RHE}`: a coupled
step (``p_i = n_i``) has no pH dependence, a step with e- but no H+, or H+ without e-, has.

Limiting potential, overpotential, potential-determining step
-------------------------------------------------------------
Write :math:`\Delta G_i(U) = a_i + n_i U` on the chosen scale. Every electrochemical step is
downhill when :math:`U \le -a_i/n_i` for all reduction steps (:math:`n_i>0`), so

.. math::

    U_L^\mathrm{red} = \min_i (-a_i/n_i), \qquad U_L^\mathrm{ox} = \max_i (-a_i/n_i)

and the potential-determining step is the arg-min (arg-max). With one electron per step this is
:math:`U_L = -\max_i \Delta G_i(0)/e`. The equilibrium potential is
:math:`U_\mathrm{eq} = -\sum_i a_i / \sum_i n_i` and the theoretical overpotential is
:math:`\eta = U_\mathrm{eq} - U_L` (reduction) or :math:`U_L - U_\mathrm{eq}` (oxidation), in V.
Chemical steps (no electron) cannot be moved by the potential; when uphill they are reported
separately as potential-independent barriers.
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass
from typing import Iterable, Sequence

import numpy as np
import pandas as pd

from ecatlab.che import kernel
from ecatlab.che.conditions import SCALES, check_pH, check_scale, check_temperature
from ecatlab.constants import STANDARD_TEMPERATURE, thermal_voltage_per_pH
from ecatlab.energies import EnergyTable, as_energy_table
from ecatlab.errors import ConditionError, ConditionsWarning, MissingDataWarning, MissingSpeciesError, PathwayError
from ecatlab.notation import ELECTRON, HYDROXIDE, PROTON, Pathway, Species, Step
from ecatlab.pathways import resolve
from ecatlab.references import ReferenceScheme

__all__ = [
    "CompiledPathway",
    "compile_pathway",
    "compile_steps",
    "step_free_energies",
    "state_free_energies",
    "limiting_potentials",
    "equilibrium_potential",
    "nernst_shift",
    "LIMITING_POTENTIAL_COLUMNS",
    "SCALES",
]

#: Column documentation of :func:`limiting_potentials` (units in brackets).
LIMITING_POTENTIAL_COLUMNS: dict[str, str] = {
    "surface": "surface name",
    "pathway": "pathway key",
    "reaction": "overall reaction (net equation)",
    "direction": "reduction or oxidation",
    "electrons": "electrons transferred per overall reaction [-]",
    "limiting_potential": "U_L: least extreme potential at which every electrochemical step is downhill [V vs scale]",
    "equilibrium_potential": "U_eq of the overall reaction at the stated pH and T [V vs scale]",
    "overpotential": (
        "theoretical overpotential from the electrochemical steps: U_eq - U_L (reduction) or U_L - U_eq (oxidation) [V]; "
        "negative only when an uphill chemical step (see uphill_chemical_steps) carries the thermodynamic obstacle"
    ),
    "determining_step": "potential-determining step (equation)",
    "determining_step_index": "1-based index of the potential-determining step [-]",
    "G_max": (
        "largest step free energy at the equilibrium potential over all steps, electrochemical and chemical "
        "(G_max at zero overpotential, Exner, ACS Catal. 10, 12607 (2020)); equals e*overpotential for one-electron "
        "steps without an uphill chemical step; the ranking key, lower is better [eV]"
    ),
    "G_max_step": "the step that carries G_max (equation)",
    "blocked": "True when a chemical step is uphill (max_chemical_dG > 0): the pathway is blocked at every potential",
    "max_chemical_dG": "largest free energy of a chemical (potential-independent) step; NaN if the pathway has none [eV]",
    "uphill_chemical_steps": "chemical steps with dG > 0 (potential-independent barriers); empty if none",
    "missing_species": "adsorbates the surface lacks for this pathway; empty if complete (then the numbers are NaN)",
    "scale": "potential scale of limiting_potential and equilibrium_potential (RHE or SHE)",
    "pH": "pH [-]",
    "temperature": "temperature [K]",
}
# Text columns are pandas Categoricals (fast for hundreds of thousands of rows; compare with == as usual).


def nernst_shift(pH, temperature: float = STANDARD_TEMPERATURE):
    """k_B T ln(10) pH: the free-energy shift of one proton (eV) or of U_SHE vs U_RHE (V).

    Parameters
    ----------
    pH : float or array_like
    temperature : float
        Temperature in K.

    Returns
    -------
    float or ndarray in eV (numerically V per elementary charge).
    """
    return thermal_voltage_per_pH(temperature) * np.asarray(pH, dtype=float)


def _check_conditions(scale: str, pH, temperature: float) -> str:
    """Validate the condition triplet with :mod:`ecatlab.che.conditions`; returns the canonical scale."""
    sc = check_scale(scale)
    check_temperature(temperature)
    check_pH(pH)
    return sc


@dataclass(frozen=True)
class CompiledPathway:
    """A pathway turned into arrays for the engine.

    Attributes
    ----------
    pathway : Pathway
    adsorbates : tuple of str
        Adsorbate keys (columns of ``adsorbate_stoichiometry``).
    adsorbate_stoichiometry : ndarray (n_steps, n_adsorbates)
        Net coefficients (products positive).
    molecule_dG : ndarray (n_steps,)
        Sum over molecules (and the water part of OH-) of coefficient times G_rel, eV.
    electrons : ndarray (n_steps,)
        Electrons consumed per step (negative: released).
    proton_coefficient : ndarray (n_steps,)
        Protons consumed minus hydroxide ions consumed per step.
    """

    pathway: Pathway
    adsorbates: tuple[str, ...]
    adsorbate_stoichiometry: np.ndarray
    molecule_dG: np.ndarray
    electrons: np.ndarray
    proton_coefficient: np.ndarray

    @property
    def electrochemical(self) -> np.ndarray:
        return np.abs(self.electrons) > 1e-12

    def dG_zero(self, adsorbate_G: np.ndarray) -> np.ndarray:
        """Step free energies at U_SHE = 0 and pH = 0, eV; ``adsorbate_G`` is (..., n_adsorbates)."""
        out = np.matmul(adsorbate_G, np.ascontiguousarray(self.adsorbate_stoichiometry.T))
        out += self.molecule_dG
        return out

    def affine(self, adsorbate_G: np.ndarray, pH=0.0, scale: str = "RHE", temperature: float = STANDARD_TEMPERATURE):
        """Coefficients (a, n) with dG_i(U) = a_i + n_i U on the given scale; a in eV, n in e."""
        shift = nernst_shift(pH, temperature)
        shift = np.asarray(shift)[..., None] if np.ndim(shift) else shift
        a = self.dG_zero(adsorbate_G) + self.proton_coefficient * shift
        if scale == "RHE":
            a = a - self.electrons * shift
        return a, self.electrons


def compile_pathway(pathway: Pathway, scheme: ReferenceScheme) -> CompiledPathway:
    """Turn a pathway into the arrays of :class:`CompiledPathway` using ``scheme`` for molecules."""
    return _compile(pathway.steps, tuple(a.key for a in pathway.adsorbates), scheme, pathway)


def compile_steps(steps: Sequence[Step], adsorbates: Sequence[str], scheme: ReferenceScheme) -> CompiledPathway:
    """Arrays for any list of steps (not necessarily a closed pathway), e.g. the edges of a network.

    ``adsorbates`` fixes the column order of the stoichiometry; every adsorbate of the steps must be in it.
    The returned object's ``pathway`` is None.
    """
    return _compile(tuple(steps), tuple(adsorbates), scheme, None)


def _compile(steps: Sequence[Step], adsorbates: tuple[str, ...], scheme: ReferenceScheme, pathway) -> CompiledPathway:
    index = {k: j for j, k in enumerate(adsorbates)}
    n = len(steps)
    stoich = np.zeros((n, len(adsorbates)))
    mol = np.zeros(n)
    electrons = np.zeros(n)
    protons = np.zeros(n)
    water = None  # G_rel(H2O(l)), needed only for OH- (looked up once, when a step has it)
    # G_rel(H+) at pH 0 is 1/2 G_rel(H2(g)) of the scheme (0 when H2(g) is a reference); the pH and
    # potential terms are added in CompiledPathway.affine.
    half_h2 = scheme.proton_electron_free_energy()
    for i, step in enumerate(steps):
        for sp, c in step.net().items():
            if sp.is_adsorbate:
                stoich[i, index[sp.key]] += c
            elif sp.is_molecule:
                mol[i] += c * scheme.molecule_free_energy(sp)
            elif sp == ELECTRON:
                electrons[i] -= c
            elif sp == PROTON:
                protons[i] -= c
                mol[i] += c * half_h2
            elif sp == HYDROXIDE:
                if water is None:
                    water = scheme.molecule_free_energy("H2O(l)")
                protons[i] += c
                mol[i] += c * (water - half_h2)
    return CompiledPathway(pathway, adsorbates, stoich, mol, electrons, protons)


def _adsorbate_values(table: EnergyTable, compiled: CompiledPathway, surfaces: Sequence[str]):
    values = table.values(surfaces, compiled.adsorbates)
    missing_mask = ~np.isfinite(values)
    missing = {}
    if missing_mask.any():
        for r in np.flatnonzero(missing_mask.any(axis=1)):
            missing[surfaces[r]] = [compiled.adsorbates[j] for j in np.flatnonzero(missing_mask[r])]
    return values, missing


def _as_table(energies, temperature: float) -> EnergyTable:
    """The energy table at the analysis temperature (read at T, or re-evaluated; see as_energy_table)."""
    return as_energy_table(energies, temperature)


def _select_surfaces(table: EnergyTable, surfaces) -> list[str]:
    if surfaces is None:
        return table._surface_list  # the cached list itself: lets table.values() skip the lookup
    wanted = [surfaces] if isinstance(surfaces, str) else list(surfaces)
    known = set(table.surfaces)
    unknown = [s for s in wanted if s not in known]
    if unknown:
        from ecatlab.errors import EnergyTableError

        raise EnergyTableError(table.source, f"unknown surface(s) {unknown}; known: {table.surfaces}")
    return wanted


def step_free_energies(
    energies,
    pathway,
    potential=0.0,
    pH=0.0,
    scale: str = "RHE",
    temperature: float = STANDARD_TEMPERATURE,
    surfaces: Iterable[str] | None = None,
    on_missing: str = "raise",
) -> pd.DataFrame:
    """Free energy of every step of a pathway on every surface.

    Parameters
    ----------
    energies : EnergyTable, DataFrame or path
        Adsorption free energies (see :func:`ecatlab.read_energies`).
    pathway : str or Pathway
        Built-in key (``"orr-4e"``), a :class:`Pathway`, or step text.
    potential : float or array_like
        Applied potential U in V on ``scale``; an array must have one value per surface.
    pH : float or array_like
        pH (same broadcasting as ``potential``).
    scale : {"RHE", "SHE"}
        Scale of ``potential``.
    temperature : float
        Temperature in K (enters k_B T ln(10) pH).
    surfaces : list of str, optional
        Subset and order of surfaces (default: all, in table order).
    on_missing : {"raise", "drop"}
        Surfaces lacking an adsorbate: raise :class:`MissingSpeciesError` naming them (default) or
        leave them out with a :class:`MissingDataWarning` naming them.

    Returns
    -------
    DataFrame
        Index: surface; columns: step names (``"1: O2(g) → OOH*"``); values: dG_i(U) in eV.
        ``.attrs`` holds the conditions, the pathway steps and the reference scheme.
    """
    sc = _check_conditions(scale, pH, temperature)
    table = _as_table(energies, temperature)
    path = resolve(pathway)
    compiled = compile_pathway(path, table.scheme)
    names = _select_surfaces(table, surfaces)
    values, missing = _adsorbate_values(table, compiled, names)
    keep = _handle_missing(path, missing, names, on_missing, allow=("raise", "drop"))
    names = [s for s, k in zip(names, keep) if k]
    values = values[keep]
    a, n = compiled.affine(values, _per_surface(pH, keep), sc, temperature)
    dG = kernel.step_free_energy(a, n, _per_surface(potential, keep))
    frame = pd.DataFrame(dG, index=pd.Index(names, name="surface"), columns=list(path.step_names))
    frame.attrs.update(_attrs(path, table, potential, pH, sc, temperature, "step free energy dG_i [eV]"))
    return frame


def state_free_energies(
    energies,
    pathway,
    potential=0.0,
    pH=0.0,
    scale: str = "RHE",
    temperature: float = STANDARD_TEMPERATURE,
    surfaces: Iterable[str] | None = None,
) -> pd.DataFrame:
    """Cumulative free energy of every state of a pathway (first state = 0 eV), eV.

    Same parameters as :func:`step_free_energies`; columns are the pathway's state labels
    (``len(steps) + 1`` of them, made unique with a numeric prefix).
    """
    steps = step_free_energies(energies, pathway, potential, pH, scale, temperature, surfaces)
    path = resolve(pathway)
    cumulative = np.concatenate([np.zeros((len(steps), 1)), np.cumsum(steps.to_numpy(), axis=1)], axis=1)
    cols = [f"{i}: {lab}" for i, lab in enumerate(path.labels)]
    frame = pd.DataFrame(cumulative, index=steps.index, columns=cols)
    frame.attrs.update(steps.attrs)
    frame.attrs["quantity"] = "cumulative free energy of each state [eV]"
    return frame


def _per_surface(value, keep: np.ndarray):
    arr = np.asarray(value, dtype=float)
    if arr.ndim == 0:
        return float(arr)
    if arr.shape[0] != keep.shape[0]:
        raise ConditionError(f"got {arr.shape[0]} values for {keep.shape[0]} surfaces; give one value per surface or a scalar")
    return arr[keep]


def _handle_missing(path: Pathway, missing: dict, names: list[str], on_missing: str, allow) -> np.ndarray:
    if on_missing not in allow:
        raise ValueError(f"on_missing must be one of {allow}, got {on_missing!r}")
    keep = np.ones(len(names), dtype=bool)
    if missing:
        keep = np.array([s not in missing for s in names], dtype=bool)
        if on_missing == "raise":
            raise MissingSpeciesError(path.name, missing)
        text = "; ".join(f"{s}: {', '.join(v)}" for s, v in missing.items())
        action = "left out" if on_missing == "drop" else "reported with NaN values and a missing_species entry"
        warnings.warn(f"pathway {path.name!r}: surfaces lacking adsorbates are {action}: {text}", MissingDataWarning, stacklevel=3)
    return keep


def _attrs(path: Pathway, table: EnergyTable, potential, pH, scale, temperature, quantity) -> dict:
    return {
        "quantity": quantity,
        "pathway": path.name,
        "steps": [s.equation for s in path.steps],
        "potential": potential if np.ndim(potential) == 0 else list(np.asarray(potential, dtype=float)),
        "scale": scale,
        "pH": pH if np.ndim(pH) == 0 else list(np.asarray(pH, dtype=float)),
        "temperature": float(temperature),
        "references": table.scheme.describe(),
        "energy_source": table.source,
    }


def limiting_potentials(
    energies,
    pathways,
    pH=0.0,
    scale: str = "RHE",
    temperature: float = STANDARD_TEMPERATURE,
    surfaces: Iterable[str] | None = None,
    on_missing: str = "report",
) -> pd.DataFrame:
    """Limiting potential, overpotential and potential-determining step per surface and pathway.

    Parameters
    ----------
    energies : EnergyTable, DataFrame or path
        Adsorption free energies (eV).
    pathways : str, Pathway or list of them
        Built-in keys, Pathway objects or step text.
    pH : float
        pH of the electrolyte.
    scale : {"RHE", "SHE"}
        Scale of the returned potentials (V).
    temperature : float
        Temperature in K.
    surfaces : list of str, optional
        Subset and order of surfaces.
    on_missing : {"report", "raise", "drop"}
        Surfaces lacking an adsorbate a pathway needs: keep them with NaN values and the missing
        species named in ``missing_species`` plus a :class:`MissingDataWarning` (default), raise
        :class:`MissingSpeciesError`, or leave them out with a warning.

    Returns
    -------
    DataFrame
        One row per (pathway, surface); columns documented in :data:`LIMITING_POTENTIAL_COLUMNS`
        (potentials in V on ``scale``, energies in eV). ``.attrs`` holds conditions and units.

    Notes
    -----
    Reduction: U_L = min_i(-a_i/n_i) over electrochemical steps, eta = U_eq - U_L.
    Oxidation: U_L = max_i(-a_i/n_i), eta = U_L - U_eq. See the module docstring.
    """
    sc = _check_conditions(scale, pH, temperature)
    if np.ndim(pH) != 0:
        raise ConditionError("limiting_potentials takes one pH value; loop over pH or use the engine arrays")
    table = _as_table(energies, temperature)
    if isinstance(pathways, (str, Pathway)):
        pathways = [pathways]
    names = _select_surfaces(table, surfaces)
    n_s = len(names)
    surface_array = np.asarray(names, dtype=object)
    columns: dict[str, list] = {c: [] for c in LIMITING_POTENTIAL_COLUMNS}
    for p in pathways:
        path = resolve(p)
        compiled = compile_pathway(path, table.scheme)
        values, missing = _adsorbate_values(table, compiled, names)
        keep = _handle_missing(path, missing, names, on_missing, allow=("report", "raise", "drop"))
        a, n = compiled.affine(values, pH, sc, temperature)
        u_l, idx = kernel.envelope(a, n, path.direction)
        u_eq_value = equilibrium_potential(path, sc, pH, temperature, table.scheme)
        u_eq = np.full(n_s, u_eq_value)
        eta = kernel.signed_overpotential(u_l, u_eq, path.direction)
        g_max, g_idx = kernel.gmax(a, n, u_eq_value)
        max_chem, _ = kernel.chemical_obstacle(a, n)
        blocked = kernel.is_blocked(max_chem)
        chem = ~compiled.electrochemical
        equations = np.array([s.equation for s in path.steps], dtype=object)
        uphill = _uphill_text(a[:, chem], equations[chem]) if chem.any() else np.full(n_s, "", dtype=object)
        determining = equations[idx]
        g_step = equations[g_idx]
        index = idx + 1
        bad = ~keep
        if bad.any():
            u_l, eta, max_chem, g_max = (np.where(bad, np.nan, x) for x in (u_l, eta, max_chem, g_max))
            determining = np.where(bad, "", determining)
            g_step = np.where(bad, "", g_step)
            uphill = np.where(bad, "", uphill)
            index = np.where(bad, 0, index)
            blocked = np.where(bad, False, blocked)
        rows = keep if on_missing == "drop" else slice(None)
        m = int(keep.sum()) if on_missing == "drop" else n_s
        const = lambda value: _Constant(value, m)  # noqa: E731
        columns["surface"].append(np.arange(n_s)[rows])
        columns["pathway"].append(const(path.name))
        columns["reaction"].append(const(path.overall_step().equation))
        columns["direction"].append(const(path.direction))
        columns["electrons"].append(np.full(m, abs(path.total_electrons)))
        columns["limiting_potential"].append(u_l[rows])
        columns["equilibrium_potential"].append(u_eq[rows])
        columns["overpotential"].append(eta[rows])
        columns["determining_step"].append(np.asarray(determining, dtype=object)[rows])
        columns["determining_step_index"].append(np.asarray(index)[rows])
        columns["G_max"].append(g_max[rows])
        columns["G_max_step"].append(np.asarray(g_step, dtype=object)[rows])
        columns["blocked"].append(np.asarray(blocked, dtype=bool)[rows])
        columns["max_chemical_dG"].append(max_chem[rows])
        columns["uphill_chemical_steps"].append(np.asarray(uphill, dtype=object)[rows])
        columns["missing_species"].append(_missing_text(names, missing)[rows])
        columns["scale"].append(const(sc))
        columns["pH"].append(np.full(m, float(pH)))
        columns["temperature"].append(np.full(m, float(temperature)))
    surface_codes = np.concatenate(columns.pop("surface"))
    if len(set(names)) == len(names):
        data = {"surface": pd.Categorical.from_codes(surface_codes, list(names))}
    else:  # the caller repeated a surface name: keep plain text
        data = {"surface": pd.Series(surface_array[surface_codes], dtype=object)}
    for col, parts in columns.items():
        if parts and (isinstance(parts[0], _Constant) or parts[0].dtype == object):
            data[col] = _categorical(parts)
        else:
            data[col] = np.concatenate(parts) if parts else np.array([], dtype=float)
    result = pd.DataFrame(data)
    result.attrs.update(
        {
            "quantity": "limiting potentials",
            "units": {"limiting_potential": f"V vs {sc}", "equilibrium_potential": f"V vs {sc}", "overpotential": "V", "G_max": "eV", "max_chemical_dG": "eV"},
            "columns": LIMITING_POTENTIAL_COLUMNS,
            "scale": sc,
            "pH": float(pH),
            "temperature": float(temperature),
            "references": table.scheme.describe(),
            "energy_source": table.source,
            "notes": list(table.notes),
        }
    )
    return result


@dataclass(frozen=True)
class _Constant:
    """A text column part holding one value ``size`` times (stored without materialising it)."""

    value: str
    size: int


def _categorical(parts: list[np.ndarray]) -> pd.Categorical:
    """Concatenate object arrays of text into one Categorical, factorising each (small) part once."""
    categories: dict[str, int] = {}
    codes = []
    for part in parts:
        if isinstance(part, _Constant):
            code = categories.setdefault(part.value, len(categories))
            codes.append(np.full(part.size, code, dtype=np.int64))
            continue
        local_codes, uniques = pd.factorize(part)
        remap = np.array([categories.setdefault(u, len(categories)) for u in uniques], dtype=np.int64)
        codes.append(remap[local_codes] if len(remap) else local_codes.astype(np.int64))
    return pd.Categorical.from_codes(np.concatenate(codes) if codes else np.array([], dtype=np.int64), list(categories))


def _missing_text(names: list[str], missing: dict) -> np.ndarray:
    out = np.full(len(names), "", dtype=object)
    if missing:
        out[:] = [", ".join(missing.get(s, [])) for s in names]
    return out


def _uphill_text(chem_a: np.ndarray, equations: np.ndarray) -> np.ndarray:
    """'step (+0.12 eV); ...' for the uphill chemical steps of each row, vectorised over rows."""
    out = np.full(chem_a.shape[0], "", dtype=object)
    for j, eq in enumerate(equations):
        col = chem_a[:, j]
        up = np.isfinite(col) & (col > 0)
        if not up.any():
            continue
        text = pd.Series(col[up]).map("{:+.2f}".format).to_numpy(dtype=object)
        piece = eq + " (" + text + " eV)"
        joined = np.where(out[up] == "", piece, out[up] + "; " + piece)
        out[up] = joined
    return out


def equilibrium_potential(
    pathway_or_reaction,
    scale: str = "RHE",
    pH: float = 0.0,
    temperature: float = STANDARD_TEMPERATURE,
    references: ReferenceScheme | None = None,
) -> float:
    """Equilibrium potential of a pathway's overall reaction, or of a reaction, in V.

    Parameters
    ----------
    pathway_or_reaction : str, Step or Pathway
        Built-in key, Pathway, Step, or a reaction text such as ``"O2(g) + 4 H+ + 4 e- -> 2 H2O(l)"``.
        Adsorbates must cancel out over the reaction.
    scale : {"RHE", "SHE"}
    pH : float
    temperature : float
        K; molecules' free energies are evaluated at this temperature (see
        :meth:`ecatlab.references.ReferenceScheme.molecule_free_energy`).
    references : ReferenceScheme, optional
        Default: H2(g), H2O(l), CO2(g), N2(g) at ``temperature``; a scheme at another temperature is
        carried to ``temperature`` (:meth:`~ecatlab.references.ReferenceScheme.at_temperature`).

    Returns
    -------
    float
        U_eq = -(dG_0 + p k_B T ln(10) pH) / n  (SHE) in V, shifted by k_B T ln(10) pH / e for RHE.

    Examples
    --------
    >>> round(equilibrium_potential("orr-4e"), 3)
    1.229
    """
    sc = _check_conditions(scale, pH, temperature)
    scheme = ReferenceScheme(temperature=temperature) if references is None else references.at_temperature(temperature)
    if isinstance(pathway_or_reaction, Step):
        step = pathway_or_reaction
    elif isinstance(pathway_or_reaction, str) and "->" in pathway_or_reaction and "\n" not in pathway_or_reaction.strip():
        step = Step.parse(pathway_or_reaction)
    else:
        step = resolve(pathway_or_reaction).overall_step()
    net = step.net()
    left = [sp.key for sp in net if sp.is_adsorbate]
    if left:
        raise PathwayError(f"reaction {step.equation!r} leaves adsorbates {left}; an equilibrium potential needs molecules only")
    compiled = _compile((step,), (), scheme, None)
    if not compiled.electrochemical.any():
        raise PathwayError(f"reaction {step.equation!r} transfers no electrons; it has no equilibrium potential")
    a, n = compiled.affine(np.zeros((1, 0)), pH, sc, temperature)
    return float(kernel.equilibrium_potential_from_affine(a, n)[0]) + 0.0
