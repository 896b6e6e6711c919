"""Descriptor space: descriptor values (eV) -> adsorbate free energies (eV) through scaling relations.

``G(species) = C @ g + d`` with the base adsorbates ``g = M^-1 (D - m)`` (see :mod:`ecatlab.volcano`).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Iterable, Sequence

import numpy as np
import pandas as pd

from ecatlab.errors import ScalingError
from ecatlab.notation import Species
from ecatlab.scaling import Descriptor, ScalingRelation

__all__ = ["DescriptorSpace", "build_space"]


@dataclass(frozen=True)
class DescriptorSpace:
    """Affine map from descriptor values (eV) to adsorbate free energies (eV).

    ``G(species) = C @ g + d`` with base adsorbates ``g = M^-1 (D - m)``.
    """

    descriptors: tuple[Descriptor, ...]
    species: tuple[str, ...]
    base: tuple[str, ...]
    C: np.ndarray
    d: np.ndarray
    M: np.ndarray
    m: np.ndarray
    relations: tuple[ScalingRelation, ...]

    def energies(self, D: np.ndarray, species: Sequence[str] | None = None) -> np.ndarray:
        """Adsorbate free energies (..., n_species) in eV for descriptor values D (..., n_descriptors)."""
        D = np.asarray(D, dtype=float)
        g = (D - self.m) @ np.linalg.inv(self.M).T
        G = g @ self.C.T + self.d
        if species is None:
            return G
        idx = [self.species.index(s) for s in species]
        return G[..., idx]

    def frame(self, D: np.ndarray, index=None) -> pd.DataFrame:
        """Synthetic surfaces as a wide table (rows: descriptor points, columns: adsorbates, eV)."""
        return pd.DataFrame(self.energies(np.atleast_2d(D)), columns=list(self.species), index=index)


def build_space(relations: Iterable[ScalingRelation], descriptors: Sequence[Descriptor], needed: Iterable[str], needed_by: str = "the pathway") -> DescriptorSpace:
    """Express ``needed`` adsorbates and the descriptors through the relations' base adsorbates.

    Raises
    ------
    ScalingError
        Duplicate or cyclic relations; an adsorbate not tied to the descriptors (naming it and how
        to supply the relation); descriptors that are dependent or constant under the relations.
    """
    rel: dict[str, ScalingRelation] = {}
    for r in relations:
        if r.target in rel:
            raise ScalingError(f"two scaling relations predict {r.target} ({rel[r.target].equation}; {r.equation}); keep one")
        rel[r.target] = r
    memo: dict[str, tuple[dict[str, float], float]] = {}

    def expr(s: str, stack: tuple[str, ...]) -> tuple[dict[str, float], float]:
        if s in memo:
            return memo[s]
        if s in stack:
            raise ScalingError(f"scaling relations form a cycle: {' -> '.join(stack + (s,))}; one adsorbate of the cycle must be a free descriptor")
        if s not in rel:
            out = ({s: 1.0}, 0.0)
        else:
            r = rel[s]
            coefs: dict[str, float] = {}
            const = r.intercept
            for a, dsp in zip(r.slopes, r.descriptors):
                c, k = expr(dsp, stack + (s,))
                for leaf, v in c.items():
                    coefs[leaf] = coefs.get(leaf, 0.0) + a * v
                const += a * k
            out = (coefs, const)
        memo[s] = out
        return out

    needed = list(dict.fromkeys(Species.parse(s).key for s in needed))
    desc_species = list(dict.fromkeys(s for d in descriptors for s in d.species))
    all_species = list(dict.fromkeys(needed + desc_species))
    for s in all_species:
        expr(s, ())
    desc_leaves = list(dict.fromkeys(leaf for s in desc_species for leaf in memo[s][0]))
    leaves = list(dict.fromkeys(desc_leaves + [leaf for s in needed for leaf in memo[s][0]]))
    dtext = " and ".join(repr(d.text) for d in descriptors)
    extra = [leaf for leaf in leaves if leaf not in desc_leaves]
    if extra:
        users = {leaf: [s for s in needed if leaf in memo[s][0]] for leaf in extra}
        detail = "; ".join(f"{leaf} (needed for {', '.join(u)})" for leaf, u in users.items())
        first = extra[0]
        anchor = desc_leaves[0] if desc_leaves else "OH*"
        raise ScalingError(
            f"{needed_by}: adsorbate(s) not tied to the descriptor {dtext} by a scaling relation: {detail}. "
            f"Supply a relation, e.g. ScalingRelation.given({first!r}, {anchor!r}, slope, intercept) or "
            f"fit_scaling(table, {first!r}, {anchor!r}), or pass an energy table so that it is fitted"
        )
    if len(leaves) != len(descriptors):
        raise ScalingError(
            f"the descriptors {dtext} depend on {len(leaves)} free adsorbate(s) ({', '.join(leaves)}) under the scaling relations; "
            f"{len(descriptors)} independent descriptor(s) are needed — drop a relation that ties them together or choose other descriptors"
        )
    base = tuple(leaves)
    C = np.array([[memo[s][0].get(b, 0.0) for b in base] for s in all_species]).reshape(len(all_species), len(base))
    d = np.array([memo[s][1] for s in all_species], dtype=float)
    M = np.array([d_.weights(all_species) @ C for d_ in descriptors]).reshape(len(descriptors), len(base))
    m = np.array([d_.weights(all_species) @ d for d_ in descriptors], dtype=float)
    if abs(np.linalg.det(M)) < 1e-9:
        raise ScalingError(
            f"under the scaling relations the descriptor(s) {dtext} do not vary independently (e.g. 'O* - OH*' with a slope-1 relation "
            "between O* and OH* is a constant); use another descriptor or relations with other slopes"
        )
    used = tuple(r for r in rel.values() if r.target in memo)
    return DescriptorSpace(tuple(descriptors), tuple(all_species), base, C, d, M, m, used)
