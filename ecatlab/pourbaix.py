r"""Surface Pourbaix diagrams: which adsorbate coverage of a surface is stable at each (U, pH).

A surface under bias is not necessarily clean: water oxidises it to OH* or O* at positive
potentials and protons reduce onto it as H* at negative ones. The surface Pourbaix diagram
(Hansen, Rossmeisl & Nørskov, Phys. Chem. Chem. Phys. 10, 3722 (2008)) compares the free
energies of forming every candidate surface state from the clean surface and the reference
molecules, with protons and electrons at the computational hydrogen electrode.

Surface states and how coverage is given
----------------------------------------
A **surface-state table** (CSV or DataFrame) has one row per (surface, state):

========== =====================================================================================
column     meaning (unit)
========== =====================================================================================
surface    surface name (as in the energy table)
state      label of the state, e.g. ``OH* 1/2 ML`` (the same label means the same adsorbates on
           every surface)
adsorbates the adsorbates in one cell, in ecatlab notation: ``2 OH*``, ``O* + OH*``; ``*`` (or
           empty) for the clean surface
sites      adsorption sites per cell (the same for all states of a surface)
G          free energy of the covered cell minus the clean cell and the reference molecules, eV
           per cell, as in the energy table (``G = 0`` for the clean surface)
coverage   optional: adsorbates per site, ML; checked against ``adsorbates`` / ``sites``
========== =====================================================================================

The coverage of a state is ``(adsorbates per cell) / sites`` in monolayers (ML); a 2x2 cell with 4
sites and ``2 OH*`` is 1/2 ML OH*. All states of one surface are compared per the same cell.

Formation free energy of a state
--------------------------------
The composition of the cell's adsorbates is balanced against the reference molecules with
:meth:`ecatlab.references.ReferenceScheme.balance` (default H2(g), H2O(l), CO2(g), N2(g)); the
H2(g) coefficient :math:`\nu_{H_2}` becomes :math:`2\nu_{H_2}` proton-electron pairs, so the
formation step is, e.g. for 2 OH*,

.. math:: * + 2\,H_2O(l) \to (2\,OH)^* + 2\,H^+ + 2\,e^-

and it is compiled by the CHE engine (:func:`ecatlab.che.engine.compile_steps`); its
``affine(G, pH, scale, T)`` gives :math:`\Delta G_s(U) = a_s + n_s U` with :math:`n_s` the electrons
consumed (negative when the state forms by oxidation), the SHE/RHE and pH terms included, and
:func:`ecatlab.che.kernel.step_free_energy` evaluates it. The stable state at (U, pH) is the one with
the lowest :math:`\Delta G_s` (the clean surface has 0). Two states s, t meet where
:math:`(a_s - a_t) + (n_s - n_t)U = 0`, i.e. at the kernel's onset :math:`U = -\Delta a/\Delta n`
(:func:`ecatlab.che.kernel.onset_potentials`): for a proton-coupled transition this is
:math:`\Delta G/e` at pH 0 with slope :math:`-k_BT\ln 10/e` per pH on the SHE scale and no pH
dependence on the RHE scale.

Pure computation: no plotting, no files (reading a state table is done by :func:`read_surface_states`,
which only reads).
"""

from __future__ import annotations

import math
import os
from dataclasses import dataclass, field
from functools import cached_property
from typing import Iterable, Mapping, Sequence

import numpy as np
import pandas as pd

from ecatlab.che import kernel
from ecatlab.che.conditions import check_pH, check_potential, check_scale, check_temperature
from ecatlab.constants import STANDARD_TEMPERATURE
from ecatlab.errors import SurfaceStateError
from ecatlab.notation import ELECTRON, PROTON, SITE, Species, Step
from ecatlab.references import ReferenceScheme

__all__ = [
    "SurfaceStates",
    "PourbaixMap",
    "read_surface_states",
    "surface_states_from_energies",
    "demo_surface_states",
    "formation_free_energies",
    "pourbaix_map",
    "stable_states",
    "transition_potential",
    "flag_surface_states",
    "water_stability_lines",
    "limiting_potential_vs_pH",
    "pourbaix_section",
    "SURFACE_STATE_COLUMNS",
    "STABLE_STATE_COLUMNS",
    "SURFACE_FLAG_COLUMNS",
    "CLEAN",
]

#: Label of the clean surface (added to every surface when the table has no clean row).
CLEAN = "clean"

#: Columns of a surface-state table (input) and of :attr:`SurfaceStates.frame`.
SURFACE_STATE_COLUMNS: dict[str, str] = {
    "surface": "surface name",
    "state": "state label (same label = same adsorbates on every surface)",
    "adsorbates": "adsorbates per cell in ecatlab notation ('2 OH*', 'O* + OH*'; '*' = clean)",
    "sites": "adsorption sites per cell [-]",
    "coverage": "adsorbates per site [ML]",
    "G": "free energy of forming the covered cell from the clean cell and the reference molecules [eV per cell]",
    "electrons": "electrons consumed by the formation step (negative: released, the state forms by oxidation) [-]",
    "formation_step": "the formation step from the clean surface, as compiled by the CHE engine",
}
#: Columns of :func:`stable_states`.
STABLE_STATE_COLUMNS: dict[str, str] = {
    "surface": "surface name",
    "stable_state": "state with the lowest formation free energy at (U, pH)",
    "coverage": "coverage of the stable state [ML]",
    "formation_dG": "its formation free energy at (U, pH) [eV per cell]",
    "clean_margin": "formation free energy of the clean surface minus that of the stable state (>= 0; 0 = clean is stable) [eV per cell]",
    "potential": "U [V vs scale]",
    "pH": "pH [-]",
    "scale": "potential scale",
    "temperature": "temperature [K]",
}
#: Columns that :func:`flag_surface_states` adds to a limiting-potential table.
SURFACE_FLAG_COLUMNS: dict[str, str] = {
    "surface_state_at_U_L": "most stable surface state at the pathway's own limiting potential (and pH, scale, T); empty without state data",
    "surface_state_coverage": "coverage of that state [ML]",
    "assumed_state_margin": "formation free energy of the state the pathway assumes minus the stable one at U_L (>= 0) [eV per cell]",
    "assumed_state_stable": "True when the state the pathway assumes (default: the clean surface) is the stable one at U_L (within the tolerance)",
    "surface_state_flag": "text warning when the assumed surface is not stable at U_L; empty otherwise",
}


