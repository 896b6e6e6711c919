r"""Elementary-step rules on molecular graphs (:mod:`ecatlab.network.graphs`).

Every rule changes one bond and records it (``"C-H"``, ``"O-H"``, ``"C-O"``, ``"C-C"``,
``"*-C"`` for a surface bond...); the rules act on :class:`~ecatlab.network.graphs.Skeleton`
objects, and the network builder (:mod:`ecatlab.network.build`) turns the outcomes into balanced
steps in ecatlab notation.

Reduction rules (each takes up one H+ + e-)

* **hydrogenation** -- H+ + e- to a named heavy atom ``X`` with free valence: bond ``X-H``
  formed (``CO* + H+ + e- -> CHO*`` at C, ``-> COH*`` at O). A closed-shell product that is a
  known molecule may leave in the same step (``OCHO* + H+ + e- -> * + HCOOH(aq)``).
* **hydrogenolysis** -- H+ + e- to ``X`` while the bond ``X-Y`` breaks (C-O, C-N, N-N, N-O,
  O-O; never C-C): ``COOH* + H+ + e- -> CO* + H2O(l)`` (C-OH scission releasing water),
  ``CH3O* + H+ + e- -> O* + CH4(g)``, ``NH2NH2* + H+ + e- -> NH2* + NH3(g)``. Each fragment
  stays on the surface or, when it is water or a known molecule, leaves.

Oxidation rules (each releases one H+ + e-): **dehydrogenation** -- ``X-H`` broken
(:func:`dehydrogenations`), the reverse of hydrogenation.

Chemical rules (no electron): **desorption** ``X* -> * + M`` and **adsorption** ``M + * -> X*``
when the skeleton of ``X`` is that of the molecule ``M`` (surface bond ``*-X`` broken or formed);
**C-C coupling** ``X* + Y* -> Z* + *`` between two carbons with free valence (bond ``C-C``
formed; needs two sites).

What the rules cannot do, by construction: move a hydrogen or an oxygen between atoms, or change
the atom that carries the skeleton, in one step (``OCHO* -> CO*`` or ``CH2O* -> CH*`` are not
elementary steps here).
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache

from ecatlab.network.graphs import Skeleton

__all__ = [
    "Outcome",
    "BREAKABLE",
    "hydrogenations",
    "hydrogenolyses",
    "dehydrogenations",
    "couplings",
    "fragments",
]

#: Bonds hydrogenolysis may break (element pairs, sorted).
BREAKABLE: frozenset = frozenset({("C", "O"), ("C", "N"), ("N", "N"), ("N", "O"), ("O", "O"), ("C", "S")})


@dataclass(frozen=True)
class Outcome:
    """Result of one rule on one skeleton.

    Attributes
    ----------
    kind : str
        ``"hydrogenation"``, ``"hydrogenolysis"``, ``"dehydrogenation"`` or ``"coupling"``.
    bond : str
        The bond the step changes, e.g. ``"C-H"`` or ``"C-O"``.
    change : str
        ``"formed"`` or ``"broken"``.
    products : tuple of Skeleton
        One or two product skeletons (two when a bond breaks into two fragments).
    atom : int
        Heavy atom that takes up (or gives up) the hydrogen; -1 for coupling.
    """

    kind: str
    bond: str
    change: str
    products: tuple[Skeleton, ...]
    atom: int = -1


def _with(sk: Skeleton, atom: int, dh: int, drop_bond: tuple[int, int] | None = None) -> Skeleton:
    h = list(sk.hydrogens)
    h[atom] += dh
    bonds = [b for b in sk.bonds if b != drop_bond]
    return Skeleton(sk.atoms, tuple(h), tuple(bonds))


def fragments(sk: Skeleton) -> tuple[Skeleton, ...]:
    """Connected components of a (possibly disconnected) skeleton, each re-indexed."""
    n = len(sk.atoms)
    comp = [-1] * n
    nb: list[list[int]] = [[] for _ in range(n)]
    for i, j in sk.bonds:
        nb[i].append(j)
        nb[j].append(i)
    c = 0
    for s in range(n):
        if comp[s] >= 0:
            continue
        stack = [s]
        comp[s] = c
        while stack:
            for j in nb[stack.pop()]:
                if comp[j] < 0:
                    comp[j] = c
                    stack.append(j)
        c += 1
    out = []
    for k in range(c):
        idx = [i for i in range(n) if comp[i] == k]
        m = {old: new for new, old in enumerate(idx)}
        out.append(Skeleton(tuple(sk.atoms[i] for i in idx), tuple(sk.hydrogens[i] for i in idx),
                            tuple((m[i], m[j]) for i, j in sk.bonds if i in m)))
    return tuple(out)


@lru_cache(maxsize=100_000)
def hydrogenations(sk: Skeleton) -> tuple[Outcome, ...]:
    """H+ + e- added to each heavy atom with free valence (one outcome per distinct product)."""
    out, seen = [], set()
    for i, f in enumerate(sk.free_valence):
        if f < 1:
            continue
        p = _with(sk, i, +1)
        key = p.skeleton_key
        if key in seen:
            continue
        seen.add(key)
        out.append(Outcome("hydrogenation", f"{sk.atoms[i]}-H", "formed", (p,), i))
    return tuple(out)


@lru_cache(maxsize=100_000)
def hydrogenolyses(sk: Skeleton) -> tuple[Outcome, ...]:
    """H+ + e- added to X while a bond X-Y of :data:`BREAKABLE` breaks."""
    out, seen = [], set()
    for i, j in sk.bonds:
        pair = tuple(sorted((sk.atoms[i], sk.atoms[j])))
        if pair not in BREAKABLE:
            continue
        for x in (i, j):
            p = _with(sk, x, +1, (i, j))
            frags = fragments(p)
            if len(frags) != 2 or not all(f.valid for f in frags):
                continue
            key = tuple(sorted(f.skeleton_key for f in frags))
            if key in seen:
                continue
            seen.add(key)
            out.append(Outcome("hydrogenolysis", f"{pair[0]}-{pair[1]}", "broken", frags, x))
    return tuple(out)


@lru_cache(maxsize=100_000)
def dehydrogenations(sk: Skeleton) -> tuple[Outcome, ...]:
    """One H removed (as H+ + e-) from each heavy atom that carries one (oxidation)."""
    out, seen = [], set()
    for i, h in enumerate(sk.hydrogens):
        if h < 1:
            continue
        p = _with(sk, i, -1)
        if p.skeleton_key in seen:
            continue
        seen.add(p.skeleton_key)
        out.append(Outcome("dehydrogenation", f"{sk.atoms[i]}-H", "broken", (p,), i))
    return tuple(out)


@lru_cache(maxsize=200_000)
def couplings(a: Skeleton, b: Skeleton) -> tuple[Outcome, ...]:
    """C-C bond formed between a carbon of ``a`` and one of ``b`` that both have free valence."""
    out, seen = [], set()
    fa = [i for i, f in enumerate(a.free_valence) if f >= 1 and a.atoms[i] == "C"]
    fb = [j for j, f in enumerate(b.free_valence) if f >= 1 and b.atoms[j] == "C"]
    n = len(a.atoms)
    for i in fa:
        for j in fb:
            bonds = a.bonds + tuple((x + n, y + n) for x, y in b.bonds) + ((i, j + n),)
            z = Skeleton(a.atoms + b.atoms, a.hydrogens + b.hydrogens, bonds)
            if not z.valid or z.skeleton_key in seen:
                continue
            seen.add(z.skeleton_key)
            out.append(Outcome("coupling", "C-C", "formed", (z,)))
    return tuple(out)
