r"""Reaction networks: every route from a reactant to each product, the best route per surface,
onset potentials, product ranking and thermodynamic selectivity read-outs.

Model
-----
A **state** is what sits on the catalyst and what has been released so far: a multiset of
adsorbates (at most ``sites`` of them) and a multiset of molecules (the reactant not yet used,
released intermediates and products). Water and the proton-electron pairs are implicit: with the
conserved elements (all but H and O) fixed by the reactant, the water released and the number
``k`` of (H+ + e-) pairs added follow from the composition,

.. math::

    m_\mathrm{H_2O} = O_\mathrm{reactant} - O_\mathrm{state}, \qquad
    k = H_\mathrm{state} + 2\,m_\mathrm{H_2O} - H_\mathrm{reactant},

so a state is valid when its conserved elements equal the reactant's and :math:`m \ge 0`.
Compositions come from :class:`pymatgen.core.Composition` through
:attr:`ecatlab.notation.Species.elements`.

**Edges** are elementary steps, each built as an :class:`ecatlab.notation.Step` (so balance is
checked on construction, and :func:`build_network` re-checks the electron count against ``k``):

* electrochemical: one adsorbate ``X*`` (or the reactant molecule with a free site,
  ``CO2(g) + * + H+ + e- -> COOH*``) takes up one ``H+ + e-`` and becomes one or two species,
  optionally releasing ``H2O(l)``: ``COOH* + H+ + e- -> CO* + H2O(l)``,
  ``CH3O* + H+ + e- -> O* + CH4(g)``, ``OCHO* + H+ + e- -> * + HCOOH(aq)``;
* desorption ``X* -> * + M`` and adsorption ``M + * -> X*`` (same composition);
* optional coupling ``X* + Y* -> Z* + *`` (``coupling=True``, needs ``sites >= 2``).

Molecules released on the way (CO(g), CH2O(g)...) react again only after re-adsorbing; only
the reactant reacts straight from solution. Species made of hydrogen alone (H*, H2(g)) are left
out: hydrogen evolution is the competitor and is evaluated with the engine's HER pathways.

Costs and the best route
------------------------
Edge free energies come from the CHE engine (:func:`ecatlab.che.compile_steps` and
:meth:`~ecatlab.che.CompiledPathway.affine`, the same arrays :func:`~ecatlab.che.compile_pathway`
builds): :math:`\Delta G_e(U) = a_e + n_e U` on the chosen scale (eV). For a reduction route
*r* the cost is

.. math::

    c_r = \max_{e \in r,\ n_e \neq 0} a_e / n_e \quad [\mathrm{eV}], \qquad U_L(r) = -c_r / e,

and the best route minimises :math:`c_r` (a bottleneck, or minimax, path). Chemical steps do not
enter :math:`c_r`; their largest :math:`\Delta G` (eV, potential independent) is reported per
route and blocks a route only when it exceeds ``chemical_limit``. Ties (costs within
:data:`TIE_TOLERANCE_EV`) are broken, in this order, by the uphill chemical barrier
(``max(0, largest chemical dG)``: routes without a potential-independent barrier first), by the
next-largest electrochemical step, then the one after (a lexicographic minimax: of two routes
limited by the same step, the one whose other steps are easier wins), by fewer steps, and by the
route text in lexicographic order; the number of routes tied on the limiting potential is
reported.

All simple routes are enumerated once per (reactant, product) from the network structure; the
cost of every route on every surface is then one array operation over (surfaces, routes, steps).
An independent vectorised bottleneck relaxation (:meth:`NetworkAnalysis.bottleneck`) gives the
same minimum and the set of states reachable downhill at a potential.

Results are theoretical estimates (CHE thermodynamics, no kinetics).
"""

from __future__ import annotations

import itertools
from collections import Counter
from dataclasses import dataclass, field
from functools import cached_property
from typing import Iterable, Mapping, Sequence

import numpy as np
import pandas as pd

from ecatlab.constants import STANDARD_TEMPERATURE
from ecatlab.energies import EnergyTable, read_energies
from ecatlab.errors import EcatlabError, NotationError, PathwayError
from ecatlab.notation import Pathway, Species, Step
from ecatlab.references import ReferenceScheme

__all__ = [
    "NetworkState",
    "NetworkEdge",
    "ReactionNetwork",
    "NetworkAnalysis",
    "RankedRoute",
    "build_network",
    "best_route",
    "best_routes",
    "product_ranking",
    "selectivity",
    "edge_table",
    "ROUTE_COLUMNS",
    "RANKING_COLUMNS",
    "TIE_TOLERANCE_EV",
]

#: Two route costs closer than this (eV) are a tie.
TIE_TOLERANCE_EV = 1e-9
#: Default limit on the number of simple routes enumerated per (reactant, product).
MAX_ROUTES = 50_000
_WATER = "H2O(l)"
_NON_CONSERVED = ("H", "O")

#: Column documentation of :meth:`NetworkAnalysis.best_routes` (units in brackets).
ROUTE_COLUMNS: dict[str, str] = {
    "surface": "surface name",
    "reactant": "reactant molecule",
    "product": "product molecule",
    "rank": "1 = best route on this surface, 2 = runner-up, ... [-]",
    "limiting_potential": "U_L of the route: least negative potential at which every electrochemical step is downhill [V vs scale]",
    "determining_step": "potential-determining step of the route (equation)",
    "max_chemical_dG": "largest free energy of a chemical step of the route (potential independent); NaN if none [eV]",
    "uphill_chemical_steps": "chemical steps of the route with dG > 0 (potential-independent barriers); empty if none",
    "electrons": "proton-electron pairs per product formed [-]",
    "steps": "number of steps of the route [-]",
    "tied_routes": "number of other routes whose limiting potential equals this one within 1e-9 eV [-]",
    "available_routes": "routes to this product that the surface's data allow [-]",
    "route": "route name (the intermediates visited)",
    "route_steps": "the steps of the route in ecatlab notation, separated by '; '",
    "missing_species": "adsorbates lacking on this surface that block some routes; empty if none",
    "scale": "potential scale (RHE or SHE)",
    "pH": "pH [-]",
    "temperature": "temperature [K]",
}

#: Column documentation of :meth:`NetworkAnalysis.product_ranking`.
RANKING_COLUMNS: dict[str, str] = {
    "surface": "surface name",
    "product": "product molecule (H2(g) is hydrogen evolution)",
    "rank": "1 = product with the least negative onset potential on this surface [-]",
    "onset_potential": "limiting potential of the best route to the product [V vs scale]",
    "equilibrium_potential": "U_eq of the overall reaction [V vs scale]",
    "overpotential": "U_eq - onset_potential [V]",
    "electrons": "proton-electron pairs per product formed [-]",
    "determining_step": "potential-determining step of the best route",
    "max_chemical_dG": "largest chemical-step free energy on the best route; NaN if none [eV]",
    "route": "best route name, or the engine pathway key for hydrogen evolution",
    "scale": "potential scale (RHE or SHE)",
    "pH": "pH [-]",
    "temperature": "temperature [K]",
}