# ------------------------------------------------------------------------------------------------
# the state table
# ------------------------------------------------------------------------------------------------
def _composition_label(counts: Mapping[str, float]) -> str:
    """'2 OH* + O*' style canonical text (sorted by key); '*' for none."""
    if not counts:
        return "*"
    return " + ".join((f"{c:g} " if c != 1 else "") + k for k, c in sorted(counts.items()))


def _parse_adsorbates(text, where: str, source: str) -> dict[str, float]:
    from ecatlab.errors import NotationError
    from ecatlab.notation import _parse_side

    raw = "" if text is None or (isinstance(text, float) and math.isnan(text)) else str(text).strip()
    if raw in ("", "*", "clean"):
        return {}
    try:
        terms = _parse_side(raw, raw)
    except NotationError as exc:
        raise SurfaceStateError(source, f"adsorbates {raw!r}: {exc.reason}; write e.g. '2 OH*' or 'O* + OH*'", rows=[where], column="adsorbates") from None
    out: dict[str, float] = {}
    for sp, c in terms:
        if sp.is_site:
            continue
        if not sp.is_adsorbate:
            raise SurfaceStateError(source, f"adsorbates {raw!r}: {sp.key} is not an adsorbate (adsorbates end in '*')", rows=[where], column="adsorbates")
        out[sp.key] = out.get(sp.key, 0.0) + float(c)
    return out


def _formation_step(counts: Mapping[str, float], scheme: ReferenceScheme) -> tuple[Step, str]:
    """Formation step of a cell's adsorbates from the clean surface, reference molecules and H+ + e-,
    with the adsorbates lumped into one pseudo-adsorbate of the same composition (its G is the
    cell's G). Returns (step, pseudo-adsorbate key)."""
    elements: dict[str, float] = {}
    for key, c in counts.items():
        for el, n in Species.parse(key).elements.items():
            elements[el] = elements.get(el, 0.0) + c * n
    coef = scheme.balance(elements)
    if "H2(g)" not in scheme.references:
        raise SurfaceStateError("<references>", "surface Pourbaix diagrams need H2(g) among the reference molecules (CHE: H+ + e- = 1/2 H2)")
    formula = "".join(el + ("" if n == 1 else f"{n:g}") for el, n in sorted(elements.items()))
    pseudo = Species(formula, "ads")
    left: list[tuple[Species, float]] = [(SITE, 1.0)]
    right: list[tuple[Species, float]] = [(pseudo, 1.0)]
    for ref, c in coef.items():
        if ref == "H2(g)" or abs(c) < 1e-12:
            continue
        (left if c > 0 else right).append((Species.parse(ref), abs(c)))
    pairs = 2.0 * coef.get("H2(g)", 0.0)
    if abs(pairs) > 1e-12:
        side = left if pairs > 0 else right
        side += [(PROTON, abs(pairs)), (ELECTRON, abs(pairs))]
    return Step(tuple(left), tuple(right), text=""), pseudo.key


