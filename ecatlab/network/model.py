"""Network structure: states, steps and the reaction network object (no energies).

See :mod:`ecatlab.network` for the model. Results are theoretical estimates.
"""

from __future__ import annotations

from collections import Counter
from dataclasses import dataclass, field
from functools import cached_property
from typing import Iterable, Mapping, Sequence

import pandas as pd

from ecatlab.errors import NotationError, PathwayError
from ecatlab.notation import Pathway, Species, Step
from ecatlab.references import ReferenceScheme

#: Two route costs closer than this (eV) are a tie.
TIE_TOLERANCE_EV = 1e-9
#: Default limit on the number of simple routes enumerated per (reactant, product).
MAX_ROUTES = 50_000
_WATER = "H2O(l)"
_NON_CONSERVED = ("H", "O")

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

    @cached_property
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
    bond : str
        The bond the step changes (``"C-H"``, ``"O-H"``, ``"C-O"``, ``"C-C"``, ``"*-C"``...).
    change : str
        ``"formed"`` or ``"broken"``.
    rule : str
        The rule that made the step (``"hydrogenation"``, ``"hydrogenolysis"``, ...).
    """

    source: int
    target: int
    step: Step
    kind: str
    bond: str = ""
    change: str = ""
    rule: str = ""

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
    #: name -> :class:`~ecatlab.network.graphs.Skeleton` of every adsorbate and molecule used.
    structures: Mapping = field(default_factory=dict, compare=False, repr=False)
    #: adsorbates whose energies come from the table (the others need estimates).
    computed: tuple[str, ...] | None = None
    #: "reduction" (electrons taken up) or "oxidation".
    direction: str = "reduction"
    #: products of interest (None: every product the network reaches).
    product_filter: tuple[str, ...] | None = None

    @property
    def uncomputed(self) -> tuple[str, ...]:
        """Adsorbates of the network without table energies (estimated by :mod:`ecatlab.network.estimate`)."""
        if self.computed is None:
            return ()
        c = set(self.computed)
        return tuple(a for a in self.adsorbates if a not in c)

    @property
    def intermediates(self) -> tuple[str, ...]:
        """Every adsorbate used by some step."""
        return self.used_adsorbates

    def smiles(self, name: str) -> str:
        """Canonical SMILES of an adsorbate (``*`` marks the surface) or molecule of the network."""
        sk = self.structures.get(name)
        if sk is None:
            raise PathwayError(f"{name!r} has no structure in this network")
        return sk.key(name.endswith("*"))

    @cached_property
    def layers(self):
        """Electrons transferred at every state (numpy int array)."""
        import numpy as np

        return np.array([s.electrons for s in self.states], dtype=int)

    # -- structure ---------------------------------------------------------------------------------
    @cached_property
    def _state_index(self) -> dict[NetworkState, int]:
        return {s: i for i, s in enumerate(self.states)}

    @cached_property
    def used_adsorbates(self) -> tuple[str, ...]:
        """Adsorbates that appear in at least one edge, in :attr:`adsorbates` order."""
        steps = {id(e.step): e.step for e in self.edges}.values()
        used = {sp.key for st in steps for sp in st.species if sp.is_adsorbate}
        return tuple(a for a in self.adsorbates if a in used)

    @cached_property
    def _product_states(self) -> dict[str, int]:
        """Product key -> index of its state: nothing adsorbed, one kind of molecule released
        (the unused reactant is a spectator); the state with the fewest electrons if several."""
        out: dict[str, int] = {}
        for i, s in enumerate(self.states):
            if s.adsorbates or i == self.start:
                continue
            kinds = set(s.molecules) - {self.reactant}
            if not kinds:
                if self.reactant in s.molecules:
                    continue
                key = _WATER
            elif len(kinds) == 1:
                key = next(iter(kinds))
            else:
                continue
            if self.product_filter is not None and key not in self.product_filter:
                continue
            if key not in out or s.electrons < self.states[out[key]].electrons:
                out[key] = i
        return out

    @property
    def products(self) -> tuple[str, ...]:
        """Products that some route reaches: molecules whose state holds nothing else.

        ``"H2O(l)"`` appears when the clean surface with only water released is reachable (ORR).
        Sorted by electrons, then name.
        """
        ps = self._product_states
        return tuple(sorted(ps, key=lambda k: (self.states[ps[k]].electrons, k)))

    def _product_state_raw(self, product: str) -> NetworkState:
        if product in self._product_states:
            return self.states[self._product_states[product]]
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
                "bond": [e.bond for e in self.edges],
                "change": [e.change for e in self.edges],
                "rule": [e.rule for e in self.edges],
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


def _overall_text(reactant: str, count: int, state: NetworkState) -> str:
    """Overall reaction from the start to ``state`` (unused reactant molecules are spectators)."""
    used = count - sum(1 for m in state.molecules if m == reactant)
    left = f"{used} {reactant}" if used > 1 else reactant
    right = [_count_text(k, c) for k, c in Counter(m for m in state.molecules if m != reactant).items()]
    if state.water:
        right.append(_count_text(_WATER, state.water))
    return f"{left} + {state.electrons} H+ + {state.electrons} e- -> {' + '.join(right)}"