# ------------------------------------------------------------------------------------------------
# model
@dataclass(frozen=True)
class NetworkState:
    """One state of a reaction network.

    Attributes
    ----------
    adsorbates : tuple of str
        Adsorbate keys on the surface, sorted, repeated for multiplicity.
    molecules : tuple of str
        Molecule keys present (reactant not yet used, released species), sorted, repeated.
    electrons : int
        Proton-electron pairs added since the start state.
    water : int
        Water molecules released since the start state.
    """

    adsorbates: tuple[str, ...]
    molecules: tuple[str, ...]
    electrons: int
    water: int

    @property
    def label(self) -> str:
        """Readable label: adsorbates then molecules (``"O* + CH4(g)"``); ``"*"`` when empty."""
        parts = [_count_text(k, c) for k, c in Counter(self.adsorbates).items()]
        parts += [_count_text(k, c) for k, c in Counter(self.molecules).items()]
        return " + ".join(parts) if parts else "*"

    def __str__(self) -> str:
        return self.label


@dataclass(frozen=True)
class NetworkEdge:
    """One elementary step between two states.

    Attributes
    ----------
    source, target : int
        State indices in :attr:`ReactionNetwork.states`.
    step : Step
        The balanced step (spectator species omitted, as in the built-in pathways).
    kind : str
        ``"electrochemical"``, ``"desorption"``, ``"adsorption"`` or ``"coupling"``.
    """

    source: int
    target: int
    step: Step
    kind: str

    @property
    def is_electrochemical(self) -> bool:
        return self.kind == "electrochemical"


def _count_text(key: str, count: int) -> str:
    return f"{count} {key}" if count > 1 else key


@dataclass(frozen=True)
class ReactionNetwork:
    """States and elementary steps reachable from a reactant (see the module docstring).

    Build it with :func:`build_network`. The object holds structure only; energies enter through
    :class:`NetworkAnalysis`.

    Attributes
    ----------
    reactant : str
        Reactant molecule key (``"CO2(g)"``).
    reactant_count : int
        Reactant molecules in the start state.
    states : tuple of NetworkState
        ``states[start]`` is the start state.
    edges : tuple of NetworkEdge
    adsorbates : tuple of str
        Adsorbates the network may use.
    molecules : tuple of str
        Molecules the network may release.
    sites : int
        Adsorption sites of the model.
    notes : tuple of str
        What was left out and why.
    """

    reactant: str
    reactant_count: int
    states: tuple[NetworkState, ...]
    edges: tuple[NetworkEdge, ...]
    adsorbates: tuple[str, ...]
    molecules: tuple[str, ...]
    sites: int = 1
    start: int = 0
    notes: tuple[str, ...] = ()
    _routes: dict = field(default_factory=dict, compare=False, repr=False)

    # -- structure ---------------------------------------------------------------------------------
    @cached_property
    def _state_index(self) -> dict[NetworkState, int]:
        return {s: i for i, s in enumerate(self.states)}

    @property
    def used_adsorbates(self) -> tuple[str, ...]:
        """Adsorbates that appear in at least one edge, in :attr:`adsorbates` order."""
        used = {sp.key for e in self.edges for sp in e.step.species if sp.is_adsorbate}
        return tuple(a for a in self.adsorbates if a in used)

    @property
    def products(self) -> tuple[str, ...]:
        """Products that some route reaches: molecules whose state holds nothing else.

        ``"H2O(l)"`` appears when the clean surface with only water released is reachable (ORR).
        """
        out = []
        for i, s in enumerate(self.states):
            if s.adsorbates or i == self.start:
                continue
            kinds = set(s.molecules)
            if not kinds:
                out.append(_WATER)
            elif len(kinds) == 1 and self.reactant not in kinds:
                out.append(s.molecules[0])
        return tuple(sorted(set(out), key=lambda k: (self._product_state_raw(k).electrons, k)))

    def _product_state_raw(self, product: str) -> NetworkState:
        for i, s in enumerate(self.states):
            if i == self.start or s.adsorbates:
                continue
            if product == _WATER and not s.molecules:
                return s
            if s.molecules and set(s.molecules) == {product}:
                return s
        raise PathwayError(
            f"no route from {self.reactant} to {product} in this network; products it reaches: "
            f"{', '.join(self.products) or 'none'}. Check the adsorbates allowed and the molecules known"
        )

    def product_state(self, product: str) -> int:
        """Index of the state holding only ``product`` (clean surface)."""
        key = _molecule_key(product, self.molecules + (_WATER,))
        return self._state_index[self._product_state_raw(key)]

    def resolve_product(self, product: str) -> str:
        """Canonical key of a product given as ``"CH4"`` or ``"CH4(g)"``."""
        return _molecule_key(product, self.molecules + (_WATER,))

    def edge_frame(self) -> pd.DataFrame:
        """Edges as a table: ``source``, ``target`` (state labels), ``step``, ``kind``, ``electrons``."""
        return pd.DataFrame(
            {
                "source": [self.states[e.source].label for e in self.edges],
                "target": [self.states[e.target].label for e in self.edges],
                "step": [e.step.equation for e in self.edges],
                "kind": [e.kind for e in self.edges],
                "electrons": [e.step.electrons_transferred + 0.0 for e in self.edges],
            }
        )

    def to_networkx(self):
        """The network as a :class:`networkx.MultiDiGraph` (nodes: state indices with ``label``,
        ``electrons``; edges keyed by edge index with ``step`` and ``kind``)."""
        import networkx as nx

        g = nx.MultiDiGraph(reactant=self.reactant)
        for i, s in enumerate(self.states):
            g.add_node(i, label=s.label, electrons=s.electrons)
        for j, e in enumerate(self.edges):
            g.add_edge(e.source, e.target, key=j, step=e.step.equation, kind=e.kind)
        return g

    # -- routes (structure only) -------------------------------------------------------------------
    def routes(self, product: str, max_routes: int = MAX_ROUTES) -> tuple[tuple[int, ...], ...]:
        """All simple routes (tuples of edge indices) from the start to ``product``.

        Sorted by (number of steps, route text), which is the final tie-breaking order.

        Raises
        ------
        PathwayError
            If there are more than ``max_routes`` routes; restrict the network (``allow=``,
            ``forbid=``) or raise the limit.
        """
        target = self.product_state(product)
        cache_key = (target, max_routes)
        if cache_key in self._routes:
            return self._routes[cache_key]
        out_edges: dict[int, list[int]] = {}
        for j, e in enumerate(self.edges):
            out_edges.setdefault(e.source, []).append(j)
        routes: list[tuple[int, ...]] = []
        # iterative depth-first search over simple paths (no state visited twice)
        stack: list[tuple[int, tuple[int, ...], frozenset]] = [(self.start, (), frozenset([self.start]))]
        while stack:
            node, path, seen = stack.pop()
            if node == target:
                routes.append(path)
                if len(routes) > max_routes:
                    raise PathwayError(
                        f"more than {max_routes} routes from {self.reactant} to {product}; restrict the network "
                        "with allow=[...] or forbid=[...], or raise max_routes"
                    )
                continue
            for j in out_edges.get(node, ()):
                nxt = self.edges[j].target
                if nxt not in seen:
                    stack.append((nxt, path + (j,), seen | {nxt}))
        texts = {r: " ; ".join(self.edges[j].step.equation for j in r) for r in routes}
        ordered = tuple(sorted(routes, key=lambda r: (len(r), texts[r])))
        self._routes[cache_key] = ordered
        return ordered

    def route_pathway(self, route: Sequence[int], name: str | None = None, description: str = "") -> Pathway:
        """The route as an ordinary :class:`~ecatlab.notation.Pathway` (state labels from the network)."""
        steps = tuple(self.edges[j].step for j in route)
        labels = [self.states[self.edges[route[0]].source].label] + [self.states[self.edges[j].target].label for j in route]
        if name is None:
            name = self.route_name(route)
        return Pathway(name, steps, description, tuple(labels))

    def route_name(self, route: Sequence[int]) -> str:
        """``"CO2(g)->CH4(g) via COOH*>CO*>..."``: reactant, product and intermediate states."""
        first = self.states[self.edges[route[0]].source]
        last = self.states[self.edges[route[-1]].target]
        mids = [self.states[self.edges[j].target].label for j in route[:-1]]
        return f"{first.label}->{last.label} via {'>'.join(mids)}" if mids else f"{first.label}->{last.label}"

    def __repr__(self) -> str:
        return (
            f"ReactionNetwork({self.reactant}: {len(self.states)} states, {len(self.edges)} steps, "
            f"products {', '.join(self.products)})"
        )