@dataclass(frozen=True)
class SurfaceStates:
    """Validated surface states of one or more surfaces (see the module docstring for the columns).

    Attributes
    ----------
    frame : DataFrame
        One row per (surface, state): ``surface``, ``state``, ``adsorbates`` (canonical text),
        ``sites``, ``coverage`` (ML), ``G`` (eV per cell), ``electrons`` and ``formation_step``.
    scheme : ReferenceScheme
    source : str
    notes : tuple of str
    """

    frame: pd.DataFrame = field(repr=False)
    scheme: ReferenceScheme = field(repr=False)
    source: str = "<DataFrame>"
    notes: tuple[str, ...] = ()

    @property
    def surfaces(self) -> list[str]:
        return list(dict.fromkeys(self.frame["surface"]))

    @property
    def states(self) -> list[str]:
        """State labels, the clean surface first, then in order of first appearance."""
        labels = list(dict.fromkeys(self.frame["state"]))
        return [CLEAN] + [s for s in labels if s != CLEAN]

    @cached_property
    def _matrix(self) -> np.ndarray:
        out = np.full((len(self.surfaces), len(self.states)), np.nan)
        r = {s: i for i, s in enumerate(self.surfaces)}
        c = {s: j for j, s in enumerate(self.states)}
        out[self.frame["surface"].map(r).to_numpy(), self.frame["state"].map(c).to_numpy()] = self.frame["G"].to_numpy(dtype=float)
        return out

    def matrix(self) -> pd.DataFrame:
        """G per cell (eV): index surfaces, columns states; NaN where a surface lacks a state."""
        return pd.DataFrame(self._matrix, index=pd.Index(self.surfaces, name="surface"), columns=self.states)

    @cached_property
    def _state_info(self) -> pd.DataFrame:
        info = self.frame.drop_duplicates("state").set_index("state")
        return info.reindex(self.states)

    def coverage(self) -> pd.DataFrame:
        """Coverage (ML) per surface and state (NaN where a surface lacks the state)."""
        frame = self.frame.pivot(index="surface", columns="state", values="coverage").reindex(index=self.surfaces, columns=self.states)
        return frame

    def subset(self, surfaces: Iterable[str]) -> "SurfaceStates":
        wanted = [surfaces] if isinstance(surfaces, str) else list(surfaces)
        unknown = [s for s in wanted if s not in set(self.surfaces)]
        if unknown:
            raise SurfaceStateError(self.source, f"unknown surface(s) {unknown}; surfaces with states: {self.surfaces}", column="surface")
        return SurfaceStates(self.frame[self.frame["surface"].isin(wanted)].reset_index(drop=True), self.scheme, self.source, self.notes)

    def at_temperature(self, temperature: float) -> "SurfaceStates":
        """The same states with the reference scheme at ``temperature`` (K); G per cell used as given."""
        t = check_temperature(temperature)
        if abs(t - self.scheme.temperature) < 1e-9:
            return self
        note = f"evaluated at {t:g} K: molecule free energies at {t:g} K, state G values used as given (they must be the ones for {t:g} K)"
        return SurfaceStates(self.frame, self.scheme.at_temperature(t), self.source, self.notes + (note,))

    def describe(self) -> str:
        return f"{len(self.surfaces)} surfaces, {len(self.states)} states, from {self.source}"

    def __repr__(self) -> str:
        return f"SurfaceStates({self.describe()})"


def _validate_states(raw: pd.DataFrame, locations, source: str, scheme: ReferenceScheme) -> SurfaceStates:
    cols = {str(c).strip().lower(): c for c in raw.columns}
    need = ["surface", "state", "adsorbates", "sites", "G"]
    missing = [c for c in need if c.lower() not in cols]
    if missing:
        raise SurfaceStateError(source, f"missing column(s) {missing}; found {list(raw.columns)}; a surface-state table has "
                                "surface, state, adsorbates, sites, G (eV per cell) [, coverage (ML)]")
    get = lambda name: raw[cols[name.lower()]]  # noqa: E731
    rows = []
    label_comp: dict[str, dict] = {}
    sites_of: dict[str, float] = {}
    seen = set()
    for i in range(len(raw)):
        where = locations[i]
        surface = str(get("surface").iloc[i]).strip()
        label = str(get("state").iloc[i]).strip()
        if not surface or surface.lower() in ("nan", "none"):
            raise SurfaceStateError(source, "empty surface name", rows=[where], column="surface")
        if not label or label.lower() in ("nan", "none"):
            raise SurfaceStateError(source, "empty state label; name every state (e.g. 'OH* 1/4 ML')", rows=[where], column="state")
        counts = _parse_adsorbates(get("adsorbates").iloc[i], where, source)
        try:
            sites = float(get("sites").iloc[i])
        except (TypeError, ValueError):
            raise SurfaceStateError(source, f"sites {get('sites').iloc[i]!r} is not a number; give the adsorption sites per cell", rows=[where], column="sites") from None
        if not (math.isfinite(sites) and sites > 0):
            raise SurfaceStateError(source, f"sites must be a positive number of sites per cell, got {sites:g}", rows=[where], column="sites")
        try:
            g = float(get("G").iloc[i])
        except (TypeError, ValueError):
            raise SurfaceStateError(source, f"G {get('G').iloc[i]!r} is not a number; give eV per cell", rows=[where], column="G") from None
        if not math.isfinite(g):
            raise SurfaceStateError(source, "G must be a finite number of eV per cell", rows=[where], column="G")
        n_ads = sum(counts.values())
        if n_ads > sites + 1e-9:
            raise SurfaceStateError(source, f"{n_ads:g} adsorbates on {sites:g} sites: coverage above 1 ML; check 'adsorbates' and 'sites'", rows=[where])
        coverage = n_ads / sites
        if "coverage" in cols:
            given = get("coverage").iloc[i]
            text = "" if given is None else str(given).strip()
            if text and text.lower() != "nan":
                try:
                    value = float(text)
                except ValueError:
                    raise SurfaceStateError(source, f"coverage {text!r} is not a number of ML", rows=[where], column="coverage") from None
                if abs(value - coverage) > 1e-6:
                    raise SurfaceStateError(source, f"coverage {value:g} ML disagrees with {n_ads:g} adsorbates on {sites:g} sites ({coverage:g} ML); "
                                            "fix 'coverage', 'adsorbates' or 'sites'", rows=[where], column="coverage")
        if not counts:
            if label != CLEAN:
                raise SurfaceStateError(source, f"the clean surface must be labelled {CLEAN!r}, got {label!r}", rows=[where], column="state")
            if abs(g) > 1e-9:
                raise SurfaceStateError(source, f"the clean surface is the zero of the formation free energies; its G must be 0, got {g:g} eV",
                                        rows=[where], column="G")
        elif label == CLEAN:
            raise SurfaceStateError(source, f"state {CLEAN!r} is the clean surface; it has no adsorbates", rows=[where], column="adsorbates")
        comp = _composition_label(counts)
        if label in label_comp and label_comp[label] != comp:
            raise SurfaceStateError(source, f"state {label!r} has adsorbates {label_comp[label]!r} elsewhere and {comp!r} here; the same label must mean "
                                    "the same adsorbates on every surface (use another label)", rows=[where], column="adsorbates")
        label_comp[label] = comp
        if surface in sites_of and abs(sites_of[surface] - sites) > 1e-9:
            raise SurfaceStateError(source, f"surface {surface!r} has states on cells of {sites_of[surface]:g} and {sites:g} sites; compare states "
                                    "per the same cell (convert G to one cell size)", rows=[where], column="sites")
        sites_of[surface] = sites
        if (surface, label) in seen:
            raise SurfaceStateError(source, f"duplicate state {label!r} on surface {surface!r}; keep one row per (surface, state)", rows=[where])
        seen.add((surface, label))
        rows.append((surface, label, comp, counts, sites, coverage, g))
    if not rows:
        raise SurfaceStateError(source, "has a header but no rows")
    for surface, sites in sites_of.items():
        if (surface, CLEAN) not in seen:
            rows.append((surface, CLEAN, "*", {}, sites, 0.0, 0.0))
    steps: dict[str, tuple[Step, str]] = {}
    for r in rows:
        if r[2] != "*" and r[2] not in steps:
            try:
                steps[r[2]] = _formation_step(r[3], scheme)
            except SurfaceStateError:
                raise
            except Exception as exc:  # reference balance errors name the element
                raise SurfaceStateError(source, f"adsorbates {r[2]!r}: {exc}", column="adsorbates") from None
    electrons = [steps[r[2]][0].electrons_transferred if r[2] != "*" else 0.0 for r in rows]
    frame = pd.DataFrame({
        "surface": [r[0] for r in rows], "state": [r[1] for r in rows], "adsorbates": [r[2] for r in rows], "sites": [r[4] for r in rows],
        "coverage": [r[5] for r in rows], "G": [r[6] for r in rows], "electrons": electrons,
        "formation_step": [steps[r[2]][0].equation if r[2] != "*" else "" for r in rows],
    })
    frame.attrs.update({"columns": SURFACE_STATE_COLUMNS, "units": {"G": "eV per cell", "coverage": "ML"}})
    notes = (f"{len(frame)} surface states of {len(sites_of)} surfaces; formation free energies vs the clean surface and {', '.join(scheme.references)}",)
    return SurfaceStates(frame, scheme, source, notes)


