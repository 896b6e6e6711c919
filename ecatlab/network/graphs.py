r"""Intermediates as molecular graphs with the surface bond explicit.

A :class:`Skeleton` is what a species *is*: heavy atoms (C, N, O, S), how many hydrogens each
carries and which heavy atoms are bonded. Bond orders and the bond to the surface follow from the
valences (C 4, N 3, O 2, S 2): free valence left after the hydrogens and single bonds is first
paired into multiple bonds between neighbours (heteroatom bonds first: C=O before C=C), and what
remains binds the atom to the surface. A closed-shell skeleton on the surface (CH2O*, CH2CHOH*)
binds through the atoms of one opened multiple bond (di-sigma; C=C before C=O), or, without a
multiple bond (NH3*, CH3OH*), through a lone pair of its first heteroatom (a dative bond).

Identity is RDKit's canonical SMILES of the sanitised molecule in which every surface bond goes to
a dummy atom ``*`` (one per binding atom, with the bond order of that atom's free valence), so
isomers are distinct: ``COOH*`` is ``*C(=O)O`` and ``OCHO*`` is ``*OC=O``; the enols and carbonyls
``CH2CHOH`` / ``CH3CHO`` differ in where the hydrogens sit. Explicit hydrogen counts are set on
every atom (no implicit hydrogens), as RDKit needs for radicals.

Names in ecatlab notation are condensed formulas read left to right: C and N atoms form the
backbone, each bonded to the previous backbone atom; an O is a pendant group on the previous
backbone atom unless a backbone atom follows it (then it bridges, as in ``OCHO`` or ``CH3OCH3``);
hydrogens written after an atom sit on it; a group in parentheses hangs on the atom before it
(``CH(CH3)OH``). :meth:`Skeleton.name` writes a name that reads back to the same skeleton.
A user can give any species as SMILES with the binding atoms marked by ``*``
(:func:`skeleton_from_smiles`), for names this reading does not cover.

RDKit is imported inside functions (``import ecatlab`` stays light).
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from functools import cached_property, lru_cache
from typing import Iterable, Mapping

from ecatlab.errors import NotationError

__all__ = [
    "VALENCE",
    "Skeleton",
    "parse_name",
    "skeleton_from_smiles",
    "molecule_skeleton",
    "KNOWN_MOLECULE_SMILES",
]

#: Valence used to close every heavy atom (hydrogens + bonds + surface bond).
VALENCE: dict[str, int] = {"C": 4, "N": 3, "O": 2, "S": 2}
_BACKBONE = ("C", "N")
_ATOMIC_NUMBER = {"C": 6, "N": 7, "O": 8, "S": 16}

#: SMILES of molecules whose formula the condensed-name reading cannot place (C2H4, N2H4...).
KNOWN_MOLECULE_SMILES: dict[str, str] = {
    "CO": "[C-]#[O+]", "CO2": "O=C=O", "CH4": "C", "CH3OH": "CO", "CH2O": "C=O", "HCOOH": "OC=O",
    "C2H4": "C=C", "C2H6": "CC", "C2H2": "C#C", "C2H5OH": "CCO", "CH3CHO": "CC=O", "CH3COOH": "CC(=O)O",
    "HOCH2CH2OH": "OCCO", "C3H6": "C=CC", "C3H8": "CCC", "C3H7OH": "CCCO", "CH3COCH3": "CC(C)=O",
    "CH3CH2CHO": "CCC=O", "CH2CHCH2OH": "C=CCO", "N2": "N#N", "NH3": "N", "N2H4": "NN", "H2O2": "OO",
    "O2": "O=O", "H2O": "O", "NH2OH": "NO", "HNO3": "O=[N+]([O-])O",
}


@dataclass(frozen=True)
class Skeleton:
    """Heavy atoms, their hydrogen counts and the heavy-atom bonds of a species (no surface info).

    Attributes
    ----------
    atoms : tuple of str
        Element symbols of the heavy atoms.
    hydrogens : tuple of int
        Hydrogens on each heavy atom.
    bonds : tuple of (int, int)
        Heavy-atom bonds, each ``(i, j)`` with ``i < j``, sorted.
    """

    atoms: tuple[str, ...]
    hydrogens: tuple[int, ...]
    bonds: tuple[tuple[int, int], ...]

    def __post_init__(self) -> None:
        if len(self.atoms) != len(self.hydrogens):
            raise NotationError("skeleton", "one hydrogen count per heavy atom")
        for a in self.atoms:
            if a not in VALENCE:
                raise NotationError("skeleton", f"element {a!r} not supported (C, N, O, S)")
        object.__setattr__(self, "bonds", tuple(sorted((min(i, j), max(i, j)) for i, j in self.bonds)))

    # -- derived structure ------------------------------------------------------------------------
    @cached_property
    def neighbours(self) -> tuple[tuple[int, ...], ...]:
        nb: list[list[int]] = [[] for _ in self.atoms]
        for i, j in self.bonds:
            nb[i].append(j)
            nb[j].append(i)
        return tuple(tuple(sorted(x)) for x in nb)

    @cached_property
    def free_valence(self) -> tuple[int, ...]:
        """Valence left per atom after hydrogens and single bonds (negative: impossible)."""
        return tuple(VALENCE[a] - h - len(nb) for a, h, nb in zip(self.atoms, self.hydrogens, self.neighbours))

    @property
    def valid(self) -> bool:
        return bool(self.atoms) and all(f >= 0 for f in self.free_valence) and self.connected

    @cached_property
    def connected(self) -> bool:
        if not self.atoms:
            return False
        seen, stack = {0}, [0]
        while stack:
            for j in self.neighbours[stack.pop()]:
                if j not in seen:
                    seen.add(j)
                    stack.append(j)
        return len(seen) == len(self.atoms)

    @cached_property
    def elements(self) -> dict[str, float]:
        out: dict[str, float] = {}
        for a in self.atoms:
            out[a] = out.get(a, 0.0) + 1.0
        h = sum(self.hydrogens)
        if h:
            out["H"] = float(h)
        return out

    @property
    def carbons(self) -> int:
        return sum(1 for a in self.atoms if a == "C")

    @cached_property
    def _orders(self) -> tuple[dict[tuple[int, int], int], tuple[int, ...]]:
        """Bond orders after pairing free valences, and the free valence left per atom."""
        free = list(self.free_valence)
        orders = {b: 1 for b in self.bonds}
        # heteroatom bonds first (C=O, N=N before C=C), then in atom order
        ranked = sorted(self.bonds, key=lambda b: (self.atoms[b[0]] == "C" and self.atoms[b[1]] == "C", b))
        changed = True
        while changed:
            changed = False
            for i, j in ranked:
                if free[i] > 0 and free[j] > 0 and orders[(i, j)] < 3:
                    orders[(i, j)] += 1
                    free[i] -= 1
                    free[j] -= 1
                    changed = True
                    break
        return orders, tuple(free)

    @property
    def closed_shell(self) -> bool:
        """True when every valence is satisfied without the surface (a stable molecule's skeleton)."""
        return all(f == 0 for f in self._orders[1])

    def surface_bonds(self) -> tuple[dict[tuple[int, int], int], dict[int, int]]:
        """Bond orders and ``{atom: order to the surface}`` of the adsorbed form (0 = dative bond)."""
        orders, free = self._orders
        orders = dict(orders)
        binding = {i: f for i, f in enumerate(free) if f > 0}
        if binding:
            return orders, binding
        multiple = [b for b, o in orders.items() if o > 1]
        if multiple:
            # di-sigma: open one multiple bond, C=C before C=O before others
            def rank(b):
                pair = {self.atoms[b[0]], self.atoms[b[1]]}
                return (0 if pair == {"C"} else 1 if pair == {"C", "O"} else 2, b)

            b = min(multiple, key=rank)
            orders[b] -= 1
            return orders, {b[0]: 1, b[1]: 1}
        hetero = [i for i, a in enumerate(self.atoms) if a in ("N", "O", "S")]
        return orders, {(hetero[0] if hetero else 0): 0}

    # -- identity ------------------------------------------------------------------------------------
    def to_mol(self, adsorbed: bool = True, binding: Mapping[int, int] | None = None):
        """RDKit molecule (sanitised); ``adsorbed`` adds one dummy atom ``*`` per binding atom."""
        from rdkit import Chem

        rw = Chem.RWMol()
        for a, h in zip(self.atoms, self.hydrogens):
            atom = Chem.Atom(_ATOMIC_NUMBER[a])
            atom.SetNumExplicitHs(int(h))
            atom.SetNoImplicit(True)
            rw.AddAtom(atom)
        if adsorbed:
            orders, bind = self.surface_bonds()
            if binding is not None:
                orders, bind = self._orders[0], dict(binding)
        else:
            orders, bind = self._orders[0], {}
        types = {1: Chem.BondType.SINGLE, 2: Chem.BondType.DOUBLE, 3: Chem.BondType.TRIPLE}
        for (i, j), o in orders.items():
            rw.AddBond(i, j, types[o])
        extra = {0: Chem.BondType.DATIVE, 1: Chem.BondType.SINGLE, 2: Chem.BondType.DOUBLE, 3: Chem.BondType.TRIPLE, 4: Chem.BondType.QUADRUPLE}
        for i, o in sorted(bind.items()):
            d = rw.AddAtom(Chem.Atom(0))
            rw.AddBond(i, d, extra[min(int(o), 4)])
        mol = rw.GetMol()
        Chem.SanitizeMol(mol)  # canonicalise only after sanitising
        return mol

    @cached_property
    def skeleton_key(self) -> str:
        """Canonical text of the skeleton alone (atoms, H counts, connectivity; no bond orders)."""
        return _skeleton_key(self)

    def key(self, adsorbed: bool = True) -> str:
        """Canonical SMILES identity; the adsorbed form carries ``*`` on its binding atoms."""
        return _canonical(self, adsorbed)

    def smiles(self, adsorbed: bool = True) -> str:
        return self.key(adsorbed)

    # -- names -----------------------------------------------------------------------------------
    def name(self) -> str:
        """Condensed formula in ecatlab notation (without ``*`` or phase) that reads back to this skeleton."""
        if len(self.atoms) == 1:
            return _atom_text(self.atoms[0], self.hydrogens[0])
        ranks = _ranks(self)
        _, bind = self.surface_bonds()
        carbons_bound = [i for i in bind if self.atoms[i] == "C"]
        pool = carbons_bound or list(bind) or list(range(len(self.atoms)))
        root = min(pool, key=lambda i: ranks[i])
        size = self._subtree_sizes(root)
        return self._emit(root, -1, ranks, size)

    def _subtree_sizes(self, root: int) -> dict[tuple[int, int], int]:
        out: dict[tuple[int, int], int] = {}

        def walk(i: int, parent: int) -> int:
            n = 1 + sum(walk(j, i) for j in self.neighbours[i] if j != parent)
            out[(i, parent)] = n
            return n

        walk(root, -1)
        return out

    def _emit(self, i: int, parent: int, ranks, size) -> str:
        text = _atom_text(self.atoms[i], self.hydrogens[i])
        children = [j for j in self.neighbours[i] if j != parent]
        leaves = sorted([j for j in children if self.atoms[j] == "O" and len(self.neighbours[j]) == 1], key=lambda j: ranks[j])
        branches = sorted([j for j in children if j not in leaves], key=lambda j: (size[(j, i)], -ranks[j]))
        if not branches:
            return text + "".join(_atom_text("O", self.hydrogens[j]) for j in leaves)
        main = branches[-1]
        rest = leaves + branches[:-1]
        return text + "".join("(" + self._emit(j, i, ranks, size) + ")" for j in rest) + self._emit(main, i, ranks, size)

    def __str__(self) -> str:
        return self.name()


def _atom_text(symbol: str, h: int) -> str:
    return symbol + ("" if h == 0 else "H" if h == 1 else f"H{h}")


@lru_cache(maxsize=200_000)
def _canonical(sk: Skeleton, adsorbed: bool) -> str:
    from rdkit import Chem

    return Chem.MolToSmiles(sk.to_mol(adsorbed))


@lru_cache(maxsize=200_000)
def _skeleton_key(sk: Skeleton) -> str:
    from rdkit import Chem

    rw = Chem.RWMol()
    for a, h in zip(sk.atoms, sk.hydrogens):
        atom = Chem.Atom(_ATOMIC_NUMBER[a])
        atom.SetNumExplicitHs(int(h))
        atom.SetNoImplicit(True)
        rw.AddAtom(atom)
    for i, j in sk.bonds:
        rw.AddBond(i, j, Chem.BondType.SINGLE)
    mol = rw.GetMol()
    mol.UpdatePropertyCache(strict=False)
    return Chem.MolToSmiles(mol, allHsExplicit=True)


@lru_cache(maxsize=200_000)
def _ranks(sk: Skeleton) -> tuple[int, ...]:
    from rdkit import Chem

    mol = sk.to_mol(adsorbed=False)
    return tuple(Chem.CanonicalRankAtoms(mol, breakTies=True))


# ------------------------------------------------------------------------------------------------
# reading names
_TOKEN = re.compile(r"\(|\)(\d*)|([A-Z][a-z]?)(\d*)")


def parse_name(text: str) -> Skeleton:
    """Skeleton of a condensed formula in ecatlab notation (``"OCHO*"``, ``"CH3CH2OH(aq)"``).

    The trailing ``*`` and a phase in parentheses at the end are ignored. Known molecule formulas
    such as ``C2H4`` or ``N2H4`` come from :data:`KNOWN_MOLECULE_SMILES`.

    Raises
    ------
    NotationError
        When the text is not a condensed formula this reading can place; give a SMILES instead.
    """
    raw = str(text).strip()
    core = re.sub(r"\((g|l|aq|s)\)$", "", raw.rstrip("*").strip())
    if core in KNOWN_MOLECULE_SMILES:
        return skeleton_from_smiles(KNOWN_MOLECULE_SMILES[core])
    atoms: list[str] = []
    hyd: list[int] = []
    bonds: list[tuple[int, int]] = []
    tokens = []
    pos = 0
    for m in _TOKEN.finditer(core):
        if m.start() != pos:
            raise NotationError(raw, f"cannot read {raw!r} as a condensed formula at {core[pos:]!r}; give a SMILES with '*' on the binding atom")
        pos = m.end()
        if m.group(0) == "(":
            tokens.append(("(", 1))
        elif m.group(0).startswith(")"):
            tokens.append((")", int(m.group(1) or 1)))
        else:
            tokens.append((m.group(2), int(m.group(3) or 1)))
    if pos != len(core) or not tokens:
        raise NotationError(raw, f"cannot read {raw!r} as a condensed formula; give a SMILES with '*' on the binding atom")

    pending_h = 0

    def parse_group(k: int, anchor: int) -> tuple[int, list[int]]:
        """Read tokens from k until ')' or the end; returns (next position, atoms added)."""
        nonlocal pending_h
        current = anchor  # backbone atom to attach to
        added: list[int] = []
        last = -1
        while k < len(tokens):
            sym, count = tokens[k]
            if sym == ")":
                return k, added
            if sym == "(":
                start = len(atoms)
                k2, sub = parse_group(k + 1, last if last >= 0 else current)
                if k2 >= len(tokens):
                    raise NotationError(raw, f"unbalanced parentheses in {raw!r}")
                mult = tokens[k2][1]
                block = (start, len(atoms))
                for _ in range(mult - 1):  # repeat the group
                    offset = len(atoms) - block[0]
                    for a in range(block[0], block[1]):
                        atoms.append(atoms[a])
                        hyd.append(hyd[a])
                    for (i, j) in [b for b in bonds if block[0] <= b[0] < block[1] or block[0] <= b[1] < block[1]]:
                        i2 = i + offset if i >= block[0] else i
                        j2 = j + offset if j >= block[0] else j
                        bonds.append((i2, j2))
                    added.extend(range(len(atoms) - (block[1] - block[0]), len(atoms)))
                added.extend(sub)
                k = k2 + 1
                continue
            if sym == "H":
                if last < 0:
                    pending_h += count
                else:
                    hyd[last] += count
                k += 1
                continue
            if sym not in VALENCE:
                raise NotationError(raw, f"{raw!r}: element {sym!r} is not supported in structures (C, N, O, S)")
            nxt = tokens[k + 1][0] if k + 1 < len(tokens) else None
            if nxt == "H":
                nxt = tokens[k + 2][0] if k + 2 < len(tokens) else None
            for c in range(count):
                idx = len(atoms)
                atoms.append(sym)
                hyd.append(0)
                added.append(idx)
                if pending_h:
                    hyd[idx] += pending_h
                    pending_h = 0
                backbone = sym in _BACKBONE or current < 0 or (sym == "O" and nxt in _BACKBONE and c == count - 1)
                if current >= 0:
                    bonds.append((current, idx))
                if backbone:
                    current = idx
                last = idx
            k += 1
        return k, added

    k, _ = parse_group(0, -1)
    if k < len(tokens):
        raise NotationError(raw, f"unbalanced parentheses in {raw!r}")
    if pending_h and not atoms:
        raise NotationError(raw, f"{raw!r} has no heavy atom; species made of hydrogen alone have no skeleton")
    sk = Skeleton(tuple(atoms), tuple(hyd), tuple(bonds))
    if not sk.valid:
        raise NotationError(raw, f"{raw!r}: read as {sk.name() if sk.atoms else '?'} the valences do not close (too many H or bonds); give a SMILES")
    return sk


def skeleton_from_smiles(smiles: str) -> Skeleton:
    """Skeleton of a SMILES (``*`` dummy atoms mark the surface and are dropped).

    Hydrogen counts are RDKit's total counts per heavy atom after parsing.
    """
    from rdkit import Chem

    mol = Chem.MolFromSmiles(smiles)
    if mol is None:
        raise NotationError(smiles, "RDKit cannot read this SMILES")
    keep = [a.GetIdx() for a in mol.GetAtoms() if a.GetAtomicNum() > 1]
    index = {old: new for new, old in enumerate(keep)}
    atoms, hyd = [], []
    for old in keep:
        a = mol.GetAtomWithIdx(old)
        sym = a.GetSymbol()
        if sym not in VALENCE:
            raise NotationError(smiles, f"element {sym} not supported (C, N, O, S)")
        atoms.append(sym)
        hyd.append(a.GetTotalNumHs())
    bonds = [(index[b.GetBeginAtomIdx()], index[b.GetEndAtomIdx()]) for b in mol.GetBonds()
             if b.GetBeginAtomIdx() in index and b.GetEndAtomIdx() in index]
    return Skeleton(tuple(atoms), tuple(hyd), tuple(bonds))


def molecule_skeleton(key: str) -> Skeleton | None:
    """Skeleton of a molecule key such as ``"CH4(g)"``; None if it has no heavy atom (H2)."""
    core = re.sub(r"\((g|l|aq|s)\)$", "", str(key).strip())
    if core in KNOWN_MOLECULE_SMILES:
        return skeleton_from_smiles(KNOWN_MOLECULE_SMILES[core])
    if not re.search(r"[CNOS]", core):
        return None
    return parse_name(core)


def structures_from(mapping: Mapping[str, str] | None) -> dict[str, Skeleton]:
    """``{species key: Skeleton}`` from user SMILES (binding atoms marked with ``*``)."""
    out: dict[str, Skeleton] = {}
    for k, v in dict(mapping or {}).items():
        out[str(k).strip()] = v if isinstance(v, Skeleton) else skeleton_from_smiles(str(v))
    return out


def skeletons_for(names: Iterable[str], structures: Mapping[str, Skeleton] | None = None) -> dict[str, Skeleton]:
    """Skeleton of every name (user structures first, then the condensed reading)."""
    structures = structures or {}
    return {n: structures[n] if n in structures else parse_name(n) for n in names}