# ------------------------------------------------------------------------------------------------
# construction
_PHASE_PREFERENCE = ("aq", "g", "l")


def _builtin_phases() -> dict[str, str]:
    """Formula -> phase used by the built-in pathways (e.g. HCOOH -> aq, CH4 -> g)."""
    from ecatlab.pathways import BUILTIN_PATHWAYS, pathway

    out: dict[str, str] = {}
    for key in BUILTIN_PATHWAYS:
        for sp in pathway(key).molecules:
            out.setdefault(sp.formula, sp.phase)
    return out


def default_molecules(scheme: ReferenceScheme) -> tuple[str, ...]:
    """One phase per molecule known to ``scheme`` (water and H2 excluded).

    The phase is the one used by the built-in pathways (CO(g), HCOOH(aq), CH3OH(aq), CH4(g),
    NH3(g), H2O2(aq)...), else aqueous, else gas, else liquid.
    """
    builtin = _builtin_phases()
    by_formula: dict[str, list[str]] = {}
    for key in scheme.known_molecules():
        sp = Species.parse(key)
        if sp.formula == "H2O" or set(sp.elements) <= {"H"}:
            continue
        by_formula.setdefault(sp.formula, []).append(sp.phase)
    out = []
    for formula, phases in sorted(by_formula.items()):
        if builtin.get(formula) in phases:
            phase = builtin[formula]
        else:
            phase = next(p for p in _PHASE_PREFERENCE if p in phases)
        out.append(f"{formula}({phase})")
    return tuple(out)


def _molecule_key(text: str, candidates: Iterable[str]) -> str:
    """Match ``"CH4"``/``"CH4(g)"`` (or a composition such as ``"CH4O"``) against candidate keys."""
    cands = list(candidates)
    raw = str(text).strip()
    try:
        sp = Species.parse(raw)
        if sp.is_molecule:
            if sp.key in cands:
                return sp.key
            raise PathwayError(
                f"molecule {sp.key} is not in this network; known here: {', '.join(cands)}. Pass it in "
                "molecules=[...] (and give its free energy with ReferenceScheme(overrides=...) if it is not tabulated)"
            )
    except NotationError:
        pass
    by_formula = [c for c in cands if Species.parse(c).formula == raw]
    if len(by_formula) == 1:
        return by_formula[0]
    try:
        from ecatlab.notation import _element_counts

        target = dict(_element_counts(raw))
    except NotationError:
        target = None
    if target is not None and not by_formula:
        by_comp = [c for c in cands if Species.parse(c).elements == target]
        if len(by_comp) == 1:
            return by_comp[0]
        by_formula = by_comp
    if len(by_formula) > 1:
        raise PathwayError(f"{raw!r} is ambiguous: {', '.join(by_formula)}; write the phase, e.g. {by_formula[0]!r}")
    raise PathwayError(f"no molecule {raw!r} here; known: {', '.join(cands)}")


def _parse_reactant(text: str) -> tuple[str, int]:
    raw = str(text).strip()
    count = 1
    parts = raw.split(None, 1)
    if len(parts) == 2 and parts[0].isdigit():
        count, raw = int(parts[0]), parts[1]
    return raw, count