def read_surface_states(source, references: ReferenceScheme | Iterable[str] | None = None, temperature: float | None = None,
                        name: str | None = None) -> SurfaceStates:
    """Read and validate a surface-state table (CSV with ``#`` comments, or a DataFrame).

    Parameters
    ----------
    source : path or DataFrame
        Columns ``surface, state, adsorbates, sites, G`` (eV per cell) and optionally ``coverage`` (ML).
    references : ReferenceScheme or list of str, optional
        Reference molecules (default H2(g), H2O(l), CO2(g), N2(g)).
    temperature : float, optional
        K, for the molecules' free energies (default 298.15 K).
    name : str, optional
        Name used in messages.

    Raises
    ------
    SurfaceStateError
        Naming the file, line, column and the fix.
    """
    from ecatlab.energies import _Locations, _read_csv, _scheme

    scheme = _scheme(references, temperature)
    if isinstance(source, SurfaceStates):
        return source if temperature is None else source.at_temperature(temperature)
    if isinstance(source, pd.DataFrame):
        label = name or "<DataFrame>"
        return _validate_states(source.reset_index(drop=True), _Locations(source.index.to_numpy(), "row"), label, scheme)
    path = os.fspath(source)
    label = name or path
    from ecatlab.errors import EnergyTableError

    try:
        raw, locations = _read_csv(path, label)
    except EnergyTableError as exc:
        raise SurfaceStateError(label, exc.problem) from None
    return _validate_states(raw, locations, label, scheme)


def surface_states_from_energies(energies, species: Sequence[str] = ("H*", "OH*", "O*"), surfaces: Iterable[str] | None = None,
                                 temperature: float | None = None) -> SurfaceStates:
    """Surface states from an energy table: the clean surface and one state per adsorbate.

    Each adsorbate X* of ``species`` that a surface has becomes the state ``"X*"`` with
    ``adsorbates = X*``, ``sites = 1`` and ``G`` = its adsorption free energy (eV), i.e. the coverage
    of the cell the energies were computed in, counted as 1 ML of that cell. Use a surface-state
    table for several coverages.
    """
    from ecatlab.energies import as_energy_table

    table = as_energy_table(energies, temperature)
    keys = [Species.parse(s).key for s in species]
    names = table.surfaces if surfaces is None else list(surfaces)
    vals = table.values(names, keys)
    rows = [{"surface": s, "state": k, "adsorbates": k, "sites": 1, "G": vals[i, j]}
            for i, s in enumerate(names) for j, k in enumerate(keys) if np.isfinite(vals[i, j])]
    if not rows:
        raise SurfaceStateError(table.source, f"no energies of {', '.join(keys)} on the chosen surfaces; give a surface-state table instead")
    states = read_surface_states(pd.DataFrame(rows), references=table.scheme, name=f"{table.source} (states from adsorption energies)")
    note = ("states built from single-adsorbate energies: coverage = that of the cell the energies were computed in (1 adsorbate per cell, "
            "counted as 1 ML of that cell)")
    return SurfaceStates(states.frame, states.scheme, states.source, states.notes + (note,))


