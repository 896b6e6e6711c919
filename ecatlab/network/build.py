r"""Build a reaction network from molecular graphs and the rules of :mod:`ecatlab.network.rules`.

A **state** is what sits on the catalyst (at most ``sites`` adsorbates) and what has been released
(molecules, including the reactant molecules not yet used); water and proton-electron pairs are
implicit and follow from the composition (see :class:`~ecatlab.network.model.NetworkState`).
Starting from the reactant, every rule is applied to every adsorbate of every state reached
(breadth first); a product skeleton becomes a species when it passes the filters:

* it is in the energy table (by canonical identity, so ``OCHO*`` is never ``COOH*``), or
  ``uncomputed=True`` and its energy can be estimated (:mod:`ecatlab.network.estimate`);
* at most ``max_carbons`` carbons (default: those of the reactant molecules), only elements of
  the reactant besides H and O;
* ``allow`` (names) / ``allow_patterns`` / ``forbid_patterns`` (SMARTS on the adsorbed
  structure, the surface as ``*``) say yes;

and a step is kept unless ``forbid`` names it (a step in ecatlab notation, ``"bond:C-O"``,
``"rule:hydrogenolysis"`` or ``"kind:desorption"``). ``max_steps`` bounds the number of steps from
the reactant; ``products`` keeps only the states from which one of those products can be reached
(dead ends are always removed). With several reactant molecules (``"2 CO2"``), a state that has
released a carbon (conserved-element) product takes up no further reactant.
"""

from __future__ import annotations

import itertools
from collections import Counter, deque
from typing import Iterable, Mapping

from ecatlab._gc import collector_paused
from ecatlab.energies import EnergyTable
from ecatlab.errors import EcatlabError, NotationError, PathwayError
from ecatlab.network import rules
from ecatlab.network.graphs import Skeleton, molecule_skeleton, parse_name, structures_from
from ecatlab.network.model import (
    _NON_CONSERVED,
    _WATER,
    NetworkEdge,
    NetworkState,
    ReactionNetwork,
    _molecule_key,
    _net_key,
    _parse_reactant,
    _step_text,
    default_molecules,
)
from ecatlab.notation import Species, Step
from ecatlab.references import ReferenceScheme

__all__ = ["build_network"]


def _is_water(sk: Skeleton) -> bool:
    return sk.atoms == ("O",) and sk.hydrogens == (2,)