def build_network(
    species,
    reactant: str = "CO2",
    *,
    molecules: Iterable[str] | None = None,
    allow: Iterable[str] | None = None,
    forbid: Iterable[str | Step] = (),
    sites: int = 1,
    coupling: bool = False,
    scheme: ReferenceScheme | None = None,
) -> ReactionNetwork:
    """Enumerate the states and elementary steps reachable from ``reactant``.

    Parameters
    ----------
    species : EnergyTable or iterable of str
        The adsorbates that may appear (an energy table contributes all its adsorbates).
    reactant : str
        Reactant molecule, e.g. ``"CO2"``, ``"N2(g)"``, ``"O2"``; ``"2 CO2"`` starts with two.
    molecules : iterable of str, optional
        Molecules the network may release (default: one phase of every molecule the reference
        scheme knows, see :func:`default_molecules`).
    allow : iterable of str, optional
        Only these adsorbates are used (e.g. ``["COOH*", "CO*"]``).
    forbid : iterable of str or Step
        Steps to leave out, written in ecatlab notation; matched by net stoichiometry.
    sites : int
        Adsorption sites (1: one adsorbate at a time, as in the built-in pathways).
    coupling : bool
        Add chemical coupling steps ``X* + Y* -> Z* + *`` where ``Z*`` is an allowed adsorbate
        (needs ``sites >= 2``).
    scheme : ReferenceScheme, optional
        Source of the known molecules (default: the table's scheme, or the default scheme).

    Returns
    -------
    ReactionNetwork

    Raises
    ------
    PathwayError
        Unknown reactant, adsorbates outside the table, a forbidden step that is not in the network.
    """
    if isinstance(species, EnergyTable):
        scheme = scheme or species.scheme
        pool = list(species.species)
    else:
        pool = [Species.parse(s).key if isinstance(s, str) else s.key for s in species]
    scheme = scheme or ReferenceScheme()
    if sites < 1:
        raise PathwayError(f"sites must be at least 1, got {sites}")
    if coupling and sites < 2:
        raise PathwayError("coupling steps X* + Y* -> Z* + * need two adsorbates at once; pass sites=2")
    for key in pool:
        if not Species.parse(key).is_adsorbate:
            raise PathwayError(f"{key!r} is not an adsorbate (adsorbates end in '*')")
    if allow is not None:
        allowed = [Species.parse(a).key for a in allow]
        unknown = [a for a in allowed if a not in pool]
        if unknown:
            raise PathwayError(f"allowed adsorbate(s) {unknown} have no energies in the table; known: {', '.join(pool)}")
        pool = [a for a in pool if a in allowed]
    notes = []
    known = default_molecules(scheme) if molecules is None else tuple(molecules)
    mol_keys = []
    for m in known:
        sp = Species.parse(m)
        if not sp.is_molecule:
            raise PathwayError(f"{m!r} is not a molecule; write it with its phase, e.g. 'CH4(g)'")
        try:
            scheme.molecule_free_energy(sp)
        except EcatlabError as exc:
            raise PathwayError(f"molecule {sp.key}: {exc}") from None
        mol_keys.append(sp.key)
    r_text, r_count = _parse_reactant(reactant)
    r_key = _molecule_key(r_text, sorted(set(mol_keys) | set(default_molecules(scheme)) | set(scheme.references) - {_WATER}))
    r_el = {el: n * r_count for el, n in Species.parse(r_key).elements.items()}
    conserved = {el: n for el, n in r_el.items() if el not in _NON_CONSERVED}

    def fits(elements: Mapping[str, float]) -> bool:
        if any(el not in r_el and el not in _NON_CONSERVED for el in elements):
            return False
        if any(elements.get(el, 0.0) > n + 1e-9 for el, n in conserved.items()):
            return False
        return elements.get("O", 0.0) <= r_el.get("O", 0.0) + 1e-9

    def carries_conserved(elements: Mapping[str, float]) -> bool:
        return not conserved or any(el in conserved for el in elements)

    hydrogen_only = [a for a in pool if set(Species.parse(a).elements) <= {"H"}]
    if hydrogen_only:
        notes.append(f"left out {', '.join(hydrogen_only)}: hydrogen evolution is evaluated separately with the engine's HER pathways")
    ads = tuple(a for a in pool if a not in hydrogen_only and fits(Species.parse(a).elements))
    mols = tuple(
        m for m in dict.fromkeys(mol_keys)
        if m != r_key and fits(Species.parse(m).elements) and carries_conserved(Species.parse(m).elements)
        and not set(Species.parse(m).elements) <= {"H"}
    )
    comp = {k: _vec(Species.parse(k).elements) for k in ads + mols + (r_key,)}

    def state_of(adsorbates: Iterable[str], molecules_: Iterable[str]) -> NetworkState | None:
        a = tuple(sorted(adsorbates))
        m = tuple(sorted(molecules_))
        total: Counter = Counter()
        for k in a + m:
            total.update(comp[k])
        for el, n in conserved.items():
            if abs(total.get(el, 0.0) - n) > 1e-9:
                return None
        water = r_el.get("O", 0.0) - total.get("O", 0.0)
        electrons = total.get("H", 0.0) + 2 * water - r_el.get("H", 0.0)
        if water < -1e-9 or electrons < -1e-9:
            return None
        return NetworkState(a, m, int(round(electrons)), int(round(water)))

    start = state_of((), (r_key,) * r_count)
    assert start is not None and start.electrons == 0
    # products by composition: candidate lists of one or two species per composition
    singles: dict[tuple, list[str]] = {}
    for k in ads + mols:
        singles.setdefault(_freeze(comp[k]), []).append(k)
    units = ads + mols
    pairs: dict[tuple, list[tuple[str, str]]] = {}
    for x, y in itertools.combinations_with_replacement(units, 2):
        if Species.parse(x).is_molecule and Species.parse(y).is_molecule:
            continue  # one step releases at most one molecule besides water
        total = Counter(comp[x])
        total.update(comp[y])
        pairs.setdefault(_freeze(total), []).append((x, y))
    water_vec = _vec({"H": 2.0, "O": 1.0})
    h_vec = _vec({"H": 1.0})

    forbidden = {}
    for f in forbid:
        step = f if isinstance(f, Step) else Step.parse(f)
        forbidden[_net_key(step)] = step.equation
    used_forbidden: set = set()

    states: list[NetworkState] = [start]
    index = {start: 0}
    edges: list[NetworkEdge] = []
    seen_edges: set = set()
    queue = [0]

    def add(src: int, new_ads, new_mols, step_text: str, kind: str, delta_e: int) -> None:
        target = state_of(new_ads, new_mols)
        if target is None:
            return
        src_state = states[src]
        if target.electrons != src_state.electrons + delta_e:
            raise PathwayError(f"internal check failed: {step_text!r} changes the electron count inconsistently")
        step = Step.parse(step_text)  # checks element, charge and site balance
        if abs(step.electrons_transferred - delta_e) > 1e-9:
            raise PathwayError(f"internal check failed: {step_text!r} transfers {step.electrons_transferred} e-")
        nk = _net_key(step)
        if nk in forbidden:
            used_forbidden.add(nk)
            return
        if target not in index:
            index[target] = len(states)
            states.append(target)
            queue.append(index[target])
        tgt = index[target]
        key = (src, tgt, nk)
        if key in seen_edges:
            return
        seen_edges.add(key)
        edges.append(NetworkEdge(src, tgt, step, kind))

    while queue:
        src = queue.pop(0)
        st = states[src]
        free = sites - len(st.adsorbates)
        # electrochemical steps of one adsorbate or of the reactant molecule (with a free site)
        movers = [(a, True) for a in dict.fromkeys(st.adsorbates)]
        if r_key in st.molecules and free >= 1:
            movers.append((r_key, False))
        for unit, is_ads in movers:
            rest_ads = list(st.adsorbates)
            rest_mols = list(st.molecules)
            (rest_ads if is_ads else rest_mols).remove(unit)
            site_budget = free + (1 if is_ads else 0)
            for q in (0, 1):
                target_vec = Counter(comp[unit])
                target_vec.update(h_vec)
                if q:
                    target_vec.subtract(water_vec)
                if any(v < -1e-9 for v in target_vec.values()):
                    continue
                fz = _freeze(target_vec)
                options: list[tuple[str, ...]] = [(k,) for k in singles.get(fz, [])] + list(pairs.get(fz, []))
                if not any(abs(v) > 1e-9 for v in target_vec.values()):
                    options.append(())  # e.g. OH* + H+ + e- -> * + H2O(l)
                for prods in options:
                    p_ads = [p for p in prods if p in comp and Species.parse(p).is_adsorbate]
                    p_mols = [p for p in prods if p not in p_ads]
                    if len(p_ads) > site_budget:
                        continue
                    if not is_ads and not p_ads:
                        continue  # the reactant must bind to the surface
                    text = _step_text([unit], 0 if is_ads else 1, True, p_ads, p_mols, q)
                    add(src, rest_ads + p_ads, rest_mols + p_mols, text, "electrochemical", 1)
        # desorption X* -> * + M
        for a in dict.fromkeys(st.adsorbates):
            for m in singles.get(_freeze(comp[a]), []):
                if m in mols:
                    rest = list(st.adsorbates)
                    rest.remove(a)
                    add(src, rest, list(st.molecules) + [m], f"{a} -> * + {m}", "desorption", 0)
        # adsorption M + * -> X*
        if free >= 1:
            for m in dict.fromkeys(st.molecules):
                for a in singles.get(_freeze(comp[m]), []):
                    if a in ads:
                        rest = list(st.molecules)
                        rest.remove(m)
                        add(src, list(st.adsorbates) + [a], rest, f"{m} + * -> {a}", "adsorption", 0)
        # coupling X* + Y* -> Z* + *
        if coupling and len(st.adsorbates) >= 2:
            for i, j in itertools.combinations(range(len(st.adsorbates)), 2):
                x, y = st.adsorbates[i], st.adsorbates[j]
                total = Counter(comp[x])
                total.update(comp[y])
                for z in singles.get(_freeze(total), []):
                    if z in ads:
                        rest = [a for k, a in enumerate(st.adsorbates) if k not in (i, j)]
                        left = f"2 {x}" if x == y else f"{x} + {y}"
                        add(src, rest + [z], list(st.molecules), f"{left} -> {z} + *", "coupling", 0)

    unused = [text for k, text in forbidden.items() if k not in used_forbidden]
    if unused:
        raise PathwayError(f"forbidden step(s) {unused} do not occur in the network from {r_key}; check the spelling (ecatlab notation)")
    if forbidden:
        notes.append(f"left out by request: {'; '.join(forbidden.values())}")
    return ReactionNetwork(r_key, r_count, tuple(states), tuple(edges), ads, mols, sites, 0, tuple(notes))