def demo_surface_states(temperature: float | None = None) -> SurfaceStates:
    """The bundled ILLUSTRATIVE surface states (invented numbers) of the twelve demo surfaces:
    clean, H*, OH*, O* at 1/4, 1/2 and 1 ML and O* + OH* on a 2x2 cell of 4 sites
    (``ecatlab/data/illustrative_surface_states.csv``, made by ``make_illustrative_surface_states.py``)."""
    from importlib import resources

    path = resources.files("ecatlab") / "data" / "illustrative_surface_states.csv"
    return read_surface_states(str(path), temperature=temperature, name="illustrative_surface_states.csv (bundled ILLUSTRATIVE demo)")


def _as_states(states, temperature: float | None) -> SurfaceStates:
    s = states if isinstance(states, SurfaceStates) else read_surface_states(states)
    return s if temperature is None else s.at_temperature(temperature)


# ------------------------------------------------------------------------------------------------
# formation free energies and the stable state
# ------------------------------------------------------------------------------------------------
def _affine(states: SurfaceStates, pH, scale: str, temperature: float, surfaces: Sequence[str]) -> tuple[np.ndarray, np.ndarray]:
    """(a, n) of every state's formation step: a (n_surfaces, n_pH, n_states) eV, n (n_states,).

    Compiled by the CHE engine, per distinct composition (states sharing a composition are
    stacked as a leading axis)."""
    from ecatlab.che.engine import compile_steps

    ph = np.atleast_1d(np.asarray(pH, dtype=float))
    labels = states.states
    G = pd.DataFrame(states._matrix, index=states.surfaces, columns=labels).reindex(list(surfaces)).to_numpy()
    info = states._state_info
    a = np.zeros((len(surfaces), ph.size, len(labels)))
    n = np.zeros(len(labels))
    a[..., 0] = 0.0  # the clean surface
    a[np.isnan(G)[:, None, :].repeat(ph.size, axis=1)] = np.nan
    comps = info["adsorbates"].to_numpy()
    for comp in dict.fromkeys(comps[1:]):
        idx = np.flatnonzero(comps == comp)
        counts = _parse_adsorbates(comp, "-", states.source)
        step, key = _formation_step(counts, states.scheme)
        compiled = compile_steps([step], [key], states.scheme)
        g_in = G[:, idx][:, :, None, None]  # (n_surf, n_idx, 1 pH, 1 adsorbate)
        a_c, n_c = compiled.affine(g_in, ph, scale, temperature)  # (n_surf, n_idx, n_pH, 1 step)
        a[:, :, idx] = np.moveaxis(a_c[..., 0], 1, 2)
        n[idx] = n_c[0]
    return a, n


def formation_free_energies(states, potential, pH=0.0, scale: str = "RHE", temperature: float = STANDARD_TEMPERATURE,
                            surfaces: Iterable[str] | None = None) -> np.ndarray:
    """Free energy of forming every state from the clean surface, eV per cell, on a (pH, U) grid.

    Parameters
    ----------
    states : SurfaceStates, DataFrame or path
    potential : float or array_like (n_U,)
        U in V on ``scale``.
    pH : float or array_like (n_pH,)
    scale : {"RHE", "SHE"}
    temperature : float
        K.
    surfaces : list of str, optional

    Returns
    -------
    ndarray (n_surfaces, n_pH, n_U, n_states)
        :math:`\\Delta G_s(U, pH) = a_s + n_s U` (kernel :func:`~ecatlab.che.kernel.step_free_energy`);
        states in :attr:`SurfaceStates.states` order (clean first, 0); NaN where a surface lacks a state.
    """
    sc = check_scale(scale)
    t = check_temperature(temperature)
    check_pH(pH)
    check_potential(potential)
    st = _as_states(states, t)
    names = st.surfaces if surfaces is None else _check_surfaces(st, surfaces)
    a, n = _affine(st, pH, sc, t, names)
    u = np.atleast_1d(np.asarray(potential, dtype=float))
    return kernel.step_free_energy(a[:, :, None, :], n, u)


def _check_surfaces(st: SurfaceStates, surfaces) -> list[str]:
    wanted = [surfaces] if isinstance(surfaces, str) else list(surfaces)
    unknown = [s for s in wanted if s not in set(st.surfaces)]
    if unknown:
        raise SurfaceStateError(st.source, f"no surface states for {unknown}; surfaces with states: {st.surfaces}", column="surface")
    return wanted


def _argmin_states(dG: np.ndarray) -> np.ndarray:
    """Index of the lowest formation free energy along the last axis (NaN states never win; ties: first = clean)."""
    return np.argmin(np.where(np.isnan(dG), np.inf, dG), axis=-1)


