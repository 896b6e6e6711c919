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

from ecatlab._gc import collector_paused
from ecatlab.che import kernel
from ecatlab.che.conditions import SCALES, check_pH, check_potential, check_scale, check_temperature
from ecatlab.constants import STANDARD_TEMPERATURE, thermal_voltage_per_pH
from ecatlab.energies import EnergyTable, as_energy_table
from ecatlab.errors import ConditionError, ConditionsWarning, MissingDataWarning, MissingSpeciesError, PathwayError
from ecatlab.notation import _BALANCE_TOLERANCE, ELECTRON, HYDROXIDE, PROTON, Pathway, Species, Step
from ecatlab.pathways import resolve
from ecatlab.references import ReferenceScheme

__all__ = [
    "CompiledPathway",
    "compile_pathway",
    "compile_steps",
    "step_free_energies",
    "state_free_energies",
    "limiting_potentials",
    "limiting_potential_arrays",
    "LimitingPotentialArrays",
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
        """Step free energies at U_SHE = 0 and pH = 0, eV; ``adsorbate_G`` is (..., n_adsorbates).

        dG_i = molecule_dG_i + sum_j S_ij G_j, summed over the few non-zero coefficients of each
        step, one contiguous column pass each (no BLAS call: on a busy machine its threads cost
        more than the arithmetic, and the sum is the same whatever the number of rows or how
        they are split into blocks); a row with any missing (NaN) adsorbate is NaN in every step,
        as with the matrix product.
        """
        G = np.asarray(adsorbate_G, dtype=float)
        S = self.adsorbate_stoichiometry
        lead = G.shape[:-1]
        if G.ndim != 2:
            return self.dG_zero(G.reshape(-1, G.shape[-1])).reshape(lead + (S.shape[0],))
        columns = np.asfortranarray(G)
        out_t = np.empty((S.shape[0], G.shape[0]))
        for i in range(S.shape[0]):
            row = out_t[i]
            row.fill(self.molecule_dG[i])
            for j in np.flatnonzero(S[i]):
                c = S[i, j]
                if c == 1.0:
                    row += columns[:, j]
                elif c == -1.0:
                    row -= columns[:, j]
                else:
                    row += c * columns[:, j]
        bad = np.isnan(columns).any(axis=1)
        if bad.any():
            out_t[:, bad] = np.nan
        return out_t.T

    def affine(self, adsorbate_G: np.ndarray, pH=0.0, scale: str = "RHE", temperature: float = STANDARD_TEMPERATURE):
        """Coefficients (a, n) with dG_i(U) = a_i + n_i U on the given scale; a in eV, n in e."""
        shift = nernst_shift(pH, temperature)
        a = self.dG_zero(adsorbate_G)
        if np.ndim(shift) == 0 and float(shift) == 0.0:
            return a, self.electrons  # pH 0: no proton term on either scale
        shift = np.asarray(shift)[..., None] if np.ndim(shift) else shift
        a = a + self.proton_coefficient * shift
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
    with collector_paused():  # see ecatlab._gc: the collector's passes cost more than the compile on big networks
        return _compile_arrays(steps, adsorbates, scheme, pathway)


def _compile_arrays(steps: Sequence[Step], adsorbates: tuple[str, ...], scheme: ReferenceScheme, pathway) -> CompiledPathway:
    """Arrays of :class:`CompiledPathway` for ``steps``, assembled with numpy.

    The steps are flattened into (step, signed coefficient, species) entries, reactants first, in
    the order written; species are coded by (formula, phase) with ``pandas.factorize`` and each
    distinct one is classified and looked up once; the net
    coefficients (what :meth:`Step.net` gives: summed per species in that order, cancelling ones
    dropped) and the per-step sums are accumulated with ``np.add.at``, which adds in index order, so
    every float comes out as the step-by-step sums would give it.
    """
    n = len(steps)
    n_ads = len(adsorbates)
    stoich = np.zeros((n, n_ads))
    mol = np.zeros(n)
    electrons = np.zeros(n)
    protons = np.zeros(n)
    # flat lists of existing objects only (no tuple per entry: on a big network a tuple per entry
    # wakes the garbage collector over and over), reactants and products apart, then put in order
    objects, signed, step_of = [], [], []
    for side, sign in (("reactants", -1.0), ("products", 1.0)):
        sides = [getattr(step, side) for step in steps]
        objects += [sp for entries in sides for sp, _ in entries]
        signed.append(sign * np.array([c for entries in sides for _, c in entries], dtype=float))
        step_of.append(np.repeat(np.arange(n, dtype=np.int64) * 2 + (sign > 0), [len(entries) for entries in sides]))
    if not objects:
        return CompiledPathway(pathway, adsorbates, stoich, mol, electrons, protons)
    order = np.argsort(np.concatenate(step_of), kind="stable")  # per step: reactants, then products, as written
    step_of = np.concatenate(step_of)[order] // 2
    signed = np.concatenate(signed)[order]
    objects = [objects[j] for j in order]
    formula_code, _ = pd.factorize(np.array([sp.formula for sp in objects], dtype=object))
    phase_code, phases = pd.factorize(np.array([sp.phase for sp in objects], dtype=object))
    species_of, _ = pd.factorize(formula_code.astype(np.int64) * len(phases) + phase_code)  # one code per (formula, phase)
    n_species = int(species_of.max()) + 1
    _, first = np.unique(species_of, return_index=True)  # first entry of each code 0, 1, ...
    examples = [objects[j] for j in first]

    # net coefficient per (step, species), pairs in order of first appearance (the order of Step.net)
    pair = step_of * n_species + species_of
    pair_code, pair_value = pd.factorize(pair)
    net = np.zeros(len(pair_value))
    np.add.at(net, pair_code, signed)  # 0.0 - c ... + c, in the written order
    keep = np.abs(net) > _BALANCE_TOLERANCE
    step_index = (pair_value // n_species)[keep]
    species = (pair_value % n_species)[keep]
    net = net[keep]

    # each distinct species once: its kind, its column, its free-energy term per unit coefficient
    column = np.full(n_species, -1, dtype=np.int64)
    kind = np.zeros(n_species, dtype=np.int8)  # 0 other (site), 1 adsorbate, 2 molecule-like constant, 3 electron
    constant = np.zeros(n_species)  # eV per unit coefficient (molecules, H+, OH-)
    proton_sign = np.zeros(n_species)  # +1 OH-, -1 H+: protons consumed minus hydroxide consumed
    index = {k: j for j, k in enumerate(adsorbates)}
    # G_rel(H+) at pH 0 is 1/2 G_rel(H2(g)) of the scheme (0 when H2(g) is a reference); the pH and
    # potential terms are added in CompiledPathway.affine.
    half_h2 = scheme.proton_electron_free_energy()
    water = None  # G_rel(H2O(l)), needed only for OH- (looked up once, when a step has it)
    used = np.zeros(n_species, dtype=bool)
    used[species] = True
    for code in np.flatnonzero(used):
        sp = examples[code]
        if sp.is_adsorbate:
            kind[code], column[code] = 1, index[sp.key]
        elif sp.is_molecule:
            kind[code], constant[code] = 2, scheme.molecule_free_energy(sp)
        elif sp == ELECTRON:
            kind[code] = 3
        elif sp == PROTON:
            kind[code], constant[code], proton_sign[code] = 2, half_h2, -1.0
        elif sp == HYDROXIDE:
            if water is None:
                water = scheme.molecule_free_energy("H2O(l)")
            kind[code], constant[code], proton_sign[code] = 2, water - half_h2, 1.0

    k = kind[species]
    ads = k == 1
    stoich[step_index[ads], column[species[ads]]] = net[ads]  # one entry per (step, adsorbate)
    ec = k == 3
    electrons[step_index[ec]] = -net[ec]  # one electron entry per step
    const = k == 2
    np.add.at(mol, step_index[const], net[const] * constant[species[const]])
    charged = proton_sign[species] != 0
    np.add.at(protons, step_index[charged], proton_sign[species[charged]] * net[charged])
    return CompiledPathway(pathway, adsorbates, stoich, mol, electrons, protons)


def _adsorbate_values(table: EnergyTable, compiled: CompiledPathway, surfaces: Sequence[str] | None):
    """(values, missing) with ``missing`` surface -> missing adsorbates (built only for the rows that lack some)."""
    values = table.values(surfaces, compiled.adsorbates)
    missing_mask = np.isnan(values)
    missing = {}
    if missing_mask.any():
        names = table._surface_index if surfaces is None else surfaces
        for r in np.flatnonzero(missing_mask.any(axis=1)):
            missing[str(names[r])] = [compiled.adsorbates[j] for j in np.flatnonzero(missing_mask[r])]
    return values, missing


def _as_table(energies, temperature: float) -> EnergyTable:
    """The energy table at the analysis temperature (read at T, or re-evaluated; see as_energy_table)."""
    return as_energy_table(energies, temperature)


def _select_surfaces(table: EnergyTable, surfaces) -> list[str]:
    """The requested surfaces as a list (all, in table order, for None); unknown names raise (one lookup each)."""
    if surfaces is None:
        return table._surface_list  # the cached list itself: lets table.values() skip the lookup
    wanted = [surfaces] if isinstance(surfaces, str) else list(surfaces)
    table.surface_positions(wanted)
    return wanted


def _requested(table: EnergyTable, surfaces) -> list[str] | None:
    """Like :func:`_select_surfaces`, but None for all surfaces (no list of names is built)."""
    return None if surfaces is None else _select_surfaces(table, surfaces)


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
    check_potential(potential)
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
    _check_conditions(scale, pH, temperature)
    check_potential(potential)
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
        It is the long view of :func:`limiting_potential_arrays` (see there for the columnar
        form, which is cheaper for large screens).

    Notes
    -----
    Reduction: U_L = min_i(-a_i/n_i) over electrochemical steps, eta = U_eq - U_L.
    Oxidation: U_L = max_i(-a_i/n_i), eta = U_L - U_eq. See the module docstring.

    A Dask DataFrame, an :class:`ecatlab.datasets.EnergyDataset` or a Parquet dataset folder gives a
    lazy Dask DataFrame with the same columns, computed per partition (:mod:`ecatlab.scaleout`;
    ``surfaces=`` is not supported there).
    """
    from ecatlab.scaleout import is_lazy_source

    if is_lazy_source(energies):  # Dask DataFrame, EnergyDataset or dataset folder -> lazy Dask DataFrame
        if surfaces is not None:
            from ecatlab.errors import OptionError

            raise OptionError("surfaces= is not supported for a Dask dataset; filter the dataset first (e.g. with dask's query)")
        from ecatlab.scaleout import limiting_potentials as dask_limiting_potentials

        return dask_limiting_potentials(energies, pathways, pH=pH, scale=scale, temperature=temperature, on_missing=on_missing)
    return limiting_potential_arrays(energies, pathways, pH, scale, temperature, surfaces, on_missing).to_frame()


_BLOCK = 1 << 16  # surfaces per block in limiting_potential_arrays


@dataclass(frozen=True, eq=False)
class LimitingPotentialArrays:
    """Columnar limiting-potential result: one (n_surfaces, n_pathways) array per quantity.

    Every array has shape ``(len(surfaces), len(pathways))`` (Fortran order, so one pathway's
    column is contiguous and the long table of :meth:`to_frame` is a view of it). Text is not
    stored per cell: steps are integer codes into the pathway's own steps, and the chemical-step
    and missing-species descriptions are codes into short lists built once per distinct value.

    Attributes
    ----------
    surfaces : Index
        Surface names (rows).
    pathways : tuple of Pathway
        Pathways (columns).
    limiting_potential, overpotential : ndarray of float
        U_L [V vs ``scale``] and the signed theoretical overpotential [V]; NaN where data are missing.
    G_max, max_chemical_dG : ndarray of float
        G_max at U_eq over all steps and the largest chemical-step free energy [eV] (NaN: missing
        data, or for ``max_chemical_dG`` a pathway without chemical steps).
    blocked : ndarray of bool
        An uphill chemical step blocks the pathway at every potential.
    determining_step_index, G_max_step_index : ndarray of int16
        1-based index of the potential-determining step and of the step carrying G_max into
        ``pathways[j].steps``; 0 where data are missing.
    uphill_codes, missing_codes : ndarray of int32
        Codes into :attr:`uphill_texts` / :attr:`missing_texts` (code 0 is the empty text).
    uphill_texts, missing_texts : tuple of str
        ``'step (+0.12 eV); ...'`` for the uphill chemical steps (values rounded to 0.01 eV),
        and the comma-separated missing adsorbates.
    equilibrium_potentials : ndarray of float (n_pathways,)
        U_eq of each pathway [V vs ``scale``].
    keep : ndarray of bool or None
        Rows kept in the long table (``on_missing="drop"``); None keeps all.
    scale, pH, temperature : conditions (V scale, -, K), the same for every cell.
    references, energy_source, notes : provenance of the energies.
    """

    surfaces: pd.Index
    pathways: tuple
    limiting_potential: np.ndarray
    overpotential: np.ndarray
    G_max: np.ndarray
    max_chemical_dG: np.ndarray
    blocked: np.ndarray
    determining_step_index: np.ndarray
    G_max_step_index: np.ndarray
    uphill_codes: np.ndarray
    uphill_texts: tuple
    missing_codes: np.ndarray
    missing_texts: tuple
    equilibrium_potentials: np.ndarray
    keep: np.ndarray | None
    scale: str
    pH: float
    temperature: float
    references: str = ""
    energy_source: str = ""
    notes: tuple = ()

    @property
    def shape(self) -> tuple[int, int]:
        return (len(self.surfaces), len(self.pathways))

    def _long(self, arr: np.ndarray) -> np.ndarray:
        flat = arr.T.reshape(-1)  # pathway-major: a view for Fortran-ordered arrays
        return flat if self.keep is None else flat[self.keep.T.reshape(-1)]

    def _pathway_constant(self, values, dtype=float) -> np.ndarray:
        per = np.asarray(values, dtype=dtype)
        if self.keep is None:
            return np.repeat(per, len(self.surfaces))
        return np.repeat(per, self.keep.sum(axis=0))

    def to_frame(self) -> pd.DataFrame:
        """The long table, one row per (pathway, surface), columns of :data:`LIMITING_POTENTIAL_COLUMNS`."""
        n_s, n_p = self.shape
        names = [p.name for p in self.pathways]
        n_rows = n_s * n_p if self.keep is None else int(self.keep.sum())
        pathway_codes = self._pathway_constant(np.arange(n_p), np.int32) if n_p else np.zeros(0, dtype=np.int32)
        path_cats = pd.Index(names, dtype=object)
        unique_surfaces = self.surfaces.is_unique
        if unique_surfaces:
            surface_codes = self._long(np.broadcast_to(np.arange(n_s, dtype=np.int32)[:, None], (n_s, n_p)).copy(order="F"))
            surface = _fast_categorical(surface_codes, pd.Index(self.surfaces, dtype=object))
        else:  # the caller repeated a surface name: keep plain text
            surface = pd.Series(np.asarray(self.surfaces, dtype=object)[self._long(np.broadcast_to(np.arange(n_s)[:, None], (n_s, n_p)).copy(order="F"))], dtype=object)
        reactions = [p.overall_step().equation for p in self.pathways]
        directions = [p.direction for p in self.pathways]

        def per_pathway_text(values):
            codes, cats = pd.factorize(pd.Index(values, dtype=object)) if n_p else (np.zeros(0, dtype=np.intp), [])
            return _fast_categorical(np.asarray(codes, dtype=np.int32)[pathway_codes], pd.Index(list(cats), dtype=object))

        step_cats, step_table = _step_categories(self.pathways)

        def step_text(index_1based):
            codes = np.empty(index_1based.shape, dtype=np.int32, order="F")
            for j in range(n_p):  # index 0 (missing data) -> code 0 -> ""
                codes[:, j] = step_table[j][index_1based[:, j]]
            return _fast_categorical(self._long(codes), step_cats)

        data = {
            "surface": surface,
            "pathway": _fast_categorical(pathway_codes, path_cats),
            "reaction": per_pathway_text(reactions),
            "direction": per_pathway_text(directions),
            "electrons": self._pathway_constant([abs(p.total_electrons) for p in self.pathways]),
            "limiting_potential": self._long(self.limiting_potential),
            "equilibrium_potential": self._pathway_constant(self.equilibrium_potentials),
            "overpotential": self._long(self.overpotential),
            "determining_step": step_text(self.determining_step_index),
            "determining_step_index": self._long(self.determining_step_index),
            "G_max": self._long(self.G_max),
            "G_max_step": step_text(self.G_max_step_index),
            "blocked": self._long(self.blocked),
            "max_chemical_dG": self._long(self.max_chemical_dG),
            "uphill_chemical_steps": _fast_categorical(self._long(self.uphill_codes), pd.Index(list(self.uphill_texts), dtype=object)),
            "missing_species": _fast_categorical(self._long(self.missing_codes), pd.Index(list(self.missing_texts), dtype=object)),
            "scale": _fast_categorical(np.zeros(n_rows, dtype=np.int8), pd.Index([self.scale], dtype=object)),
            "pH": np.broadcast_to(np.float64(self.pH), (n_rows,)),  # constants: zero-stride, read-only (copy-on-write)
            "temperature": np.broadcast_to(np.float64(self.temperature), (n_rows,)),
        }
        result = pd.DataFrame(data, copy=False)
        result.attrs.update(
            {
                "quantity": "limiting potentials",
                "units": {"limiting_potential": f"V vs {self.scale}", "equilibrium_potential": f"V vs {self.scale}", "overpotential": "V",
                          "G_max": "eV", "max_chemical_dG": "eV"},
                "columns": LIMITING_POTENTIAL_COLUMNS,
                "scale": self.scale,
                "pH": float(self.pH),
                "temperature": float(self.temperature),
                "equilibrium_potentials": dict(zip(names, map(float, self.equilibrium_potentials))),
                "references": self.references,
                "energy_source": self.energy_source,
                "notes": list(self.notes),
            }
        )
        return result

    def ranking(self, pathway) -> np.ndarray:
        """Surface positions best first for one pathway (:func:`ecatlab.che.kernel.ranking_order`)."""
        names = [p.name for p in self.pathways]
        key = pathway.name if isinstance(pathway, Pathway) else str(pathway)
        if key not in names:
            raise PathwayError(f"pathway {key!r} is not in this result; it has {names}")
        j = names.index(key)
        return kernel.ranking_order(self.G_max[:, j], self.blocked[:, j])


def _fast_categorical(codes: np.ndarray, categories: pd.Index) -> pd.Categorical:
    """Categorical from codes and distinct categories without pandas' per-call checks."""
    fast = getattr(pd.CategoricalDtype, "_from_fastpath", None)
    dtype = fast(categories, False) if fast is not None else pd.CategoricalDtype(categories)
    return pd.Categorical.from_codes(codes, dtype=dtype, validate=False)


def _step_categories(pathways) -> tuple[pd.Index, np.ndarray]:
    """Categories ["", every distinct step equation] and a table: row j, column i -> code of step i (1-based) of pathway j."""
    cats: dict[str, int] = {"": 0}
    per_path = []
    for p in pathways:
        per_path.append([cats.setdefault(s.equation, len(cats)) for s in p.steps])
    width = max((len(c) for c in per_path), default=0)
    table = np.zeros((len(pathways), width + 1), dtype=np.int32)
    for j, codes in enumerate(per_path):
        table[j, 1 : len(codes) + 1] = codes
    return pd.Index(list(cats), dtype=object), table


def limiting_potential_arrays(
    energies,
    pathways,
    pH=0.0,
    scale: str = "RHE",
    temperature: float = STANDARD_TEMPERATURE,
    surfaces: Iterable[str] | None = None,
    on_missing: str = "report",
) -> LimitingPotentialArrays:
    """Limiting potentials of many surfaces and pathways as (surfaces x pathways) arrays.

    Same parameters and physics as :func:`limiting_potentials` (every number comes from
    :mod:`ecatlab.che.kernel`); returns :class:`LimitingPotentialArrays`, whose
    :meth:`~LimitingPotentialArrays.to_frame` is the long table.
    """
    sc = _check_conditions(scale, pH, temperature)
    if np.ndim(pH) != 0:
        raise ConditionError("limiting_potentials takes one pH value; loop over pH or use the engine arrays")
    if on_missing not in ("report", "raise", "drop"):
        raise ValueError(f"on_missing must be one of ('report', 'raise', 'drop'), got {on_missing!r}")
    table = _as_table(energies, temperature)
    if isinstance(pathways, (str, Pathway)):
        pathways = [pathways]
    paths = tuple(resolve(p) for p in pathways)
    names = _requested(table, surfaces)
    surface_index = table._surface_index if names is None else pd.Index(names, dtype=object)
    n_s, n_p = len(surface_index), len(paths)
    shape = (n_s, n_p)
    u_l_all = np.empty(shape, order="F")
    eta_all = np.empty(shape, order="F")
    gmax_all = np.empty(shape, order="F")
    chem_all = np.empty(shape, order="F")
    blocked_all = np.empty(shape, dtype=bool, order="F")
    det_all = np.empty(shape, dtype=np.int16, order="F")
    gstep_all = np.empty(shape, dtype=np.int16, order="F")
    uphill_all = np.empty(shape, dtype=np.int32, order="F")
    missing_all = np.empty(shape, dtype=np.int32, order="F")
    u_eqs = np.empty(n_p)
    uphill_texts: dict[str, int] = {"": 0}
    missing_texts: dict[str, int] = {"": 0}
    keep_all = np.ones(shape, dtype=bool, order="F") if on_missing == "drop" else None
    for j, path in enumerate(paths):
        compiled = compile_pathway(path, table.scheme)
        values = table.values(names, compiled.adsorbates)
        absent = np.isnan(values)
        bad = absent.any(axis=1) if absent.size else np.zeros(n_s, dtype=bool)
        if bad.any():
            _report_missing(path, compiled.adsorbates, surface_index, absent, bad, on_missing)
            if keep_all is not None:
                keep_all[:, j] = ~bad
        u_eq = equilibrium_potential(path, sc, pH, temperature, table.scheme)
        u_eqs[j] = u_eq
        chem = ~compiled.electrochemical
        chem_equations = [s.equation for s, c in zip(path.steps, chem) if c]
        # blocks of surfaces: the kernel's temporaries stay small and are reused (time per surface
        # stays flat up to millions of surfaces instead of paging in fresh memory for each temporary)
        for start in range(0, max(n_s, 1), _BLOCK):
            rows = slice(start, min(start + _BLOCK, n_s))
            a, n = compiled.affine(values[rows], pH, sc, temperature)
            u_l, idx = kernel.envelope(a, n, path.direction)
            u_l_all[rows, j] = u_l
            eta_all[rows, j] = kernel.signed_overpotential(u_l, u_eq, path.direction)
            g_max, g_idx = kernel.gmax(a, n, u_eq)
            gmax_all[rows, j] = g_max
            max_chem, _ = kernel.chemical_obstacle(a, n)
            chem_all[rows, j] = max_chem
            blocked_all[rows, j] = kernel.is_blocked(max_chem)
            block_bad = bad[rows]
            det_all[rows, j] = np.where(block_bad, 0, idx + 1)
            gstep_all[rows, j] = np.where(block_bad, 0, g_idx + 1)
            uphill_all[rows, j] = _uphill_codes(a[:, chem], chem_equations, uphill_texts) if chem.any() else 0
        missing_all[:, j] = _missing_codes(absent, bad, compiled.adsorbates, missing_texts) if bad.any() else 0
    return LimitingPotentialArrays(
        surfaces=surface_index,
        pathways=paths,
        limiting_potential=u_l_all,
        overpotential=eta_all,
        G_max=gmax_all,
        max_chemical_dG=chem_all,
        blocked=blocked_all,
        determining_step_index=det_all,
        G_max_step_index=gstep_all,
        uphill_codes=uphill_all,
        uphill_texts=tuple(uphill_texts),
        missing_codes=missing_all,
        missing_texts=tuple(missing_texts),
        equilibrium_potentials=u_eqs,
        keep=keep_all,
        scale=sc,
        pH=float(pH),
        temperature=float(temperature),
        references=table.scheme.describe(),
        energy_source=table.source,
        notes=tuple(table.notes),
    )


def _report_missing(path: Pathway, adsorbates, surface_index: pd.Index, absent: np.ndarray, bad: np.ndarray, on_missing: str) -> None:
    """Raise (``on_missing='raise'``) or warn about surfaces lacking adsorbates; names at most 10."""
    rows = np.flatnonzero(bad)
    if on_missing == "raise":
        missing = {str(surface_index[r]): [adsorbates[k] for k in np.flatnonzero(absent[r])] for r in rows}
        raise MissingSpeciesError(path.name, missing)
    shown = "; ".join(f"{surface_index[r]}: {', '.join(adsorbates[k] for k in np.flatnonzero(absent[r]))}" for r in rows[:10])
    more = f" (and {len(rows) - 10:,} more surfaces)" if len(rows) > 10 else ""
    action = "left out" if on_missing == "drop" else "reported with NaN values and a missing_species entry"
    warnings.warn(f"pathway {path.name!r}: surfaces lacking adsorbates are {action}: {shown}{more}", MissingDataWarning, stacklevel=4)


def _missing_codes(absent: np.ndarray, bad: np.ndarray, adsorbates, texts: dict) -> np.ndarray:
    """Code per row of the text naming its missing adsorbates; one text per distinct pattern."""
    n_ads = absent.shape[1]
    if n_ads > 62:  # patterns do not fit one integer: build the text per row (rare)
        keys = np.array([", ".join(adsorbates[k] for k in np.flatnonzero(r)) for r in absent], dtype=object)
        codes, uniques = pd.factorize(keys)
        remap = np.array([texts.setdefault(u, len(texts)) for u in uniques], dtype=np.int32)
        return remap[codes]
    pattern = absent.astype(np.int64) @ (np.int64(1) << np.arange(n_ads, dtype=np.int64))
    codes, uniques = pd.factorize(pattern)
    remap = np.array([texts.setdefault(", ".join(adsorbates[k] for k in range(n_ads) if (int(u) >> k) & 1), len(texts)) for u in uniques],
                     dtype=np.int32)
    return remap[codes]


def _uphill_codes(chem_a: np.ndarray, equations: list[str], texts: dict) -> np.ndarray:
    """Code per row of 'step (+0.12 eV); ...' for its uphill chemical steps (values in 0.01 eV steps).

    The text is built once per distinct combination of rounded uphill values, not once per row.
    """
    up = np.isfinite(chem_a) & (chem_a > 0)
    centi = np.where(up, np.rint(np.where(up, chem_a, 0.0) * 100.0), -1.0).astype(np.int64)  # -1: not uphill
    if centi.shape[1] == 1:
        key = centi[:, 0]
    else:
        span = int(centi.max(initial=0)) + 2
        if span ** centi.shape[1] < 2**62:
            key = np.zeros(centi.shape[0], dtype=np.int64)
            for k in range(centi.shape[1]):
                key = key * span + (centi[:, k] + 1)
        else:
            _, key = np.unique(centi, axis=0, return_inverse=True)
            key = key.reshape(-1)
    codes, uniques = pd.factorize(key)
    first = np.zeros(len(uniques), dtype=np.int64)
    first[codes[::-1]] = np.arange(len(codes) - 1, -1, -1)
    remap = np.empty(len(uniques), dtype=np.int32)
    for u, row in enumerate(first):
        parts = [f"{eq} ({c / 100.0:+.2f} eV)" for eq, c in zip(equations, centi[row]) if c >= 0]
        remap[u] = texts.setdefault("; ".join(parts), len(texts))
    return remap[codes]


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