def _vec(elements: Mapping[str, float]) -> Counter:
    return Counter({k: float(v) for k, v in elements.items()})


def _freeze(vec: Mapping[str, float]) -> tuple:
    return tuple(sorted((k, round(float(v), 9)) for k, v in vec.items() if abs(v) > 1e-9))


def _net_key(step: Step) -> frozenset:
    return frozenset((sp.key, round(c, 9)) for sp, c in step.net().items())


def _step_text(units: Sequence[str], extra_sites_in: int, electrochemical: bool, p_ads: Sequence[str], p_mols: Sequence[str], water: int) -> str:
    left = list(units)
    sites_in = sum(1 for u in units if u.endswith("*")) + extra_sites_in
    sites_out = len(p_ads)
    free_in = extra_sites_in + max(0, sites_out - sites_in)
    if free_in:
        left.append("*" if free_in == 1 else f"{free_in} *")
    sites_in += max(0, sites_out - sites_in)
    if electrochemical:
        left += ["H+", "e-"]
    right: list[str] = []
    for k, c in Counter(p_ads).items():
        right.append(_count_text(k, c))
    if sites_in > sites_out:
        right.append("*" if sites_in - sites_out == 1 else f"{sites_in - sites_out} *")
    right += list(p_mols)
    if water:
        right.append(_WATER)
    return f"{' + '.join(left)} -> {' + '.join(right)}"


# ------------------------------------------------------------------------------------------------
# analysis
@dataclass(frozen=True)
class RankedRoute:
    """One route on one surface with its numbers.

    Attributes
    ----------
    pathway : Pathway
    rank : int
        1 = best.
    limiting_potential : float
        V vs the analysis scale.
    max_chemical_dG : float
        eV; NaN if the route has no chemical step.
    determining_step : str
    """

    pathway: Pathway
    rank: int
    limiting_potential: float
    max_chemical_dG: float
    determining_step: str