@dataclass(frozen=True)
class PourbaixMap:
    """The stable surface state of one surface on a (pH, U) grid.

    Attributes
    ----------
    surface : str
    potential : ndarray (n_U,)
        V vs ``scale``.
    pH : ndarray (n_pH,)
    states : tuple of str
        State labels (clean first).
    coverage : tuple of float
        Coverage of each state, ML.
    stable : ndarray of int (n_pH, n_U)
        Index into ``states`` of the most stable state.
    formation_dG : ndarray (n_pH, n_U, n_states)
        Formation free energies, eV per cell.
    scale : str
    temperature : float
        K.
    references : str
        The reference scheme, described.
    source : str
    """

    surface: str
    potential: np.ndarray = field(repr=False)
    pH: np.ndarray = field(repr=False)
    states: tuple[str, ...]
    coverage: tuple[float, ...]
    stable: np.ndarray = field(repr=False)
    formation_dG: np.ndarray = field(repr=False)
    scale: str
    temperature: float
    references: str = ""
    source: str = ""

    def region(self, state: str) -> np.ndarray:
        """Boolean (n_pH, n_U) mask where ``state`` is the most stable."""
        if state not in self.states:
            raise SurfaceStateError(self.source, f"no state {state!r} on {self.surface}; states: {list(self.states)}", column="state")
        return self.stable == self.states.index(state)

    def present_states(self) -> list[str]:
        """States that are stable somewhere on the grid (clean first)."""
        used = set(np.unique(self.stable).tolist())
        return [s for i, s in enumerate(self.states) if i in used]

    def fractions(self) -> pd.Series:
        """Fraction of the grid where each state is stable."""
        counts = np.bincount(self.stable.ravel(), minlength=len(self.states)) / self.stable.size
        return pd.Series(counts, index=list(self.states), name="fraction of the (U, pH) grid")

    def state_at(self, potential: float, pH: float) -> str:
        """Most stable state at one (U, pH) point (nearest grid point)."""
        i = int(np.argmin(np.abs(self.pH - pH)))
        j = int(np.argmin(np.abs(self.potential - potential)))
        return self.states[int(self.stable[i, j])]


def pourbaix_map(states, surface: str, potential=None, pH=None, scale: str = "RHE", temperature: float = STANDARD_TEMPERATURE) -> PourbaixMap:
    """The most stable state of ``surface`` on a (pH, U) grid.

    Parameters
    ----------
    states : SurfaceStates, DataFrame or path
    surface : str
    potential : array_like, optional
        Potentials in V vs ``scale`` (default -1 to 2 V, 301 points).
    pH : array_like, optional
        Default 0 to 14, 141 points.
    scale : {"RHE", "SHE"}
    temperature : float
        K.
    """
    st = _as_states(states, check_temperature(temperature))
    _check_surfaces(st, [surface])
    u = np.linspace(-1.0, 2.0, 301) if potential is None else np.atleast_1d(np.asarray(potential, dtype=float))
    ph = np.linspace(0.0, 14.0, 141) if pH is None else np.atleast_1d(np.asarray(pH, dtype=float))
    dG = formation_free_energies(st, u, ph, scale, temperature, [surface])[0]
    cov = st.coverage().loc[surface].reindex(st.states).fillna(np.nan).to_numpy()
    return PourbaixMap(surface, u, ph, tuple(st.states), tuple(float(c) for c in cov), _argmin_states(dG), dG, check_scale(scale),
                       float(temperature), st.scheme.describe(), st.source)


def stable_states(states, potential, pH=0.0, scale: str = "RHE", temperature: float = STANDARD_TEMPERATURE,
                  surfaces: Iterable[str] | None = None) -> pd.DataFrame:
    """The most stable state of every surface at one potential (or one per surface) and pH.

    Parameters
    ----------
    potential : float or array_like (n_surfaces,)
        V vs ``scale``; an array gives each surface its own potential (e.g. its U_L).
    pH : float or array_like (n_surfaces,)

    Returns
    -------
    DataFrame with the columns of :data:`STABLE_STATE_COLUMNS`.
    """
    sc = check_scale(scale)
    t = check_temperature(temperature)
    st = _as_states(states, t)
    names = st.surfaces if surfaces is None else _check_surfaces(st, surfaces)
    u = np.broadcast_to(np.asarray(check_potential(potential), dtype=float), (len(names),))
    ph = np.broadcast_to(np.asarray(check_pH(pH), dtype=float), (len(names),))
    dG = np.full((len(names), len(st.states)), np.nan)
    for p in np.unique(ph):  # one affine evaluation per distinct pH
        rows = np.flatnonzero(ph == p)
        a, n = _affine(st, p, sc, t, [names[r] for r in rows])
        dG[rows] = kernel.step_free_energy(a[:, 0, :], n, u[rows])
    idx = _argmin_states(dG)
    best = np.take_along_axis(dG, idx[:, None], axis=1)[:, 0]
    cov = st.coverage().reindex(index=names, columns=st.states).to_numpy()
    frame = pd.DataFrame({
        "surface": names, "stable_state": np.asarray(st.states, dtype=object)[idx], "coverage": cov[np.arange(len(names)), idx],
        "formation_dG": best, "clean_margin": dG[:, 0] - best, "potential": u, "pH": ph, "scale": sc, "temperature": t,
    })
    frame.attrs.update({"quantity": "most stable surface state", "columns": STABLE_STATE_COLUMNS, "references": st.scheme.describe(),
                        "source": st.source, "units": {"formation_dG": "eV per cell", "clean_margin": "eV per cell", "potential": f"V vs {sc}"}})
    return frame


def transition_potential(states, surface: str, state_a: str, state_b: str, pH=0.0, scale: str = "RHE",
                         temperature: float = STANDARD_TEMPERATURE):
    """Potential (V vs ``scale``) where ``state_a`` and ``state_b`` have equal formation free energy.

    :math:`U^* = -(a_b - a_a)/(n_b - n_a)` from the kernel's :func:`~ecatlab.che.kernel.onset_potentials`;
    NaN when the two states exchange no electrons (their order then does not depend on U).
    ``pH`` may be an array (one potential per pH).
    """
    sc = check_scale(scale)
    t = check_temperature(temperature)
    st = _as_states(states, t)
    _check_surfaces(st, [surface])
    labels = st.states
    for s in (state_a, state_b):
        if s not in labels:
            raise SurfaceStateError(st.source, f"no state {s!r}; states: {labels}", column="state")
    a, n = _affine(st, pH, sc, t, [surface])
    i, j = labels.index(state_a), labels.index(state_b)
    da = a[0, :, j] - a[0, :, i]
    dn = np.array([n[j] - n[i]])
    u = kernel.onset_potentials(da[:, None], dn)[:, 0]
    return float(u[0]) if np.ndim(pH) == 0 else u