@collector_paused()  # object-heavy, no cycles: see ecatlab._gc
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
    structures: Mapping[str, str] | None = None,
    uncomputed: bool = False,
    max_carbons: int | None = None,
    max_steps: int | None = None,
    products: Iterable[str] | None = None,
    allow_patterns: Iterable[str] | None = None,
    forbid_patterns: Iterable[str] = (),
    max_states: int = 200_000,
    prune: bool = True,
) -> ReactionNetwork:
    """States and elementary steps reachable from ``reactant`` by the graph rules.

    Parameters
    ----------
    species : EnergyTable or iterable of str
        Adsorbates with energies (an energy table contributes all its adsorbates).
    reactant : str
        Reactant molecule, e.g. ``"CO2"``, ``"N2(g)"``, ``"O2"``; ``"2 CO2"`` starts with two.
    molecules : iterable of str, optional
        Molecules the network may release (default: one phase of every molecule the reference
        scheme knows, :func:`~ecatlab.network.model.default_molecules`).
    allow : iterable of str, optional
        Only these adsorbates of the table are used.
    forbid : iterable of str or Step
        Steps to leave out (ecatlab notation, matched by net stoichiometry), or ``"bond:C-O"``,
        ``"rule:hydrogenolysis"``, ``"kind:desorption"`` for whole classes.
    sites : int
        Adsorbates held at once (1, as the built-in pathways; 2 for C-C coupling).
    coupling : bool
        Add C-C coupling steps ``X* + Y* -> Z* + *`` (needs ``sites >= 2``).
    scheme : ReferenceScheme, optional
        Source of the known molecules (default: the table's scheme).
    structures : mapping of str to str, optional
        SMILES (binding atoms marked with ``*``) for species whose name the condensed-formula
        reading does not place, e.g. ``{"HCOO*": "*OC=O"}``.
    uncomputed : bool
        Also use adsorbates that are not in the table (their energies must then be estimated,
        :class:`~ecatlab.network.estimate.EnergyEstimator`).
    max_carbons : int, optional
        Largest number of carbon atoms of any species (default: the reactant's).
    max_steps : int, optional
        Largest number of steps from the start state.
    products : iterable of str, optional
        Products of interest; states that cannot reach one of them are removed.
    allow_patterns, forbid_patterns : iterable of str
        SMARTS patterns on the adsorbed structure (``*`` = surface).
    max_states : int
        Safety limit on the number of states.
    prune : bool
        Remove dead ends: states from which no product (of interest) can be reached.

    Returns
    -------
    ReactionNetwork

    Raises
    ------
    PathwayError
        Unknown reactant, allowed adsorbates outside the table, a forbidden step that is not in the
        network, too many states.
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
    try:
        user = structures_from(structures)
    except NotationError as exc:
        raise PathwayError(f"structures: {exc}") from None
    notes: list[str] = []

    # -- molecules -------------------------------------------------------------------------------
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
    r_sk = user.get(r_key) or molecule_skeleton(r_key)
    if r_sk is None:
        raise PathwayError(f"reactant {r_key} has no heavy atom to build intermediates from")
    limit_c = max_carbons if max_carbons is not None else r_sk.carbons * r_count

    def fits(elements: Mapping[str, float]) -> bool:
        if any(el not in r_el and el not in _NON_CONSERVED for el in elements):
            return False
        if any(elements.get(el, 0.0) > n + 1e-9 for el, n in conserved.items()):
            return False
        return elements.get("O", 0.0) <= r_el.get("O", 0.0) + 1e-9 and elements.get("C", 0.0) <= limit_c + 1e-9

    structure: dict[str, Skeleton] = {}
    molecule_of: dict[str, str] = {}  # skeleton key -> molecule key
    for m in dict.fromkeys(mol_keys):
        if m == r_key:
            continue
        el = Species.parse(m).elements
        if set(el) <= {"H"} or not fits(el) or (conserved and not any(e in conserved for e in el)):
            continue
        try:
            sk = user.get(m) or molecule_skeleton(m)
        except NotationError:
            notes.append(f"left out molecule {m}: no structure (give structures={{'{m}': SMILES}})")
            continue
        if sk is None or _is_water(sk):
            continue
        if sk.skeleton_key in molecule_of:
            continue  # one phase per structure
        molecule_of[sk.skeleton_key] = m
        structure[m] = sk
    structure[r_key] = r_sk
    mols = tuple(molecule_of.values())

    # -- adsorbates --------------------------------------------------------------------------------
    patterns_allow = [_smarts(p) for p in (allow_patterns or [])]
    patterns_forbid = [_smarts(p) for p in forbid_patterns]

    def pattern_ok(sk: Skeleton) -> bool:
        if not patterns_allow and not patterns_forbid:
            return True
        mol = sk.to_mol(True)
        if patterns_allow and not any(mol.HasSubstructMatch(p) for p in patterns_allow):
            return False
        return not any(mol.HasSubstructMatch(p) for p in patterns_forbid)

    by_key: dict[str, str] = {}  # canonical adsorbed SMILES -> name
    table_names: list[str] = []
    hydrogen_only, unreadable = [], []
    for name in pool:
        if set(Species.parse(name).elements) <= {"H"}:
            hydrogen_only.append(name)
            continue
        try:
            sk = user.get(name) or parse_name(name)
        except NotationError:
            unreadable.append(name)
            continue
        if not fits(sk.elements) or not pattern_ok(sk):
            continue
        key = sk.key(True)
        if key in by_key:
            notes.append(f"{name} has the same structure as {by_key[key]} ({key}); {name} left out")
            continue
        by_key[key] = name
        structure[name] = sk
        table_names.append(name)
    if hydrogen_only:
        notes.append(f"left out {', '.join(hydrogen_only)}: hydrogen evolution is evaluated separately with the engine's HER pathways")
    if unreadable:
        notes.append(f"left out {', '.join(unreadable)}: the name is not a condensed formula; give structures={{name: SMILES}}")
    taken_names = set(structure)

    def adsorbate(sk: Skeleton) -> str | None:
        if not sk.valid or _is_water(sk):
            return None
        key = sk.key(True)
        name = by_key.get(key)
        if name is not None or not uncomputed:
            return name
        if not fits(sk.elements) or not pattern_ok(sk):
            return None
        name = sk.name() + "*"
        if name in taken_names:  # a different structure already carries this name
            return None
        by_key[key] = name
        structure[name] = sk
        taken_names.add(name)
        return name

    def molecule(sk: Skeleton) -> str | None:
        return molecule_of.get(sk.skeleton_key)

    # -- forbidden steps ------------------------------------------------------------------------------
    forbidden: dict = {}
    classes: set[tuple[str, str]] = set()
    for f in forbid:
        if isinstance(f, str) and f.split(":", 1)[0] in ("bond", "rule", "kind") and ":" in f:
            what, value = f.split(":", 1)
            classes.add((what, value.strip()))
            continue
        step = f if isinstance(f, Step) else Step.parse(f)
        forbidden[_net_key(step)] = step.equation
    used_forbidden: set = set()

    # -- transitions per species (cached) ---------------------------------------------------------
    def options_for(frag: Skeleton, allow_release: bool = True):
        """Ways a product fragment ends: ('w',) water, ('a', name), ('m', name)."""
        if _is_water(frag):
            return [("w", _WATER)]
        out = []
        a = adsorbate(frag)
        if a is not None:
            out.append(("a", a))
        m = molecule(frag) if allow_release else None
        if m is not None:
            out.append(("m", m))
        return out

    trans_cache: dict[str, list] = {}

    def transitions(name: str) -> list:
        """(rule, bond, change, product adsorbates, product molecules, water) for an electrochemical step."""
        if name in trans_cache:
            return trans_cache[name]
        sk = structure[name]
        out = []
        for oc in rules.hydrogenations(sk) + rules.hydrogenolyses(sk):
            per = [options_for(f) for f in oc.products]
            for combo in itertools.product(*per):
                p_ads = tuple(n for t, n in combo if t == "a")
                p_mols = tuple(n for t, n in combo if t == "m")
                water = sum(1 for t, _ in combo if t == "w")
                out.append((oc.kind, oc.bond, oc.change, p_ads, p_mols, water))
        trans_cache[name] = out
        return out

    def desorbed(name: str) -> str | None:
        return molecule(structure[name])

    ads_forms: dict[str, list[str]] = {}

    def adsorbed_forms(m: str) -> list[str]:
        if m not in ads_forms:
            a = adsorbate(structure[m])
            ads_forms[m] = [a] if a is not None else []
        return ads_forms[m]

    # -- breadth-first construction ------------------------------------------------------------------
    comp_cache: dict[str, dict] = {}

    def elements_of(k: str) -> dict:
        if k not in comp_cache:
            comp_cache[k] = structure[k].elements
        return comp_cache[k]

    def state_of(a_list, m_list) -> NetworkState | None:
        a = tuple(sorted(a_list))
        m = tuple(sorted(m_list))
        total: Counter = Counter()
        for k in a + m:
            total.update(elements_of(k))
        for el, n in conserved.items():
            if abs(total.get(el, 0.0) - n) > 1e-9:
                return None
        water = r_el.get("O", 0.0) - total.get("O", 0.0)
        electrons = total.get("H", 0.0) + 2 * water - r_el.get("H", 0.0)
        if water < -1e-9 or electrons < -1e-9:
            return None
        return NetworkState(a, m, int(round(electrons)), int(round(water)))

    start = state_of((), (r_key,) * r_count)
    states: list[NetworkState] = [start]
    depth = [0]
    index = {start: 0}
    edges: list[NetworkEdge] = []
    seen_edges: set = set()
    step_cache: dict[str, Step] = {}
    queue = deque([0])
    conserved_mols = {m for m in mols if any(e in conserved for e in elements_of(m))}

    species_cache: dict[str, Species] = {}

    def make_step(text: str) -> Step:
        """Step from our own text: sides split on ' + ' (never inside a name); balance checked by Step."""
        sides = []
        for side in text.split(" -> "):
            terms: dict[Species, float] = {}
            for tok in side.split(" + "):
                coef, _, rest = tok.partition(" ")
                if rest and coef.isdigit():
                    c, name = float(coef), rest
                else:
                    c, name = 1.0, tok
                sp = species_cache.get(name)
                if sp is None:
                    sp = species_cache[name] = Species.parse(name)
                terms[sp] = terms.get(sp, 0.0) + c
            sides.append(tuple(terms.items()))
        return Step(sides[0], sides[1], text=text)

    def add(src: int, new_ads, new_mols, text: str, kind: str, delta_e: int, bond: str, change: str, rule: str) -> None:
        if classes and (("bond", bond) in classes or ("rule", rule) in classes or ("kind", kind) in classes):
            return
        target = state_of(new_ads, new_mols)
        if target is None:
            return
        step = step_cache.get(text)
        if step is None:
            step = make_step(text)  # checks element, charge and site balance
            if abs(step.electrons_transferred - delta_e) > 1e-9:
                raise PathwayError(f"internal check failed: {text!r} transfers {step.electrons_transferred} e-")
            step_cache[text] = step
        if target.electrons != states[src].electrons + delta_e:
            raise PathwayError(f"internal check failed: {text!r} changes the electron count inconsistently")
        if forbidden:
            nk = _net_key(step)
            if nk in forbidden:
                used_forbidden.add(nk)
                return
        tgt = index.get(target)
        if tgt is None:
            if len(states) >= max_states:
                raise PathwayError(f"more than {max_states} states; restrict the network (max_carbons=, max_steps=, products=, allow=) or raise max_states")
            tgt = index[target] = len(states)
            states.append(target)
            depth.append(depth[src] + 1)
            queue.append(tgt)
        key = (src, tgt, text)
        if key in seen_edges:
            return
        seen_edges.add(key)
        edges.append(NetworkEdge(src, tgt, step, kind, bond, change, rule))

    text_cache: dict = {}

    def step_text(unit: str, extra: int, p_ads, p_mols, water) -> str:
        k = (unit, extra, p_ads, p_mols, water)
        t = text_cache.get(k)
        if t is None:
            t = text_cache[k] = _step_text([unit], extra, True, p_ads, p_mols, water)
        return t

    while queue:
        src = queue.popleft()
        if max_steps is not None and depth[src] >= max_steps:
            continue
        st = states[src]
        free = sites - len(st.adsorbates)
        released = [m for m in st.molecules if m != r_key]
        # electrochemical steps of one adsorbate
        for a in dict.fromkeys(st.adsorbates):
            rest = list(st.adsorbates)
            rest.remove(a)
            for rule, bond, change, p_ads, p_mols, water in transitions(a):
                if len(p_ads) > free + 1:
                    continue
                text = step_text(a, 0, p_ads, p_mols, water)
                add(src, rest + list(p_ads), list(st.molecules) + list(p_mols), text, "electrochemical", 1, bond, change, rule)
            m = desorbed(a)
            if m is not None:
                add(src, rest, list(st.molecules) + [m], f"{a} -> * + {m}", "desorption", 0, "*-" + structure[a].atoms[0], "broken", "desorption")
        # the reactant from solution (needs a free site; not after a product left with a reactant pool)
        if r_key in st.molecules and free >= 1 and not (r_count > 1 and any(m in conserved_mols for m in released)):
            rest_m = list(st.molecules)
            rest_m.remove(r_key)
            for rule, bond, change, p_ads, p_mols, water in transitions(r_key):
                if not p_ads or len(p_ads) > free:
                    continue
                text = step_text(r_key, 1, p_ads, p_mols, water)
                add(src, list(st.adsorbates) + list(p_ads), rest_m + list(p_mols), text, "electrochemical", 1, bond, change, rule)
        # adsorption of released molecules
        if free >= 1:
            for m in dict.fromkeys(released):
                for a in adsorbed_forms(m):
                    rest_m = list(st.molecules)
                    rest_m.remove(m)
                    add(src, list(st.adsorbates) + [a], rest_m, f"{m} + * -> {a}", "adsorption", 0, "*-" + structure[a].atoms[0], "formed", "adsorption")
        # C-C coupling
        if coupling and len(st.adsorbates) >= 2:
            for i, j in itertools.combinations(range(len(st.adsorbates)), 2):
                x, y = st.adsorbates[i], st.adsorbates[j]
                for oc in rules.couplings(structure[x], structure[y]):
                    z = adsorbate(oc.products[0])
                    if z is None:
                        continue
                    rest = [k for n, k in enumerate(st.adsorbates) if n not in (i, j)]
                    left = f"2 {x}" if x == y else f"{x} + {y}"
                    add(src, rest + [z], list(st.molecules), f"{left} -> {z} + *", "coupling", 0, "C-C", "formed", "coupling")

    unused = [text for k, text in forbidden.items() if k not in used_forbidden]
    if unused:
        raise PathwayError(f"forbidden step(s) {unused} do not occur in the network from {r_key}; check the spelling (ecatlab notation)")
    if forbidden or classes:
        notes.append("left out by request: " + "; ".join(list(forbidden.values()) + [f"{w}:{v}" for w, v in sorted(classes)]))

    ads_all = tuple(table_names) + tuple(n for n in structure if n.endswith("*") and n not in table_names)
    net = ReactionNetwork(r_key, r_count, tuple(states), tuple(edges), ads_all, mols, sites, 0, tuple(notes),
                          structures=dict(structure), computed=tuple(table_names))
    wanted = None
    if products is not None:
        wanted = [net.resolve_product(p) for p in products]
    elif not prune:
        return net
    return _prune(net, wanted)


def _smarts(pattern: str):
    from rdkit import Chem

    p = Chem.MolFromSmarts(str(pattern))
    if p is None:
        raise PathwayError(f"RDKit cannot read the SMARTS pattern {pattern!r}")
    return p


def _prune(net: ReactionNetwork, wanted: list[str] | None) -> ReactionNetwork:
    """Keep the states on some route from the start to a product (of interest)."""
    ps = net._product_states
    targets = {ps[p] for p in (wanted if wanted is not None else ps) if p in ps}
    back: dict[int, list[int]] = {}
    for e in net.edges:
        back.setdefault(e.target, []).append(e.source)
    alive = set(targets)
    stack = list(targets)
    while stack:
        v = stack.pop()
        for u in back.get(v, ()):
            if u not in alive:
                alive.add(u)
                stack.append(u)
    alive.add(net.start)
    filt = tuple(wanted) if wanted is not None else None
    if len(alive) == len(net.states) and filt is None:
        return net
    keep = sorted(alive)
    remap = {old: new for new, old in enumerate(keep)}
    edges = tuple(
        NetworkEdge(remap[e.source], remap[e.target], e.step, e.kind, e.bond, e.change, e.rule)
        for e in net.edges if e.source in remap and e.target in remap
    )
    used = {sp.key for st in {id(e.step): e.step for e in edges}.values() for sp in st.species if sp.is_adsorbate}
    ads = tuple(a for a in net.adsorbates if a in used or a in (net.computed or ()))
    return ReactionNetwork(net.reactant, net.reactant_count, tuple(net.states[i] for i in keep), edges, ads, net.molecules, net.sites,
                           remap[net.start], net.notes, structures=net.structures, computed=net.computed, direction=net.direction,
                           product_filter=filt)