class NetworkAnalysis:
    """Free energies of every network step on every surface, and what follows from them.

    Parameters
    ----------
    network : ReactionNetwork
    energies : EnergyTable, DataFrame or path
        Adsorption free energies (eV).
    pH : float
    scale : {"RHE", "SHE"}
        Scale of every potential returned (V).
    temperature : float
        K.
    surfaces : list of str, optional
        Subset and order of surfaces (default: all).
    chemical_limit : float, optional
        Chemical steps with dG above this (eV) are treated as blocked; ``None`` (default) keeps
        every chemical step and reports its dG.
    """

    def __init__(
        self,
        network: ReactionNetwork,
        energies,
        pH: float = 0.0,
        scale: str = "RHE",
        temperature: float = STANDARD_TEMPERATURE,
        surfaces: Iterable[str] | None = None,
        chemical_limit: float | None = None,
    ):
        from ecatlab import che

        self.network = network
        self.table = energies if isinstance(energies, EnergyTable) else read_energies(energies)
        if np.ndim(pH) != 0:
            raise EcatlabError("NetworkAnalysis takes one pH value")
        self.scale = che._check_conditions(scale, pH, temperature)
        self.pH = float(pH)
        self.temperature = float(temperature)
        self.surfaces = che._select_surfaces(self.table, surfaces)
        self.chemical_limit = chemical_limit
        steps = [e.step for e in network.edges]
        self.compiled = che.compile_steps(steps, network.adsorbates, self.table.scheme)
        values = self.table.values(self.surfaces, network.adsorbates)
        missing = np.isnan(values)
        # a missing adsorbate must not spoil the other steps through the matrix product
        a, n = self.compiled.affine(np.where(missing, 0.0, values), self.pH, self.scale, self.temperature)
        a = np.asarray(a, dtype=float).reshape(len(self.surfaces), len(steps))
        uses = (np.abs(self.compiled.adsorbate_stoichiometry) > 0).astype(float)  # (n_edges, n_adsorbates)
        a[(missing.astype(float) @ uses.T) > 0] = np.nan
        #: a_e (eV): dG of every edge at U = 0 on the scale, shape (n_surfaces, n_edges); NaN = missing data.
        self.a = a
        #: electrons n_e of every edge (reduction positive).
        self.n = np.asarray(n, dtype=float)
        self.electrochemical = np.abs(self.n) > 1e-12
        self._missing = missing
        ec = self.electrochemical
        with np.errstate(invalid="ignore", divide="ignore"):
            w = np.where(ec, self.a / np.where(ec, self.n, 1.0), -np.inf)
        if chemical_limit is not None:
            w = np.where(~ec & (self.a > chemical_limit), np.inf, w)
        #: bottleneck weight of every edge (eV): a_e/n_e for electrochemical steps, -inf for chemical
        #: steps (+inf when above chemical_limit), +inf where data are missing.
        self.weight = np.where(np.isnan(self.a), np.inf, w)
        self._route_cache: dict = {}

    # -- per-edge table ----------------------------------------------------------------------------
    def edge_table(self, potential: float = 0.0) -> pd.DataFrame:
        """Every step with its dG on every surface at ``potential`` (V on the scale), long form.

        Columns ``surface``, ``source``, ``target``, ``step``, ``kind``, ``electrons``, ``dG`` (eV),
        ``onset_potential`` (-a/n for electrochemical steps, V; NaN for chemical steps).
        """
        base = self.network.edge_frame()
        dG = self.a + self.n * float(potential)
        with np.errstate(invalid="ignore", divide="ignore"):
            onset = np.where(self.electrochemical, -self.a / np.where(self.electrochemical, self.n, 1.0), np.nan)
        frames = []
        for i, s in enumerate(self.surfaces):
            f = base.copy()
            f.insert(0, "surface", s)
            f["dG"] = dG[i]
            f["onset_potential"] = onset[i]
            frames.append(f)
        out = pd.concat(frames, ignore_index=True)
        out["potential"] = float(potential)
        out["scale"] = self.scale
        out["pH"] = self.pH
        out.attrs.update(self._attrs(f"step free energies at U = {potential:g} V vs {self.scale}"))
        return out

    # -- routes --------------------------------------------------------------------------------------
    def _route_arrays(self, product: str):
        key = self.network.resolve_product(product)
        if key in self._route_cache:
            return self._route_cache[key]
        routes = self.network.routes(key)
        R = len(routes)
        L = max(len(r) for r in routes)
        E = len(self.network.edges)
        pad = np.full((R, L), E, dtype=int)  # sentinel column E
        for i, r in enumerate(routes):
            pad[i, : len(r)] = r
        S = len(self.surfaces)
        w = np.concatenate([self.weight, np.full((S, 1), -np.inf)], axis=1)
        chem_a = np.where(self.electrochemical, -np.inf, np.where(np.isnan(self.a), np.inf, self.a))
        chem_a = np.concatenate([chem_a, np.full((S, 1), -np.inf)], axis=1)
        cost_steps = w[:, pad]  # (S, R, L)
        cost = cost_steps.max(axis=2)
        det = np.take_along_axis(pad[None, :, :].repeat(S, axis=0), cost_steps.argmax(axis=2)[..., None], axis=2)[..., 0]
        chem = chem_a[:, pad].max(axis=2)
        chem = np.where(np.isneginf(chem), np.nan, chem)
        # ordering per surface: cost, then the uphill chemical barrier, then the next-largest
        # electrochemical steps (lexicographic minimax), then structural order (fewer steps, text)
        chem_key = np.where(np.isnan(chem), -np.inf, chem)
        cost_r = _quantise(cost)
        descending = -np.sort(-cost_steps, axis=2)  # (S, R, L), largest first; -inf pads short routes
        barrier_r = _quantise(np.maximum(chem_key, 0.0))  # uphill chemical barrier, 0 if none
        structural = np.broadcast_to(np.arange(R), (S, R))
        keys = [structural] + [_quantise(descending[:, :, k]) for k in range(L - 1, 0, -1)] + [barrier_r, cost_r]
        order = np.lexsort(keys, axis=-1)
        result = (routes, cost, det, chem, order, cost_r)
        self._route_cache[key] = result
        return result

    def route_costs(self, product: str) -> pd.DataFrame:
        """Cost c_r = max over electrochemical steps of a_e/n_e (eV) of every route on every surface.

        Index: surface; columns: route names; +inf where a route is unavailable (missing data or a
        chemical step above ``chemical_limit``). The limiting potential is -c_r (V).
        """
        routes, cost, *_ = self._route_arrays(product)
        return pd.DataFrame(cost, index=pd.Index(self.surfaces, name="surface"), columns=[self.network.route_name(r) for r in routes])

    def best_route_arrays(self, product: str) -> tuple[np.ndarray, np.ndarray, np.ndarray, tuple[str, ...]]:
        """Best route to ``product`` on every surface as arrays (vectorised, no tables).

        Returns
        -------
        onset : ndarray (n_surfaces,)
            Limiting potential of the best route, V on the scale; NaN where no route has data.
        max_chemical_dG : ndarray (n_surfaces,)
            Largest chemical-step dG of the best route, eV; NaN if it has none (or no route).
        route : ndarray of int (n_surfaces,)
            Index of the best route into ``names``; -1 where no route has data.
        names : tuple of str
            Route names (:meth:`ReactionNetwork.route_name`) in enumeration order.

        Same ordering and tie-breaking as :meth:`best_routes` (rank 1).
        """
        key = self.network.resolve_product(product)
        routes, cost, _det, chem, order, _ = self._route_arrays(key)
        rows = np.arange(len(self.surfaces))
        r = order[:, 0]
        c = cost[rows, r]
        ok = np.isfinite(c)
        names = tuple(self.network.route_name(x) for x in routes)
        return np.where(ok, -c, np.nan), np.where(ok, chem[rows, r], np.nan), np.where(ok, r, -1), names

    def best_routes(self, product: str, top: int = 1) -> pd.DataFrame:
        """Best route (and ``top - 1`` runners-up) to ``product`` on every surface.

        Returns
        -------
        DataFrame
            One row per (surface, rank); columns documented in :data:`ROUTE_COLUMNS`.
        """
        key = self.network.resolve_product(product)
        routes, cost, det, chem, order, cost_r = self._route_arrays(key)
        S, R = cost.shape
        top = max(1, min(int(top), R))
        available = np.isfinite(cost).sum(axis=1)
        net = self.network
        product_state = net.states[net.product_state(key)]
        names = np.array([net.route_name(r) for r in routes] + ["no route with complete data"], dtype=object)
        texts = np.array(["; ".join(net.edges[j].step.equation for j in r) for r in routes] + [""], dtype=object)
        lengths = np.array([len(r) for r in routes] + [0])
        equations = np.array([e.step.equation for e in net.edges], dtype=object)
        frames = []
        for rank in range(top):
            r = order[:, rank]
            rows = np.arange(S)
            c = cost[rows, r]
            ok = np.isfinite(c)
            keep = ok | (rank == 0)
            rr = np.where(ok, r, R)  # R: the "no route" entries
            uphill = np.full(S, "", dtype=object)
            chem_here = chem[rows, r]
            for i in np.flatnonzero(ok & (chem_here > 0)):  # only rows with a potential-independent barrier
                uphill[i] = "; ".join(
                    f"{equations[j]} ({self.a[i, j]:+.2f} eV)" for j in routes[r[i]] if not self.electrochemical[j] and self.a[i, j] > 0
                )
            with np.errstate(invalid="ignore"):  # inf - inf where routes are unavailable
                tie = (np.abs(cost_r - cost_r[rows, r][:, None]) <= 0.5 * TIE_TOLERANCE_EV).sum(axis=1) - 1
            frame = pd.DataFrame(
                {
                    "surface": self.surfaces,
                    "reactant": net.reactant,
                    "product": key,
                    "rank": rank + 1,
                    "limiting_potential": np.where(ok, -c, np.nan),
                    "determining_step": np.where(ok, equations[det[rows, r]], ""),
                    "max_chemical_dG": np.where(ok, chem_here, np.nan),
                    "uphill_chemical_steps": uphill,
                    "electrons": product_state.electrons / max(1, Counter(product_state.molecules).get(key, 1)),
                    "steps": lengths[rr],
                    "tied_routes": np.where(ok, tie, 0),
                    "available_routes": available,
                    "route": names[rr],
                    "route_steps": texts[rr],
                    "missing_species": self._missing_text(),
                    "scale": self.scale,
                    "pH": self.pH,
                    "temperature": self.temperature,
                }
            )
            frame["_order"] = np.arange(S) * top + rank
            frames.append(frame[keep])
        out = pd.concat(frames, ignore_index=True).sort_values("_order", kind="stable").drop(columns="_order").reset_index(drop=True)
        out = out[list(ROUTE_COLUMNS)]
        out.attrs.update(self._attrs(f"best routes {self.network.reactant} -> {key}"))
        out.attrs["columns"] = ROUTE_COLUMNS
        return out

    def ranked_routes(self, surface: str, product: str, top: int = 3) -> list[RankedRoute]:
        """The ``top`` best routes to ``product`` on one surface, as :class:`RankedRoute` objects."""
        i = self._surface_index(surface)
        key = self.network.resolve_product(product)
        routes, cost, det, chem, order, _ = self._route_arrays(key)
        out = []
        for rank, r in enumerate(order[i, : max(1, top)], start=1):
            if not np.isfinite(cost[i, r]):
                break
            desc = (
                f"rank {rank} route {self.network.reactant} -> {key} on {surface}: U_L = {-cost[i, r]:+.3f} V vs {self.scale} "
                f"at pH {self.pH:g} (network search)"
            )
            path = self.network.route_pathway(routes[r], description=desc)
            out.append(RankedRoute(path, rank, float(-cost[i, r]), float(chem[i, r]), self.network.edges[det[i, r]].step.equation))
        if not out:
            raise PathwayError(
                f"surface {surface!r}: no route to {key} has complete data (missing: {self._missing_text()[i] or 'none'}"
                + ("; or every route has a chemical step above chemical_limit" if self.chemical_limit is not None else "")
                + ")"
            )
        return out

    def best_route(self, surface: str, product: str) -> Pathway:
        """The best route to ``product`` on ``surface`` as a :class:`~ecatlab.notation.Pathway`."""
        return self.ranked_routes(surface, product, top=1)[0].pathway

    # -- independent bottleneck relaxation -------------------------------------------------------------
    def bottleneck(self) -> pd.DataFrame:
        """Least bottleneck cost (eV) from the start to every state on every surface.

        Computed by a vectorised Bellman-Ford relaxation over the edges,
        ``d[v] = min over edges u->v of max(d[u], w_e)``, all surfaces at once; independent of the
        route enumeration. A state is reachable with every electrochemical step downhill at U
        when ``d <= -U`` (reduction, V on the scale). Index: surface; columns: state labels;
        +inf = unreachable (with the data given), -inf = the start state.
        """
        S, V = len(self.surfaces), len(self.network.states)
        src = np.array([e.source for e in self.network.edges], dtype=int)
        tgt = np.array([e.target for e in self.network.edges], dtype=int)
        d = np.full((V, S), np.inf)
        d[self.network.start] = -np.inf
        wT = self.weight.T
        for _ in range(V):
            cand = np.maximum(d[src], wT)
            new = d.copy()
            np.minimum.at(new, tgt, cand)
            if np.array_equal(new, d):
                break
            d = new
        return pd.DataFrame(d.T, index=pd.Index(self.surfaces, name="surface"), columns=[s.label for s in self.network.states])

    def reachable_states(self, potential: float) -> pd.DataFrame:
        """Which states are reachable from the start with every electrochemical step downhill at U.

        Parameters
        ----------
        potential : float
            U in V on the analysis scale.

        Returns
        -------
        DataFrame of bool, index surface, columns state labels. Chemical steps never block
        (unless ``chemical_limit`` is set).
        """
        b = self.bottleneck()
        out = b <= -float(potential) + TIE_TOLERANCE_EV
        out.attrs.update(self._attrs(f"states reachable downhill at U = {potential:g} V vs {self.scale}"))
        return out

    # -- products -----------------------------------------------------------------------------------
    def onset_potentials(self, products: Iterable[str] | None = None, her: str | None = "her-volmer-heyrovsky") -> pd.DataFrame:
        """Onset (limiting) potential of every product on every surface, V on the scale.

        Index: surface; columns: products (and ``"H2(g)"`` from the engine's HER pathway ``her``
        when given and H* is in the table).
        """
        prods = list(products) if products is not None else list(self.network.products)
        data = {}
        for p in prods:
            routes, cost, *_ = self._route_arrays(p)
            best = cost.min(axis=1)
            data[self.network.resolve_product(p)] = np.where(np.isfinite(best), -best, np.nan)
        out = pd.DataFrame(data, index=pd.Index(self.surfaces, name="surface"))
        h = self._her(her)
        if h is not None:
            out["H2(g)"] = h["limiting_potential"].to_numpy()
        out.attrs.update(self._attrs("onset potentials [V vs scale]"))
        return out

    def product_ranking(self, products: Iterable[str] | None = None, her: str | None = "her-volmer-heyrovsky") -> pd.DataFrame:
        """Products ranked per surface by onset potential (least negative first), HER included.

        Returns
        -------
        DataFrame
            Long form, columns in :data:`RANKING_COLUMNS`.
        """
        from ecatlab.che import equilibrium_potential

        prods = [self.network.resolve_product(p) for p in (products if products is not None else self.network.products)]
        frames = []
        for p in prods:
            best = self.best_routes(p, top=1)
            net = self.network
            st = net.states[net.product_state(p)]
            reaction = _overall_text(net.reactant, net.reactant_count, st)
            u_eq = equilibrium_potential(reaction, scale=self.scale, pH=self.pH, temperature=self.temperature, references=self.table.scheme)
            frames.append(
                pd.DataFrame(
                    {
                        "surface": best["surface"],
                        "product": p,
                        "onset_potential": best["limiting_potential"],
                        "equilibrium_potential": u_eq,
                        "overpotential": u_eq - best["limiting_potential"],
                        "electrons": best["electrons"],
                        "determining_step": best["determining_step"],
                        "max_chemical_dG": best["max_chemical_dG"],
                        "route": best["route"],
                    }
                )
            )
        h = self._her(her)
        if h is not None:
            frames.append(
                pd.DataFrame(
                    {
                        "surface": h["surface"].to_numpy(),
                        "product": "H2(g)",
                        "onset_potential": h["limiting_potential"].to_numpy(),
                        "equilibrium_potential": h["equilibrium_potential"].to_numpy(),
                        "overpotential": h["overpotential"].to_numpy(),
                        "electrons": h["electrons"].to_numpy(),
                        "determining_step": h["determining_step"].to_numpy(),
                        "max_chemical_dG": h["max_chemical_dG"].to_numpy(),
                        "route": h["pathway"].to_numpy(),
                    }
                )
            )
        out = pd.concat(frames, ignore_index=True)
        out["surface"] = pd.Categorical(out["surface"], categories=self.surfaces, ordered=True)
        out = out.sort_values(["surface", "onset_potential", "product"], ascending=[True, False, True], na_position="last", kind="stable")
        out["rank"] = out.groupby("surface", observed=True).cumcount() + 1
        out["surface"] = out["surface"].astype(str)
        out["scale"], out["pH"], out["temperature"] = self.scale, self.pH, self.temperature
        out = out[list(RANKING_COLUMNS)].reset_index(drop=True)
        out.attrs.update(self._attrs(f"product ranking from {self.network.reactant}"))
        out.attrs["columns"] = RANKING_COLUMNS
        return out

    def selectivity(self, potential: float = 0.0, her: str = "her-volmer-heyrovsky") -> pd.DataFrame:
        """Thermodynamic selectivity read-outs per surface at potential U (V on the scale).

        Columns: ``first_intermediate`` (the most stable state one H+ + e- from the reactant,
        e.g. COOH* or OCHO*), ``dG_first`` (its formation dG at U, eV), ``dG_H`` (dG of
        ``* + H+ + e- -> H*`` at U from the engine's ``her`` pathway, eV),
        ``first_intermediate_favoured`` (True when dG_first < dG_H: the surface binds the
        reactant's first intermediate more strongly than H), ``best_product`` and
        ``best_onset_potential`` (V), ``her_onset_potential`` (V), ``onset_margin_vs_her``
        (best_onset - her_onset, V; positive: the product needs a less negative potential than
        HER), ``products_reachable`` (products whose onset is at or above U).
        """
        from ecatlab.che import step_free_energies

        net = self.network
        first = [j for j, e in enumerate(net.edges) if e.source == net.start and self.electrochemical[j]]
        if not first:
            raise PathwayError(f"no electrochemical first step from {net.reactant} in this network")
        U = float(potential)
        dG_first_all = self.a[:, first] + self.n[first] * U
        filled = np.where(np.isnan(dG_first_all), np.inf, dG_first_all)
        k = filled.argmin(axis=1)
        dG_first = filled[np.arange(len(self.surfaces)), k]
        dG_first = np.where(np.isfinite(dG_first), dG_first, np.nan)
        labels = np.array([net.states[net.edges[j].target].label for j in first], dtype=object)
        onset = self.onset_potentials(her=None)
        carbon = onset.to_numpy(dtype=float)
        has_any = np.isfinite(carbon).any(axis=1)
        best_idx = np.argmax(np.where(np.isfinite(carbon), carbon, -np.inf), axis=1)
        best_onset = np.where(has_any, carbon[np.arange(len(self.surfaces)), best_idx], np.nan)
        cols = np.array(onset.columns, dtype=object)
        out = pd.DataFrame(index=pd.Index(self.surfaces, name="surface"))
        out["first_intermediate"] = np.where(np.isfinite(dG_first), labels[k], "")
        out["dG_first"] = dG_first
        h = self._her(her)
        if h is not None:
            dgh = step_free_energies(self.table, her, potential=U, pH=self.pH, scale=self.scale, temperature=self.temperature, surfaces=self.surfaces).iloc[:, 0]
            out["dG_H"] = dgh.to_numpy()
            out["first_intermediate_favoured"] = out["dG_first"] < out["dG_H"]
            her_onset = h["limiting_potential"].to_numpy()
        else:
            out["dG_H"] = np.nan
            out["first_intermediate_favoured"] = False
            her_onset = np.full(len(self.surfaces), np.nan)
        out["best_product"] = np.where(has_any, cols[best_idx], "")
        out["best_onset_potential"] = best_onset
        out["her_onset_potential"] = her_onset
        out["onset_margin_vs_her"] = best_onset - her_onset
        reach = carbon >= U - TIE_TOLERANCE_EV
        out["products_reachable"] = [", ".join(cols[row]) for row in reach]
        out["potential"] = U
        out["scale"], out["pH"] = self.scale, self.pH
        out.attrs.update(self._attrs(f"selectivity read-outs at U = {U:g} V vs {self.scale}"))
        out.attrs["units"] = {"dG_first": "eV", "dG_H": "eV", "best_onset_potential": f"V vs {self.scale}", "her_onset_potential": f"V vs {self.scale}", "onset_margin_vs_her": "V"}
        return out

    # -- helpers ---------------------------------------------------------------------------------------
    def _her(self, her: str | None):
        if her is None or "H*" not in self.table.species:
            return None
        from ecatlab.che import limiting_potentials

        return limiting_potentials(self.table, her, pH=self.pH, scale=self.scale, temperature=self.temperature, surfaces=self.surfaces, on_missing="report")

    def _surface_index(self, surface: str) -> int:
        try:
            return self.surfaces.index(surface)
        except ValueError:
            from ecatlab.errors import EnergyTableError

            raise EnergyTableError(self.table.source, f"unknown surface {surface!r}; known: {self.surfaces}") from None

    def _missing_text(self) -> list[str]:
        ads = np.array(self.network.adsorbates, dtype=object)
        used = set(self.network.used_adsorbates)
        return [", ".join(a for a in ads[row] if a in used) for row in self._missing]

    def _attrs(self, quantity: str) -> dict:
        return {
            "quantity": quantity,
            "reactant": self.network.reactant,
            "scale": self.scale,
            "pH": self.pH,
            "temperature": self.temperature,
            "chemical_limit": self.chemical_limit,
            "references": self.table.scheme.describe(),
            "energy_source": self.table.source,
            "network": repr(self.network),
            "notes": list(self.table.notes) + list(self.network.notes),
        }