def water_stability_lines(pH, scale: str = "RHE", temperature: float = STANDARD_TEMPERATURE, references: ReferenceScheme | None = None) -> pd.DataFrame:
    """Equilibrium potentials of H2 evolution (2 H+ + 2 e- -> H2(g)) and O2 evolution
    (O2(g) + 4 H+ + 4 e- -> 2 H2O(l)) versus pH, V on ``scale`` (from the engine's
    :func:`~ecatlab.che.engine.equilibrium_potential`). Water is thermodynamically stable between them."""
    from ecatlab.che.engine import equilibrium_potential

    ph = np.atleast_1d(np.asarray(pH, dtype=float))
    h2 = [equilibrium_potential("2 H+ + 2 e- -> H2(g)", scale, float(p), temperature, references) for p in ph]
    o2 = [equilibrium_potential("O2(g) + 4 H+ + 4 e- -> 2 H2O(l)", scale, float(p), temperature, references) for p in ph]
    out = pd.DataFrame({"pH": ph, "H2_evolution": h2, "O2_evolution": o2})
    out.attrs.update({"units": {"H2_evolution": f"V vs {check_scale(scale)}", "O2_evolution": f"V vs {check_scale(scale)}"}, "temperature": float(temperature)})
    return out


def limiting_potential_vs_pH(energies, pathways, surface: str, pH=None, scale: str = "RHE",
                             temperature: float = STANDARD_TEMPERATURE) -> pd.DataFrame:
    """The limiting potential of ``pathways`` on ``surface`` at several pH (for drawing it on a map).

    One :func:`ecatlab.limiting_potentials` evaluation per pH (default 0 to 14 in steps of 1);
    columns ``surface``, ``pathway``, ``pH``, ``limiting_potential`` (V vs ``scale``), ``scale``.
    """
    from ecatlab.che.engine import limiting_potentials
    from ecatlab.energies import as_energy_table

    table = as_energy_table(energies, temperature)
    ph = np.arange(0.0, 14.5, 1.0) if pH is None else np.atleast_1d(np.asarray(pH, dtype=float))
    parts = [limiting_potentials(table, pathways, pH=float(p), scale=scale, temperature=temperature, surfaces=[surface], on_missing="report")
             for p in ph]
    out = pd.concat(parts, ignore_index=True)[["surface", "pathway", "pH", "limiting_potential", "scale"]]
    out["surface"] = out["surface"].astype(str)
    out["pathway"] = out["pathway"].astype(str)
    out.attrs["units"] = {"limiting_potential": f"V vs {check_scale(scale)}"}
    return out