def _quantise(values: np.ndarray) -> np.ndarray:
    """Costs rounded to the tie tolerance (+inf/-inf kept), so that float noise cannot order ties."""
    with np.errstate(invalid="ignore"):
        q = np.round(values / TIE_TOLERANCE_EV) * TIE_TOLERANCE_EV
    return np.where(np.isfinite(values), q, values)


def _overall_text(reactant: str, count: int, state: NetworkState) -> str:
    left = f"{count} {reactant}" if count > 1 else reactant
    right = [_count_text(k, c) for k, c in Counter(state.molecules).items()]
    if state.water:
        right.append(_count_text(_WATER, state.water))
    return f"{left} + {state.electrons} H+ + {state.electrons} e- -> {' + '.join(right)}"


# ------------------------------------------------------------------------------------------------
# one-call helpers
def _analysis(energies, reactant, pH, scale, temperature, surfaces, network_options, chemical_limit) -> NetworkAnalysis:
    table = energies if isinstance(energies, EnergyTable) else read_energies(energies)
    net = build_network(table, reactant, **(network_options or {}))
    return NetworkAnalysis(net, table, pH=pH, scale=scale, temperature=temperature, surfaces=surfaces, chemical_limit=chemical_limit)


def best_route(
    energies,
    surface: str,
    reactant: str,
    product: str,
    pH: float = 0.0,
    scale: str = "RHE",
    temperature: float = STANDARD_TEMPERATURE,
    chemical_limit: float | None = None,
    **network_options,
) -> Pathway:
    """Best route from ``reactant`` to ``product`` on one surface, as a Pathway.

    The Pathway works everywhere a built-in pathway does; ``ecatlab.che.limiting_potentials``
    on it gives the route's limiting potential. ``network_options`` go to :func:`build_network`
    (``allow``, ``forbid``, ``molecules``, ``sites``, ``coupling``).

    Examples
    --------
    >>> from ecatlab.demo import demo_energies
    >>> best_route(demo_energies(), "ALY-01", "CO2", "CH4").adsorbates[0].key in ("COOH*", "OCHO*")
    True
    """
    an = _analysis(energies, reactant, pH, scale, temperature, [surface], network_options, chemical_limit)
    return an.best_route(surface, product)