# ------------------------------------------------------------------------------------------------
# the flag on a limiting-potential table
# ------------------------------------------------------------------------------------------------
def flag_surface_states(limiting: pd.DataFrame, states, assumed: str | Mapping[str, str] = CLEAN, tolerance: float = 0.0) -> pd.DataFrame:
    """Add the surface state at each row's own limiting potential to a limiting-potential table.

    Parameters
    ----------
    limiting : DataFrame
        Output of :func:`ecatlab.limiting_potentials` (columns ``surface``, ``pathway``,
        ``limiting_potential``, ``pH``, ``scale``, ``temperature``).
    states : SurfaceStates, DataFrame or path
        Surface states (surfaces without states get empty flags).
    assumed : str or mapping pathway -> state
        The surface state the pathway's free energies assume (default the clean surface for every
        pathway: intermediates computed on an otherwise empty cell).
    tolerance : float
        eV per cell: the assumed state counts as stable when its formation free energy is within
        this of the lowest (default 0).

    Returns
    -------
    DataFrame
        A copy with the columns of :data:`SURFACE_FLAG_COLUMNS` appended (documented in
        ``.attrs["columns"]``). Rows whose U_L is NaN (missing data) get empty flags.
    """
    from ecatlab.errors import TableInputError

    need = ["surface", "pathway", "limiting_potential", "pH", "scale", "temperature"]
    lack = [c for c in need if c not in limiting.columns]
    if lack:
        raise TableInputError(f"flag_surface_states needs a limiting-potential table (ecatlab.limiting_potentials); columns {lack} are missing")
    st = states if isinstance(states, SurfaceStates) else read_surface_states(states)
    n_rows = len(limiting)
    state_col = np.full(n_rows, "", dtype=object)
    cov_col = np.full(n_rows, np.nan)
    margin_col = np.full(n_rows, np.nan)
    stable_col = pd.array([pd.NA] * n_rows, dtype="boolean")
    flag_col = np.full(n_rows, "", dtype=object)
    surf = limiting["surface"].astype(str).to_numpy()
    path = limiting["pathway"].astype(str).to_numpy()
    u_l = limiting["limiting_potential"].to_numpy(dtype=float)
    known = set(st.surfaces)
    ok = np.isfinite(u_l) & np.isin(surf, list(known))
    groups = limiting.loc[ok, ["pH", "scale", "temperature"]].astype({"scale": str}).drop_duplicates()
    for g in groups.itertuples(index=False):
        rows = np.flatnonzero(ok & (limiting["pH"].to_numpy(dtype=float) == g.pH) & (limiting["scale"].astype(str).to_numpy() == g.scale)
                              & (limiting["temperature"].to_numpy(dtype=float) == g.temperature))
        sts = st.at_temperature(g.temperature)
        a, n = _affine(sts, g.pH, check_scale(g.scale), float(g.temperature), list(surf[rows]))
        dG = kernel.step_free_energy(a[:, 0, :], n, u_l[rows])
        idx = _argmin_states(dG)
        best = np.take_along_axis(dG, idx[:, None], axis=1)[:, 0]
        labels = np.asarray(sts.states, dtype=object)
        cov = sts.coverage().reindex(index=list(surf[rows]), columns=sts.states).to_numpy()
        want = pd.Series(path[rows]).map(dict(assumed)).fillna(CLEAN).to_numpy(dtype=object) if isinstance(assumed, Mapping) \
            else np.full(len(rows), assumed, dtype=object)
        lacking = sorted(set(want) - set(sts.states))
        if lacking:
            raise SurfaceStateError(st.source, f"a pathway assumes state(s) {lacking}, which the state table lacks; states: {sts.states}", column="state")
        position = {name: i for i, name in enumerate(sts.states)}
        j = np.array([position[w] for w in want], dtype=np.int64)
        k = np.arange(len(rows))
        assumed_dG = dG[k, j]
        margin = assumed_dG - best
        stable = np.isfinite(assumed_dG) & (margin <= tolerance + 1e-12)
        state_col[rows] = labels[idx]
        cov_col[rows] = cov[k, idx]
        margin_col[rows] = np.where(np.isfinite(assumed_dG), margin, np.nan)
        stable_col[rows] = stable
        for m in np.flatnonzero(~stable):  # text only for the flagged rows
            name = labels[idx[m]] if "ML" in labels[idx[m]] else f"{labels[idx[m]]} ({cov[m, idx[m]]:g} ML)"
            flag_col[rows[m]] = (f"assumes {want[m]} but {name} is {margin[m]:.2f} eV per cell more stable at "
                                 f"U_L = {u_l[rows[m]]:.2f} V vs {g.scale}")
    out = limiting.copy()
    out["surface_state_at_U_L"] = state_col
    out["surface_state_coverage"] = cov_col
    out["assumed_state_margin"] = margin_col
    out["assumed_state_stable"] = stable_col
    out["surface_state_flag"] = flag_col
    cols = dict(out.attrs.get("columns", {}))
    cols.update(SURFACE_FLAG_COLUMNS)
    out.attrs["columns"] = cols
    out.attrs["surface_states"] = f"{st.describe()}; tolerance {tolerance:g} eV per cell"
    return out


# ------------------------------------------------------------------------------------------------
# report section
# ------------------------------------------------------------------------------------------------
def pourbaix_section(states, energies=None, pathways=(), *, pH: float = 0.0, scale: str = "RHE", temperature: float = STANDARD_TEMPERATURE,
                     surfaces: Iterable[str] | None = None, max_maps: int = 4, style: str = "double"):
    """A report section: surface Pourbaix maps (up to ``max_maps`` surfaces) and, with ``energies``
    and ``pathways``, the limiting-potential table flagged by :func:`flag_surface_states`."""
    import html as _html

    from ecatlab.plotting.pourbaix import plot_pourbaix
    from ecatlab.report import ReportSection, _svg_figure
    from ecatlab.tables import to_html

    st = _as_states(states, check_temperature(temperature))
    names = st.surfaces if surfaces is None else [s for s in ([surfaces] if isinstance(surfaces, str) else surfaces) if s in set(st.surfaces)]
    parts = [f"<p>Most stable surface state (clean, adsorbate coverages) versus potential and pH from {_html.escape(st.describe())}; "
             "formation free energies per cell with the CHE (Hansen, Rossmeisl &amp; Nørskov, PCCP 10, 3722 (2008)). "
             "Theoretical estimates; the states compared are only those in the table.</p>"]
    lp = None
    if energies is not None and pathways:
        from ecatlab.che.engine import limiting_potentials

        lp = flag_surface_states(limiting_potentials(energies, pathways, pH=pH, scale=scale, temperature=temperature), st)
    for s in names[:max_maps]:
        drawn = plot_pourbaix(pourbaix_map(st, s, scale=scale, temperature=temperature), limiting=lp, style=style)
        parts.append(_svg_figure(drawn, f"pourbaix-{s}", f"Surface Pourbaix diagram of {s} (V vs {check_scale(scale)}); dashed: water stability limits.", size="medium"))
    if lp is not None:
        shown = lp[["surface", "pathway", "limiting_potential", "surface_state_at_U_L", "surface_state_coverage", "assumed_state_margin", "surface_state_flag"]].copy()
        shown = shown[shown["surface"].astype(str).isin(names)].round(3).reset_index(drop=True)
        shown.attrs["caption"] = (f"Surface state at each pathway's own limiting potential (pH {pH:g}, {temperature:g} K, V vs {check_scale(scale)}): "
                                  "a flag means the pathway was computed on a surface that is not the stable one there.")
        shown.attrs["columns"] = {k: v for k, v in lp.attrs["columns"].items() if k in shown.columns}
        parts.append(to_html(shown))
    return ReportSection("Surface Pourbaix diagrams", "".join(parts), "surface-pourbaix")