def best_routes(energies, reactant: str, product: str, pH: float = 0.0, scale: str = "RHE", temperature: float = STANDARD_TEMPERATURE,
                surfaces=None, top: int = 1, chemical_limit: float | None = None, **network_options) -> pd.DataFrame:
    """Best route (and runners-up) to ``product`` on every surface; see :meth:`NetworkAnalysis.best_routes`."""
    return _analysis(energies, reactant, pH, scale, temperature, surfaces, network_options, chemical_limit).best_routes(product, top=top)


def product_ranking(energies, reactant: str, pH: float = 0.0, scale: str = "RHE", temperature: float = STANDARD_TEMPERATURE,
                    surfaces=None, products=None, her: str | None = "her-volmer-heyrovsky", chemical_limit: float | None = None,
                    **network_options) -> pd.DataFrame:
    """Products ranked by onset potential per surface, HER included; see :meth:`NetworkAnalysis.product_ranking`."""
    return _analysis(energies, reactant, pH, scale, temperature, surfaces, network_options, chemical_limit).product_ranking(products, her)


def selectivity(energies, reactant: str, potential: float = 0.0, pH: float = 0.0, scale: str = "RHE",
                temperature: float = STANDARD_TEMPERATURE, surfaces=None, chemical_limit: float | None = None,
                **network_options) -> pd.DataFrame:
    """Selectivity read-outs at U; see :meth:`NetworkAnalysis.selectivity`."""
    return _analysis(energies, reactant, pH, scale, temperature, surfaces, network_options, chemical_limit).selectivity(potential)


def edge_table(energies, reactant: str, potential: float = 0.0, pH: float = 0.0, scale: str = "RHE",
               temperature: float = STANDARD_TEMPERATURE, surfaces=None, **network_options) -> pd.DataFrame:
    """Every network step with its dG (eV) at ``potential`` on every surface; see :meth:`NetworkAnalysis.edge_table`."""
    return _analysis(energies, reactant, pH, scale, temperature, surfaces, network_options, None).edge_table(potential)
