r"""Volcanoes, activity maps and selectivity maps built on scaling relations.

Model
-----
Scaling relations (:mod:`ecatlab.scaling`) express every adsorbate of a pathway as an affine
function of one or two *descriptors* :math:`D` (eV), each an adsorbate or a linear combination of
adsorbates such as ``"O* - OH*"``. Relations may chain (OOH* from OH*, OH* from O*). With the base
adsorbates :math:`g` (those not predicted by any relation)

.. math::

    \Delta G_s = C_s \cdot g + d_s, \qquad D = M g + m \;\Rightarrow\; g = M^{-1}(D - m)

so on a grid of descriptor values every adsorbate has a synthetic free energy. These synthetic
surfaces go through the CHE engine unchanged
(:meth:`ecatlab.che.CompiledPathway.affine`, vectorised over the grid), giving per step
:math:`\Delta G_i(U) = a_i + n_i U` and the onset line :math:`U_i = -a_i/n_i` (V on the chosen
scale). The limiting potential is the envelope

.. math::

    U_L = \min_i U_i \;\text{(reduction)}, \qquad U_L = \max_i U_i \;\text{(oxidation)}

over electrochemical steps (chemical steps are reported separately as ``max_chemical_dG``, as in
:func:`ecatlab.che.limiting_potentials`). The *apex* is the best :math:`U_L` over the descriptor
range: found exactly from the intersections of the step lines (1D) or by linear programming
(2D, :func:`scipy.optimize.linprog`), not from the grid. The theoretical overpotential at the apex
is the scaling-imposed minimum, e.g. 0.37 V for ORR/OER with
:math:`\Delta G(OOH^*) = \Delta G(OH^*) + 3.2` eV (Man et al., ChemCatChem 3, 1159 (2011);
Koper, J. Electroanal. Chem. 660, 254 (2011)).

Computed surfaces are placed at their own descriptor values with their *exact* limiting
potentials from :func:`ecatlab.che.limiting_potentials` (not the scaling prediction, which is given
alongside as ``scaling_limiting_potential``).

Selectivity maps compare onset potentials of products (RHE scale by default): the product whose
onset is least negative wins. By default (``basis="auto"``) the onset of a product is the limiting
potential of its best route in the reaction network (:mod:`ecatlab.network`), searched on the
synthetic surfaces of the whole grid at once; HER comes from the engine's
``her-volmer-heyrovsky`` pathway. When the scaling relations do not cover the network, the
built-in pathways (CO, HCOOH, CH4, CH3OH and HER) are compared instead, and the map says so.

Layers: :class:`VolcanoAnalysis` computes, the result objects (:class:`VolcanoCurve`,
:class:`ActivityMap`, :class:`SelectivityMap`) hold arrays and give DataFrames; plotting lives in
:mod:`ecatlab.plotting.volcano`.
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass, field
from typing import Iterable, Mapping, Sequence

import numpy as np
import pandas as pd

from ecatlab import che
from ecatlab.che import kernel
from ecatlab.constants import STANDARD_TEMPERATURE
from ecatlab.energies import EnergyTable, read_energies
from ecatlab.errors import MissingDataWarning, PathwayError, ScalingError
from ecatlab.notation import Pathway, Species
from ecatlab.pathways import resolve
from ecatlab.references import ReferenceScheme
from ecatlab.scaling import Descriptor, ScalingRelation, fit_scaling

__all__ = [
    "VolcanoAnalysis",
    "VolcanoCurve",
    "Apex",
    "ActivityMap",
    "SelectivityMap",
    "DescriptorSpace",
    "volcano",
    "activity_map",
    "selectivity_map",
    "volcano_summary",
    "DEFAULT_PRODUCTS",
    "SELECTIVITY_BASES",
]

#: Bases of :func:`selectivity_map`: best network routes, built-in pathways, or the network when possible.
SELECTIVITY_BASES: tuple[str, ...] = ("auto", "network", "pathways")
#: Default products of :func:`selectivity_map` on the pathways basis: CO2RR products and the competing HER.
DEFAULT_PRODUCTS: tuple[str, ...] = ("co2rr-co", "co2rr-hcooh", "co2rr-ch4", "co2rr-ch3oh", "her-volmer-heyrovsky")


# ------------------------------------------------------------------------------------------------
# descriptor space: descriptor values -> adsorbate free energies
# ------------------------------------------------------------------------------------------------
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


# ------------------------------------------------------------------------------------------------
# result objects
# ------------------------------------------------------------------------------------------------
@dataclass(frozen=True)
class Apex:
    """Best limiting potential over the descriptor range (the top of the volcano).

    Attributes
    ----------
    descriptor : tuple of float
        Descriptor value(s) of the optimum, eV (midpoint if the optimum is a plateau).
    descriptor_range : tuple of (float, float)
        (low, high) of the optimal descriptor interval (equal for a point; 1D only).
    limiting_potential : float
        Best value of the curve, V on ``scale``: the electrochemical U_L, or, when the curve includes
        chemical steps, the effective limiting potential U_eq -/+ G_max/e.
    overpotential : float
        Minimum theoretical overpotential at the apex, signed as in the tables
        (:func:`ecatlab.che.kernel.signed_overpotential`: U_eq - U_L for reductions, U_L - U_eq for
        oxidations), V.
    determining_steps : tuple of str
        Steps whose lines meet at the apex.
    at_boundary : bool
        True if the optimum lies on the edge of the range (widen the range: the true optimum may be outside).
    method : str
        How it was found.
    """

    descriptor: tuple[float, ...]
    descriptor_range: tuple[tuple[float, float], ...]
    limiting_potential: float
    overpotential: float
    determining_steps: tuple[str, ...]
    at_boundary: bool
    method: str
    G_max: float = float("nan")


def _conditions(path: Pathway, scheme: ReferenceScheme, pH, scale, temperature, source) -> dict:
    return {
        "pathway": path.name,
        "reaction": path.overall_step().equation,
        "direction": path.direction,
        "scale": scale,
        "pH": float(pH),
        "temperature": float(temperature),
        "references": scheme.describe(),
        "energy_source": source,
    }


@dataclass(frozen=True)
class VolcanoCurve:
    """A 1D volcano: limiting potential vs one descriptor through scaling relations.

    Attributes
    ----------
    pathway : Pathway
    descriptor : Descriptor
    x : ndarray (N,)
        Descriptor grid, eV.
    step_names : tuple of str
        All steps; ``electrochemical`` marks which have onset lines.
    electrochemical : ndarray of bool (n_steps,)
    step_onsets : ndarray (N, n_steps)
        The step lines, V on ``scale``: onset potentials -a_i/n_i of the electrochemical steps (NaN
        for chemical steps), or, when :attr:`includes_chemical`, every step's potential equivalent
        U_eq -/+ dG_i(U_eq)/e (:func:`ecatlab.che.kernel.potential_equivalents`).
    line_intercepts, line_slopes : ndarray (n_steps,)
        Exact lines U_i(x) = intercept_i + slope_i * x (V, V/eV); NaN for steps not on the curve.
    limiting_potential : ndarray (N,)
        The curve: envelope of the step lines, V on ``scale`` (the electrochemical U_L, or with
        chemical steps the effective limiting potential U_eq -/+ G_max/e).
    determining_step_index : ndarray of int (N,)
        1-based index of the potential-determining step.
    max_chemical_dG : ndarray (N,)
        Largest chemical-step dG (eV); NaN if the pathway has no chemical step.
    equilibrium_potential : float
        U_eq, V on ``scale``.
    apex : Apex
    includes_chemical : bool
        True when chemical steps are on the curve (default for pathways that have them).
    G_max : ndarray (N,)
        G_max along the grid, eV (:func:`ecatlab.che.kernel.gmax`).
    electrochemical_limiting_potential : ndarray (N,)
        Envelope of the electrochemical onsets only, V on ``scale`` (equal to ``limiting_potential``
        when the curve has no chemical step).
    surfaces : DataFrame
        Computed surfaces: ``surface``, ``descriptor`` (eV), ``limiting_potential`` (exact, V),
        ``overpotential`` (V), ``determining_step``, ``scaling_limiting_potential`` (envelope at
        the surface's descriptor, V).
    relations : tuple of ScalingRelation
        The relations used (given and fitted).
    conditions : dict
        pathway, reaction, direction, scale, pH, temperature, references, energy_source.
    """

    pathway: Pathway
    descriptor: Descriptor
    x: np.ndarray
    step_names: tuple[str, ...]
    electrochemical: np.ndarray
    step_onsets: np.ndarray
    line_intercepts: np.ndarray
    line_slopes: np.ndarray
    limiting_potential: np.ndarray
    determining_step_index: np.ndarray
    max_chemical_dG: np.ndarray
    equilibrium_potential: float
    apex: Apex
    surfaces: pd.DataFrame = field(repr=False)
    relations: tuple[ScalingRelation, ...] = field(repr=False)
    conditions: dict = field(repr=False)
    space: DescriptorSpace = field(repr=False)
    includes_chemical: bool = False
    G_max: np.ndarray = field(default=None, repr=False)
    electrochemical_limiting_potential: np.ndarray = field(default=None, repr=False)

    @property
    def direction(self) -> str:
        return self.pathway.direction

    @property
    def overpotential(self) -> np.ndarray:
        """Theoretical overpotential along the grid (signed as in the tables), V."""
        return kernel.signed_overpotential(self.limiting_potential, self.equilibrium_potential, self.direction)

    def to_frame(self) -> pd.DataFrame:
        """Grid table: descriptor (eV), limiting_potential (the curve, V), overpotential (V),
        determining_step, G_max (eV), max_chemical_dG (eV) and one column per step line (V)."""
        frame = pd.DataFrame(
            {
                "descriptor": self.x,
                "limiting_potential": self.limiting_potential,
                "overpotential": self.overpotential,
                "determining_step": np.array(self.step_names, dtype=object)[self.determining_step_index - 1],
                "G_max": self.G_max if self.G_max is not None else np.full(len(self.x), np.nan),
                "max_chemical_dG": self.max_chemical_dG,
            }
        )
        if self.electrochemical_limiting_potential is not None:
            frame["electrochemical_limiting_potential"] = self.electrochemical_limiting_potential
        for j, name in enumerate(self.step_names):
            if np.isfinite(self.line_slopes[j]):
                frame[f"{'line' if self.includes_chemical else 'onset'} {name}"] = self.step_onsets[:, j]
        frame.attrs.update(self.conditions)
        frame.attrs["descriptor"] = self.descriptor.text
        frame.attrs["units"] = {"descriptor": "eV", "limiting_potential": f"V vs {self.conditions['scale']}", "overpotential": "V",
                                "G_max": "eV", "max_chemical_dG": "eV"}
        frame.attrs["includes_chemical_steps"] = bool(self.includes_chemical)
        return frame

    def summary(self) -> pd.DataFrame:
        """Apex, equilibrium potential and the scaling relations used, as a quantity/value/unit/note table."""
        a = self.apex
        sc = self.conditions["scale"]
        lo, hi = a.descriptor_range[0]
        rows = [
            ("pathway", self.pathway.name, "", self.conditions["reaction"]),
            ("descriptor", self.descriptor.text, "eV", "linear combination of adsorption free energies"),
            ("optimal descriptor", a.descriptor[0], "eV", "plateau from %.3f to %.3f eV" % (lo, hi) if hi - lo > 1e-9 else "single point"),
            ("best limiting potential", a.limiting_potential, f"V vs {sc}",
             a.method + ("; chemical steps included (U_eq -/+ G_max/e)" if self.includes_chemical else "; electrochemical steps only")),
            ("minimum overpotential", a.overpotential, "V", "scaling-imposed limit at the apex, signed as in the tables (U_eq - U_L reduction, U_L - U_eq oxidation)"),
            ("G_max at the apex", a.G_max, "eV", "largest step free energy at U_eq, chemical steps included (Exner 2020)"),
            ("equilibrium potential", self.equilibrium_potential, f"V vs {sc}", "overall reaction, CHE"),
            ("steps meeting at the apex", "; ".join(a.determining_steps), "", ""),
            ("apex at range edge", a.at_boundary, "", "True: widen the descriptor range, the optimum may lie outside" if a.at_boundary else ""),
            ("descriptor range", f"{self.x[0]:.3f} to {self.x[-1]:.3f}", "eV", f"{len(self.x)} grid points"),
            ("pH", self.conditions["pH"], "", ""),
            ("temperature", self.conditions["temperature"], "K", ""),
        ]
        for r in self.relations:
            stats = f"R² = {r.r_squared:.3f}, RMSE = {r.rmse:.3f} eV, n = {r.n_surfaces}" if r.is_fitted else ""
            rows.append(("scaling relation", r.equation, "eV", "; ".join(x for x in (stats, r.source) if x)))
        frame = pd.DataFrame(rows, columns=["quantity", "value", "unit", "note"])
        frame.attrs.update(self.conditions)
        return frame


@dataclass(frozen=True)
class ActivityMap:
    """Limiting potential over two descriptors.

    Attributes
    ----------
    pathway : Pathway
    descriptors : (Descriptor, Descriptor)
        x and y descriptors.
    x, y : ndarray
        Grid axes, eV.
    limiting_potential : ndarray (len(y), len(x))
        U_L, V on ``scale``.
    determining_step_index : ndarray of int (len(y), len(x))
        1-based index of the potential-determining step.
    step_names : tuple of str
    max_chemical_dG : ndarray (len(y), len(x))
        eV; NaN if no chemical step.
    equilibrium_potential : float
        V on ``scale``.
    optimum : Apex
        Exact best U_L over the box (linear programming); ``descriptor`` is (x, y) of one optimal point.
    surfaces : DataFrame
        ``surface``, ``x``, ``y`` (eV), ``limiting_potential`` (exact, V), ``overpotential``, ``determining_step``.
    relations, conditions
        As in :class:`VolcanoCurve`.
    """

    pathway: Pathway
    descriptors: tuple[Descriptor, Descriptor]
    x: np.ndarray
    y: np.ndarray
    limiting_potential: np.ndarray
    determining_step_index: np.ndarray
    step_names: tuple[str, ...]
    max_chemical_dG: np.ndarray
    equilibrium_potential: float
    optimum: Apex
    surfaces: pd.DataFrame = field(repr=False)
    relations: tuple[ScalingRelation, ...] = field(repr=False)
    conditions: dict = field(repr=False)
    space: DescriptorSpace = field(repr=False)

    @property
    def overpotential(self) -> np.ndarray:
        """Theoretical overpotential over the grid (signed as in the tables), V."""
        return kernel.signed_overpotential(self.limiting_potential, self.equilibrium_potential, self.pathway.direction)

    def to_frame(self) -> pd.DataFrame:
        """Long table: x, y (eV), limiting_potential (V), overpotential (V), determining_step, max_chemical_dG (eV)."""
        X, Y = np.meshgrid(self.x, self.y)
        frame = pd.DataFrame(
            {
                "x": X.ravel(),
                "y": Y.ravel(),
                "limiting_potential": self.limiting_potential.ravel(),
                "overpotential": self.overpotential.ravel(),
                "determining_step": np.array(self.step_names, dtype=object)[self.determining_step_index.ravel() - 1],
                "max_chemical_dG": self.max_chemical_dG.ravel(),
            }
        )
        frame.attrs.update(self.conditions)
        frame.attrs["descriptors"] = {"x": self.descriptors[0].text, "y": self.descriptors[1].text}
        return frame


@dataclass(frozen=True)
class SelectivityMap:
    """Which product has the least negative onset (limiting) potential over two descriptors.

    Attributes
    ----------
    descriptors : (Descriptor, Descriptor)
    x, y : ndarray
        Grid axes, eV.
    products : tuple of str
        Pathway keys compared.
    product_labels : tuple of str
        Product names (e.g. ``CO``, ``HCOOH``, ``H2``).
    onset : ndarray (n_products, len(y), len(x))
        Limiting potential of each product pathway, V on ``scale``.
    winner : ndarray of int (len(y), len(x))
        Index into ``products`` of the least negative onset.
    margin : ndarray (len(y), len(x))
        Onset of the winner minus the runner-up, V (small margins: no clear selectivity).
    max_chemical_dG : ndarray (n_products, len(y), len(x))
        Largest chemical-step dG of each product's best route or pathway (eV; NaN if it has no
        chemical step or the product is unavailable there), e.g. CO desorption.
    winner_max_chemical_dG : ndarray (len(y), len(x))
        Largest chemical-step dG (eV) of the winning product's route (network basis: the best
        route of :meth:`ecatlab.network.NetworkAnalysis.best_route_arrays`; pathways basis: the
        engine's ``max_chemical_dG`` of the winning pathway); NaN if that route has no chemical
        step. A positive value is an uphill, potential-independent step the onset ignores: e.g.
        CO* -> * + CO(g) uphill by 0.8 eV means CO stays bound (poisons the surface) rather than
        being released, whatever the potential. Computed from ``max_chemical_dG`` and ``winner``.
    surfaces : DataFrame
        ``surface``, ``x``, ``y`` and the exact onset of every product (V), ``winner``, ``margin``
        (network basis: the network search on the surface's own energies; pathways basis:
        :func:`ecatlab.che.limiting_potentials`).
    relations : tuple of ScalingRelation
        Relations used (given and fitted).
    conditions : dict
        products, basis, basis_note, scale, pH, temperature, references, energy_source, rule.
    space : DescriptorSpace
        Descriptor values -> synthetic adsorbate energies (eV); ``space.frame(D)`` rebuilds the
        synthetic surfaces.
    basis : {"network", "pathways"}
        ``"network"``: onsets are limiting potentials of the best routes of :attr:`network`
        (``products`` are molecule keys, ``"H2(g)"`` = HER pathway); ``"pathways"``: of the
        pathways in ``products`` (keys).
    basis_note : str
        What the basis is and what was left out (adsorbates without a scaling relation, or why
        the network could not be used).
    routes : ndarray of object (n_products, len(y), len(x))
        Name of the best route (network basis) or the pathway to each product at each point.
    network : ReactionNetwork or None
        The network searched (network basis).
    excluded : tuple of str
        Adsorbates left out of the network for want of a scaling relation.
    """

    descriptors: tuple[Descriptor, Descriptor]
    x: np.ndarray
    y: np.ndarray
    products: tuple[str, ...]
    product_labels: tuple[str, ...]
    onset: np.ndarray
    winner: np.ndarray
    margin: np.ndarray
    max_chemical_dG: np.ndarray
    surfaces: pd.DataFrame = field(repr=False)
    relations: tuple[ScalingRelation, ...] = field(repr=False)
    conditions: dict = field(repr=False)
    space: DescriptorSpace | None = field(default=None, repr=False)
    basis: str = "pathways"
    basis_note: str = ""
    routes: np.ndarray | None = field(default=None, repr=False)
    network: object = field(default=None, repr=False)
    excluded: tuple[str, ...] = ()
    winner_max_chemical_dG: np.ndarray = field(init=False, repr=False)

    def __post_init__(self):
        chem = np.take_along_axis(np.asarray(self.max_chemical_dG, dtype=float), np.asarray(self.winner)[None], axis=0)[0]
        object.__setattr__(self, "winner_max_chemical_dG", chem)

    def winner_route(self) -> np.ndarray:
        """Name of the best route (or pathway) to the winning product at each point, (len(y), len(x))."""
        return np.take_along_axis(self.routes, self.winner[None], axis=0)[0]

    def to_frame(self) -> pd.DataFrame:
        """Long table: x, y (eV), onset per product (V), winner (product label), margin (V), winner_route,
        winner_max_chemical_dG (eV, largest chemical-step dG of the winner's route; NaN if none)."""
        X, Y = np.meshgrid(self.x, self.y)
        frame = pd.DataFrame({"x": X.ravel(), "y": Y.ravel()})
        for k, lab in enumerate(self.product_labels):
            frame[f"onset {lab}"] = self.onset[k].ravel()
        frame["winner"] = np.array(self.product_labels, dtype=object)[self.winner.ravel()]
        frame["margin"] = self.margin.ravel()
        if self.routes is not None:
            frame["winner_route"] = self.winner_route().ravel()
        frame["winner_max_chemical_dG"] = self.winner_max_chemical_dG.ravel()
        frame.attrs.update(self.conditions)
        return frame

    def area_fractions(self) -> pd.Series:
        """Share of the map area won by each product (0..1)."""
        counts = np.bincount(self.winner.ravel(), minlength=len(self.products)) / self.winner.size
        return pd.Series(counts, index=list(self.product_labels), name="area fraction")


# ------------------------------------------------------------------------------------------------
# analysis
# ------------------------------------------------------------------------------------------------
def _product_label(path: Pathway) -> str:
    net = path.overall_net()
    prods = [sp for sp, c in net.items() if c > 0 and sp.is_molecule and sp.formula != "H2O"]
    return ", ".join(sp.formula for sp in prods) or path.name


class VolcanoAnalysis:
    """Compute volcanoes and maps from scaling relations and (optionally) an energy table.

    Parameters
    ----------
    energies : EnergyTable, DataFrame, path or None
        Computed surfaces: used to fit missing relations and drawn on top with their exact
        limiting potentials. ``None``: relations only (then ``relations`` must cover everything).
    relations : list of ScalingRelation, optional
        Given (or previously fitted) relations; they take precedence over fitted ones.
    fixed_slopes : mapping target -> slope, optional
        Slopes to fix when fitting missing relations (e.g. ``{"OOH*": 1.0}``).
    pH, scale, temperature
        Conditions (scale ``"RHE"`` or ``"SHE"``, T in K).
    references : ReferenceScheme, optional
        Molecule references when ``energies`` is None (default scheme).
    fit_against : str or list of str, optional
        Adsorbate(s) to fit missing relations against, one per descriptor. Default: the first
        adsorbate of each descriptor (for ``"O* - OH*"`` that is O*; pass ``fit_against="OH*"`` to
        fit O* and OOH* against OH* as in the usual OER analysis).

    Notes
    -----
    Missing relations are fitted by :func:`ecatlab.scaling.fit_scaling` against ``fit_against``,
    with one or two descriptors as the map/volcano has.
    """

    def __init__(
        self,
        energies=None,
        relations: Iterable[ScalingRelation] = (),
        fixed_slopes: Mapping[str, float] | None = None,
        pH: float = 0.0,
        scale: str = "RHE",
        temperature: float = STANDARD_TEMPERATURE,
        references: ReferenceScheme | None = None,
        fit_against: str | Sequence[str] | None = None,
    ):
        self.fit_against = None if fit_against is None else tuple(Species.parse(k).key for k in ((fit_against,) if isinstance(fit_against, str) else fit_against))
        self.table: EnergyTable | None = None if energies is None else (energies if isinstance(energies, EnergyTable) else read_energies(energies, references=references))
        self.scheme = self.table.scheme if self.table is not None else (references or ReferenceScheme())
        self.given = tuple(relations)
        for r in self.given:
            if not isinstance(r, ScalingRelation):
                raise ScalingError(f"relations must be ScalingRelation objects, got {type(r).__name__}; build them with fit_scaling or ScalingRelation.given")
        self.fixed_slopes = {Species.parse(k).key: v for k, v in (fixed_slopes or {}).items()}
        self.pH = float(pH)
        self.scale = str(scale).upper()
        self.temperature = float(temperature)
        che.equilibrium_potential("her-volmer-heyrovsky", self.scale, self.pH, self.temperature, self.scheme)  # validates conditions
        self._fitted: dict[tuple, ScalingRelation] = {}

    @property
    def source(self) -> str:
        return self.table.source if self.table is not None else "scaling relations only (no energy table)"

    # -- relations ----------------------------------------------------------------------------
    def relations_for(self, needed: Iterable[str], descriptors: Sequence[Descriptor]) -> list[ScalingRelation]:
        """Given relations plus fits (to the energy table) for adsorbates the given ones do not cover."""
        given = {r.target: r for r in self.given}
        base = tuple(dict.fromkeys(d.species[0] for d in descriptors))
        if self.fit_against is not None:
            if len(self.fit_against) != len(descriptors):
                raise ScalingError(f"fit_against names {len(self.fit_against)} adsorbate(s) for {len(descriptors)} descriptor(s); give one per descriptor")
            base = self.fit_against
        queue = list(dict.fromkeys(list(needed) + [s for d in descriptors for s in d.species]))
        out = list(self.given)
        if self.table is None:
            return out
        seen = set()
        while queue:
            s = queue.pop(0)
            if s in seen or s in base:
                continue
            seen.add(s)
            if s in given:
                queue.extend(given[s].descriptors)
                continue
            key = (s, base)
            if key not in self._fitted:
                with warnings.catch_warnings():
                    warnings.simplefilter("always", MissingDataWarning)
                    self._fitted[key] = fit_scaling(self.table, s, base, self._fixed_slope(s, base))
            out.append(self._fitted[key])
        return out

    def _fixed_slope(self, target: str, base: tuple[str, ...]):
        v = self.fixed_slopes.get(target)
        if v is None or len(base) == 1:
            return v
        if np.ndim(v) == 0:
            raise ScalingError(f"fixed slope for {target}: the fit has {len(base)} descriptors ({', '.join(base)}); give a list with None for the free slopes")
        return v

    def _space(self, needed: Sequence[str], descriptors: Sequence[Descriptor], who: str) -> DescriptorSpace:
        rels = self.relations_for(needed, descriptors)
        return build_space(rels, descriptors, needed, who)

    def _surface_points(self, descriptors: Sequence[Descriptor], path: Pathway) -> pd.DataFrame:
        cols = ["surface"] + [f"d{i}" for i in range(len(descriptors))] + [
            "limiting_potential", "overpotential", "determining_step", "G_max", "blocked", "effective_limiting_potential"]
        if self.table is None:
            return pd.DataFrame(columns=cols)
        vals = pd.concat([d.evaluate(self.table) for d in descriptors], axis=1)
        ok = vals.notna().all(axis=1)
        if not ok.all():
            warnings.warn(
                f"surfaces lacking a descriptor adsorbate are not drawn: {', '.join(vals.index[~ok])}", MissingDataWarning, stacklevel=4
            )
        lp = che.limiting_potentials(self.table, path, self.pH, self.scale, self.temperature, surfaces=list(vals.index[ok]), on_missing="drop")
        lp = lp.set_index("surface")
        frame = pd.DataFrame({"surface": list(lp.index)})
        for i in range(len(descriptors)):
            frame[f"d{i}"] = vals.loc[lp.index].iloc[:, i].to_numpy(dtype=float)
        frame["limiting_potential"] = lp["limiting_potential"].to_numpy(dtype=float)
        frame["overpotential"] = lp["overpotential"].to_numpy(dtype=float)
        frame["determining_step"] = lp["determining_step"].to_numpy(dtype=object)
        frame["G_max"] = lp["G_max"].to_numpy(dtype=float)
        frame["blocked"] = lp["blocked"].to_numpy(dtype=bool)
        frame["effective_limiting_potential"] = kernel.effective_limiting_potential(
            frame["G_max"].to_numpy(), lp["equilibrium_potential"].to_numpy(dtype=float), path.direction
        )
        return frame

    def _evaluate(self, path: Pathway, space: DescriptorSpace, D: np.ndarray, include_chemical: bool = False):
        """Kernel evaluation on synthetic surfaces D (P, n_desc).

        Returns (lines (P, n_steps) in V, curve value (P,) in V, determining index (P,) 0-based,
        max chemical dG (P,) eV, G_max (P,) eV). ``lines`` are the onset potentials of the
        electrochemical steps (NaN for chemical ones) or, with ``include_chemical``, every step's
        potential equivalent :func:`ecatlab.che.kernel.potential_equivalents`, whose envelope is
        U_eq -/+ G_max/e.
        """
        compiled = che.compile_pathway(path, self.scheme)
        G = space.energies(D, compiled.adsorbates)
        a, n = compiled.affine(G, self.pH, self.scale, self.temperature)
        u_eq = self._u_eq(path)
        if include_chemical:
            lines = kernel.potential_equivalents(a, n, u_eq, path.direction)
            u_l, idx = kernel.envelope_of_lines(lines, path.direction)
        else:
            lines = kernel.onset_potentials(a, n)
            u_l, idx = kernel.envelope(a, n, path.direction)
        max_chem, _ = kernel.chemical_obstacle(a, n)
        g_max, _ = kernel.gmax(a, n, u_eq)
        return lines, u_l, idx, max_chem, g_max

    def _u_eq(self, path: Pathway) -> float:
        return che.equilibrium_potential(path, self.scale, self.pH, self.temperature, self.scheme)

    def _conditions(self, path: Pathway) -> dict:
        return _conditions(path, self.scheme, self.pH, self.scale, self.temperature, self.source)

    # -- 1D volcano -------------------------------------------------------------------------------
    def volcano(
        self,
        pathway,
        descriptor,
        grid: Sequence[float] | None = None,
        span: tuple[float, float] | None = None,
        points: int = 401,
        chemical_steps: bool = True,
    ) -> VolcanoCurve:
        """Limiting potential vs one descriptor (see :class:`VolcanoCurve`).

        Parameters
        ----------
        pathway : str or Pathway
        descriptor : str or Descriptor
            ``"OH*"``, ``"O* - OH*"``...
        grid : array, optional
            Descriptor values (eV, increasing). Default: ``span`` with ``points`` values.
        span : (float, float), optional
            Default: the surfaces' range ± 0.5 eV, else the step-line crossings ± 1 eV.
        chemical_steps : bool
            True (default): a pathway's chemical steps are on the curve, which is then the effective
            limiting potential U_eq - G_max/e (reduction) or U_eq + G_max/e (oxidation), so that an
            uphill desorption or recombination gives its own leg (CO2 -> CO volcano; Volmer-Tafel HER
            peaks at dG(H*) = 0). False: the purely electrochemical envelope of onset potentials.
            For pathways of one-electron steps without chemical steps both are identical.
        """
        path = resolve(pathway)
        desc = Descriptor.parse(descriptor)
        needed = [a.key for a in path.adsorbates]
        space = self._space(needed, (desc,), f"pathway {path.name!r}")
        ec = che.compile_pathway(path, self.scheme).electrochemical
        if not ec.any():
            raise PathwayError(f"pathway {path.name!r} has no electrochemical step; it has no limiting potential")
        include = bool(chemical_steps) and bool((~ec).any())
        on_curve = np.ones_like(ec) if include else ec
        # exact lines from the kernel at two descriptor values (the dependence is affine)
        on01, *_ = self._evaluate(path, space, np.array([[0.0], [1.0]]), include)
        alpha, beta = on01[0], on01[1] - on01[0]
        surf = self._surface_points((desc,), path)
        x = self._grid_1d(grid, span, points, alpha, beta, on_curve, surf, path.direction)
        lines, u_l, idx, max_chem, g_max = self._evaluate(path, space, x[:, None], include)
        ec_curve = u_l if not include else self._evaluate(path, space, x[:, None], False)[1]
        apex = _apex_1d(alpha, beta, on_curve, path.direction, float(x[0]), float(x[-1]), path.step_names)
        u_eq = self._u_eq(path)
        _, _, _, _, g_apex = self._evaluate(path, space, np.array([[apex[0][0]]]), include)
        apex = Apex(apex[0], apex[1], apex[2], float(kernel.signed_overpotential(apex[2], u_eq, path.direction)), apex[3], apex[4],
                    "exact: intersections of the step lines within the range", float(g_apex[0]))
        if len(surf):
            d = surf["d0"].to_numpy(dtype=float)
            _, u_pred, _, _, _ = self._evaluate(path, space, d[:, None], include)
            surf = surf.rename(columns={"d0": "descriptor"})
            surf["scaling_limiting_potential"] = u_pred
        else:
            surf = surf.rename(columns={"d0": "descriptor"}).assign(scaling_limiting_potential=pd.Series(dtype=float))
        surf.attrs["units"] = {"descriptor": "eV", "limiting_potential": f"V vs {self.scale}", "overpotential": "V", "G_max": "eV",
                               "scaling_limiting_potential": f"V vs {self.scale}"}
        return VolcanoCurve(
            pathway=path,
            descriptor=desc,
            x=x,
            step_names=path.step_names,
            electrochemical=ec,
            step_onsets=lines,
            line_intercepts=np.where(on_curve, alpha, np.nan),
            line_slopes=np.where(on_curve, beta, np.nan),
            limiting_potential=u_l,
            determining_step_index=idx + 1,
            max_chemical_dG=max_chem,
            equilibrium_potential=u_eq,
            apex=apex,
            surfaces=surf,
            relations=space.relations,
            conditions=self._conditions(path) | {"chemical_steps_on_curve": include},
            space=space,
            includes_chemical=include,
            G_max=g_max,
            electrochemical_limiting_potential=ec_curve,
        )

    @staticmethod
    def _grid_1d(grid, span, points, alpha, beta, ec, surf, direction) -> np.ndarray:
        if grid is not None:
            x = np.asarray(grid, dtype=float).ravel()
            if x.size < 2 or not np.all(np.isfinite(x)) or np.any(np.diff(x) <= 0):
                raise ScalingError("grid must be at least two finite, strictly increasing descriptor values (eV)")
            return x
        if int(points) < 2:
            raise ScalingError(f"points must be at least 2, got {points}")
        if span is None:
            if len(surf):
                lo, hi = float(surf["d0"].min()) - 0.5, float(surf["d0"].max()) + 0.5
            else:
                xs = _breakpoints(alpha[ec], beta[ec], direction)
                lo, hi = (float(xs.min()) - 1.0, float(xs.max()) + 1.0) if xs.size else (-1.0, 3.0)
        else:
            lo, hi = (float(v) for v in span)
        if not (np.isfinite(lo) and np.isfinite(hi) and hi > lo):
            raise ScalingError(f"descriptor span must be two finite numbers low < high (eV), got {span!r}")
        return np.linspace(lo, hi, int(points))

    # -- 2D maps -----------------------------------------------------------------------------------
    def _grid_2d(self, descriptors, x, y, points, surf):
        axes = []
        for i, (given, d) in enumerate(zip((x, y), descriptors)):
            if given is not None and np.ndim(given) == 1 and len(given) > 2:
                arr = np.asarray(given, dtype=float)
                if not np.all(np.isfinite(arr)) or np.any(np.diff(arr) <= 0):
                    raise ScalingError(f"grid of {d.text} must be finite and strictly increasing (eV)")
                axes.append(arr)
                continue
            if given is not None:
                lo, hi = (float(v) for v in given)
            elif len(surf):
                lo, hi = float(surf[f"d{i}"].min()) - 0.5, float(surf[f"d{i}"].max()) + 0.5
            else:
                lo, hi = -1.0, 3.0
            if not (np.isfinite(lo) and np.isfinite(hi) and hi > lo):
                raise ScalingError(f"span of {d.text} must be two finite numbers low < high (eV), got {given!r}")
            n = points[i] if isinstance(points, (tuple, list)) else points
            axes.append(np.linspace(lo, hi, int(n)))
        return axes

    def activity_map(self, pathway, descriptors: Sequence, x=None, y=None, points: int | tuple[int, int] = 161) -> ActivityMap:
        """Limiting potential and determining step over two descriptors (see :class:`ActivityMap`).

        ``x``/``y``: (low, high) spans or explicit increasing grids in eV (default: surfaces ± 0.5 eV,
        or -1..3 eV without a table).
        """
        path = resolve(pathway)
        descs = self._two(descriptors)
        needed = [a.key for a in path.adsorbates]
        space = self._space(needed, descs, f"pathway {path.name!r}")
        surf = self._surface_points(descs, path)
        gx, gy = self._grid_2d(descs, x, y, points, surf)
        X, Y = np.meshgrid(gx, gy)
        D = np.column_stack([X.ravel(), Y.ravel()])
        onsets, u_l, idx, max_chem, _ = self._evaluate(path, space, D)
        shape = X.shape
        compiled = che.compile_pathway(path, self.scheme)
        ec = compiled.electrochemical
        base, *_ = self._evaluate(path, space, np.array([[0.0, 0.0], [1.0, 0.0], [0.0, 1.0]]))
        alpha, bx, by = base[0], base[1] - base[0], base[2] - base[0]
        u_eq = self._u_eq(path)
        optimum = _optimum_2d(alpha, bx, by, ec, path.direction, (gx[0], gx[-1]), (gy[0], gy[-1]), path.step_names, u_eq)
        surf = surf.rename(columns={"d0": "x", "d1": "y"})
        return ActivityMap(
            pathway=path,
            descriptors=descs,
            x=gx,
            y=gy,
            limiting_potential=u_l.reshape(shape),
            determining_step_index=(idx + 1).reshape(shape),
            step_names=path.step_names,
            max_chemical_dG=max_chem.reshape(shape),
            equilibrium_potential=u_eq,
            optimum=optimum,
            surfaces=surf,
            relations=space.relations,
            conditions=self._conditions(path),
            space=space,
        )

    def selectivity_map(
        self,
        descriptors: Sequence,
        products: Sequence | None = None,
        x=None,
        y=None,
        points: int | tuple[int, int] | None = None,
        basis: str = "auto",
        reactant: str = "CO2",
        network_options: Mapping | None = None,
        chemical_limit: float | None = None,
    ) -> SelectivityMap:
        """Product with the least negative onset potential over two descriptors (see :class:`SelectivityMap`).

        Parameters
        ----------
        descriptors : two descriptors, e.g. ``("CO*", "OH*")``
        products : sequence, optional
            ``basis="network"``: molecules (``"CO"``, ``"CH4(g)"``, ``"H2"`` for hydrogen
            evolution); a built-in pathway key stands for its product. Default: every product the
            network reaches, plus H2 (``her-volmer-heyrovsky``).
            ``basis="pathways"``: reduction pathway keys/objects (default :data:`DEFAULT_PRODUCTS`).
        x, y : (low, high) spans or explicit increasing grids, eV
        points : int or (int, int)
            Grid points per axis (default 101 for the network basis, 161 for the pathways basis).
        basis : {"auto", "network", "pathways"}
            ``"network"``: onset of each product = limiting potential of the best route in the
            reaction network (:mod:`ecatlab.network`) built from the adsorbates that have a scaling
            relation; raises :class:`~ecatlab.errors.ScalingError` if an adsorbate of the network
            has none (given or fitted) or a product cannot be reached.
            ``"pathways"``: onset of each built-in (or given) pathway.
            ``"auto"`` (default): the network, with adsorbates lacking a relation left out (and
            named in :attr:`SelectivityMap.basis_note`), as long as every requested product stays
            reachable and ``products`` are not pathway keys; otherwise the built-in pathways, with
            the reason in ``basis_note``.
        reactant : str
            Reactant of the network (default ``"CO2"``).
        network_options : mapping, optional
            Passed to :func:`ecatlab.network.build_network`: ``allow``, ``forbid``, ``molecules``,
            ``sites``, ``coupling``.
        chemical_limit : float, optional
            eV. Routes (network basis: passed to
            :class:`ecatlab.network.NetworkAnalysis` ``chemical_limit``) or pathways (pathways
            basis; also the HER pathway on either basis) with a chemical step whose dG exceeds
            this are unavailable: at such a point that route/pathway does not compete (its onset,
            ``max_chemical_dG`` and route are NaN/NaN/"" when no other route to the product is
            left). ``None`` (default) keeps every route; chemical steps then never enter the
            onset and are only reported (:attr:`SelectivityMap.winner_max_chemical_dG`).
        """
        descs = self._two(descriptors)
        chemical_limit = _check_chemical_limit(chemical_limit)
        basis = str(basis).lower()
        if basis not in SELECTIVITY_BASES:
            raise ScalingError(f"basis must be one of {', '.join(SELECTIVITY_BASES)}; got {basis!r}")
        if network_options and basis == "pathways":
            raise ScalingError("network_options apply to basis='network' or 'auto' only")
        if basis == "pathways":
            return self._selectivity_pathways(descs, products, x, y, points, "built-in pathways (chosen with basis='pathways')", chemical_limit)
        if basis == "auto" and products is not None and any(_is_pathway_spec(p) for p in products):
            return self._selectivity_pathways(descs, products, x, y, points, "built-in pathways (products given as pathways)", chemical_limit)
        plan = self._network_plan(descs, products, reactant, network_options)
        if basis == "network" and plan["excluded"] and not plan["problem"]:
            why = "; ".join(f"{a}: {w}" for a, w in plan["excluded_why"].items())
            raise ScalingError(
                f"selectivity map on network routes: adsorbate(s) {', '.join(plan['excluded'])} of the network have no scaling relation "
                f"to {' and '.join(d.text for d in descs)} and none can be fitted ({why}). Give relations (relations=[...]), leave them out "
                f"with network_options={{'allow': [...]}}, or use basis='auto' (leaves them out with a note) or basis='pathways'"
            )
        if plan["problem"]:
            if basis == "network":
                raise ScalingError(f"selectivity map on network routes: {plan['problem']}")
            try:
                smap = self._selectivity_pathways(descs, None, x, y, points, f"built-in pathways (network routes not possible: {plan['problem']})", chemical_limit)
            except ScalingError as exc:
                raise ScalingError(f"selectivity map: network routes not possible ({plan['problem']}); built-in pathways not possible either ({exc})") from None
            smap.conditions["network_unavailable"] = plan["problem"]
            return smap
        return self._selectivity_network(descs, plan, x, y, points, chemical_limit)

    # -- selectivity: built-in pathways ---------------------------------------------------------------
    def _grid_points_for(self, descs, x, y, points, default):
        points_frames = pd.DataFrame()
        if self.table is not None:
            points_frames = pd.concat([d.evaluate(self.table) for d in descs], axis=1).dropna()
        surf = pd.DataFrame({"d0": points_frames.iloc[:, 0], "d1": points_frames.iloc[:, 1]}) if len(points_frames) else pd.DataFrame()
        gx, gy = self._grid_2d(descs, x, y, default if points is None else points, surf)
        X, Y = np.meshgrid(gx, gy)
        return gx, gy, X, np.column_stack([X.ravel(), Y.ravel()]), points_frames

    def _selectivity_pathways(self, descs, products, x, y, points, note: str, chemical_limit: float | None = None) -> SelectivityMap:
        paths = [resolve(p) for p in (DEFAULT_PRODUCTS if products is None else products)]
        if len(paths) < 2:
            raise ScalingError("a selectivity map compares at least two product pathways")
        ox = [p.name for p in paths if p.direction != "reduction"]
        if ox:
            raise ScalingError(f"selectivity maps compare reduction pathways (onset potentials); {', '.join(ox)} are oxidations")
        needed = list(dict.fromkeys(a.key for p in paths for a in p.adsorbates))
        space = self._space(needed, descs, "products " + ", ".join(p.name for p in paths))
        gx, gy, X, D, points_frames = self._grid_points_for(descs, x, y, points, 161)
        onsets, chems = [], []
        for p in paths:
            _, u_l, _, mc, _ = self._evaluate(p, space, D)
            u_l, mc = _apply_chemical_limit(u_l, mc, chemical_limit)
            onsets.append(u_l.reshape(X.shape))
            chems.append(mc.reshape(X.shape))
        onset = np.stack(onsets)
        winner, margin = _winner(onset)
        labels = tuple(_product_label(p) for p in paths)
        surf = pd.DataFrame(columns=["surface", "x", "y"])
        if self.table is not None and len(points_frames):
            names = list(points_frames.index)
            lp = che.limiting_potentials(self.table, paths, self.pH, self.scale, self.temperature, surfaces=names, on_missing="report")
            wide = lp.pivot(index="surface", columns="pathway", values="limiting_potential").reindex(index=names, columns=[p.name for p in paths])
            values = wide.to_numpy(dtype=float)
            blocked = np.zeros(values.shape, dtype=bool)
            if chemical_limit is not None:
                chem = lp.pivot(index="surface", columns="pathway", values="max_chemical_dG").reindex(index=names, columns=[p.name for p in paths])
                blocked = np.isfinite(values) & (chem.to_numpy(dtype=float) > chemical_limit)
            surf = self._surface_winners(names, points_frames, labels, np.where(blocked, np.nan, values), None, blocked)
        routes = np.broadcast_to(np.array([p.name for p in paths], dtype=object)[:, None, None], onset.shape).copy()
        routes[np.isnan(onset)] = ""
        cond = self._selectivity_conditions([p.name for p in paths], "pathways", note,
                                            "winner = least negative limiting (onset) potential of each pathway; ties to the product listed first; chemical steps not included"
                                            + _limit_rule(chemical_limit), chemical_limit)
        return SelectivityMap(descs, gx, gy, tuple(p.name for p in paths), labels, onset, winner, margin, np.stack(chems), surf, space.relations, cond,
                              space=space, basis="pathways", basis_note=note, routes=routes)

    def _surface_winners(self, names, points_frames, labels, values: np.ndarray, tie_keys, blocked=None) -> pd.DataFrame:
        """Computed surfaces with every product's exact onset (columns ``onset <label>``), winner and margin.

        Surfaces missing data for a product are dropped; ``blocked`` (bool, like ``values``) marks
        onsets that are NaN because of ``chemical_limit`` (kept: that product just does not compete).
        """
        complete = (np.isfinite(values) | (False if blocked is None else blocked)).all(axis=1)
        surf = pd.DataFrame({"surface": names, "x": points_frames.iloc[:, 0].to_numpy(dtype=float), "y": points_frames.iloc[:, 1].to_numpy(dtype=float)})
        for k, lab in enumerate(labels):
            surf[f"onset {lab}"] = values[:, k]
        surf = surf[complete].reset_index(drop=True)
        if len(surf):
            w, mg = _winner(values[complete].T, tie_keys)
            surf["winner"] = np.array(labels, dtype=object)[w]
            surf["margin"] = mg
        return surf

    def _selectivity_conditions(self, products, basis, note, rule, chemical_limit=None) -> dict:
        return {
            "chemical_limit": chemical_limit,
            "products": list(products),
            "basis": basis,
            "basis_note": note,
            "scale": self.scale,
            "pH": self.pH,
            "temperature": self.temperature,
            "references": self.scheme.describe(),
            "energy_source": self.source,
            "rule": rule,
        }

    # -- selectivity: network routes ------------------------------------------------------------------
    def _relation_problem(self, adsorbate: str, descs) -> str | None:
        """Why ``adsorbate`` cannot be expressed through the descriptors (None if it can)."""
        from ecatlab.errors import EcatlabError

        try:
            with warnings.catch_warnings():
                warnings.simplefilter("ignore", MissingDataWarning)
                build_space(self.relations_for([adsorbate], descs), descs, [adsorbate], adsorbate)
        except EcatlabError as exc:
            return str(exc)
        return None

    def _network_plan(self, descs, products, reactant: str, network_options) -> dict:
        """Network, products and notes for the network basis; ``problem`` says why it cannot be used."""
        from ecatlab.network import build_network

        opts = dict(network_options or {})
        unknown = set(opts) - {"allow", "forbid", "molecules", "sites", "coupling"}
        if unknown:
            raise ScalingError(f"network_options: unknown key(s) {sorted(unknown)}; use allow, forbid, molecules, sites, coupling")
        pool = list(self.table.species) if self.table is not None else []
        pool += [r.target for r in self.given] + [s for d in descs for s in d.species]
        pool = [k for k in dict.fromkeys(pool) if Species.parse(k).is_adsorbate]
        full = build_network(pool, reactant, scheme=self.scheme, **opts)
        notes: list[str] = []
        excluded = {a: self._relation_problem(a, descs) for a in full.adsorbates}
        excluded = {a: why for a, why in excluded.items() if why}
        net = full
        if excluded:
            keep = [a for a in (opts.get("allow") or full.adsorbates) if Species.parse(a).key not in excluded]
            net = build_network(pool, reactant, scheme=self.scheme, **{**opts, "allow": keep})
            notes.append(f"left out of the network (no scaling relation to {' and '.join(d.text for d in descs)}, none can be fitted): {', '.join(excluded)}")
        her_problem = self._relation_problem("H*", descs)
        problem = ""
        # products: molecule keys of the network, and the HER pathway key (or None)
        carbon: list[str] = []
        her: str | None = None
        if products is None:
            carbon = [p for p in net.products if p != "H2O(l)"]
            lost = [p for p in full.products if p not in net.products]
            if lost:
                notes.append(f"not reachable without them: {', '.join(lost)}")
            if her_problem is None:
                her = "her-volmer-heyrovsky"
            else:
                notes.append("hydrogen evolution left out: H* has no scaling relation to the descriptors")
        else:
            for spec in products:
                mol, her_key = _product_molecule(spec)
                if her_key is not None:
                    her = her_key
                    continue
                try:
                    carbon.append(full.resolve_product(mol))
                except PathwayError as exc:
                    problem = str(exc)
            if her is not None and her_problem is not None:
                problem = problem or f"hydrogen evolution needs H*, which has no scaling relation to the descriptors ({her_problem})"
        carbon = list(dict.fromkeys(carbon))
        lost = [p for p in carbon if p not in net.products]
        if lost and not problem:
            problem = (f"without {', '.join(excluded)} (no scaling relation) the network no longer reaches {', '.join(lost)}; "
                       "give relations for them (relations=[...]) or restrict the network (network_options={'allow': [...]})")
        if not problem and len(carbon) + (her is not None) < 2:
            problem = f"the network from {full.reactant} reaches {', '.join(carbon) or 'no product'}; a selectivity map compares at least two products"
        return {"network": net, "full": full, "carbon": carbon, "her": her, "excluded": tuple(excluded), "excluded_why": excluded,
                "notes": notes, "problem": problem, "strict_problem": bool(excluded)}

    def _selectivity_network(self, descs, plan, x, y, points, chemical_limit: float | None = None) -> SelectivityMap:
        from ecatlab.network import NetworkAnalysis

        net = plan["network"]
        carbon, her = plan["carbon"], plan["her"]
        species = list(net.adsorbates) + (["H*"] if her else [])
        space = self._space(species, descs, f"network from {net.reactant}")
        gx, gy, X, D, points_frames = self._grid_points_for(descs, x, y, points, 101)
        wide = space.frame(D, index=[f"grid-{i}" for i in range(len(D))])
        synthetic = EnergyTable.from_matrix(wide, scheme=self.scheme, source="synthetic surfaces on the descriptor grid (scaling relations)")
        an = NetworkAnalysis(net, synthetic, pH=self.pH, scale=self.scale, temperature=self.temperature, chemical_limit=chemical_limit)
        onsets, chems, routes = [], [], []
        for p in carbon:
            u, mc, r, names = an.best_route_arrays(p)
            onsets.append(u)
            chems.append(mc)
            routes.append(np.where(r >= 0, np.array(list(names) + [""], dtype=object)[r], ""))
        keys = list(carbon)
        if her:
            hp = resolve(her)
            _, u, _, mc, _ = self._evaluate(hp, space, D)
            u, mc = _apply_chemical_limit(u, mc, chemical_limit)
            onsets.append(u)
            chems.append(mc)
            routes.append(np.where(np.isnan(u), "", hp.name).astype(object))
            keys.append("H2(g)")
        shape = (len(keys),) + X.shape
        onset = np.stack(onsets).reshape(shape)
        winner, margin = _winner(onset, keys)
        labels = tuple(Species.parse(k).formula for k in keys)
        surf = pd.DataFrame(columns=["surface", "x", "y"])
        if self.table is not None and len(points_frames):
            names = list(points_frames.index)
            real = NetworkAnalysis(net, self.table, pH=self.pH, scale=self.scale, temperature=self.temperature, surfaces=names,
                                   chemical_limit=chemical_limit)
            cols = [real.best_route_arrays(p)[0] for p in carbon]
            if chemical_limit is not None:  # which NaNs come from the limit, not from missing data
                free = NetworkAnalysis(net, self.table, pH=self.pH, scale=self.scale, temperature=self.temperature, surfaces=names)
                had = [np.isfinite(free.best_route_arrays(p)[0]) for p in carbon]
            if her:
                lp = che.limiting_potentials(self.table, her, self.pH, self.scale, self.temperature, surfaces=names, on_missing="report").set_index("surface")
                u_h, _ = _apply_chemical_limit(lp.loc[names, "limiting_potential"].to_numpy(dtype=float),
                                               lp.loc[names, "max_chemical_dG"].to_numpy(dtype=float), chemical_limit)
                cols.append(u_h)
                if chemical_limit is not None:
                    had.append(np.isfinite(lp.loc[names, "limiting_potential"].to_numpy(dtype=float)))
            values = np.column_stack(cols)
            blocked = None if chemical_limit is None else (np.column_stack(had) & np.isnan(values))
            surf = self._surface_winners(names, points_frames, labels, values, keys, blocked)
        desc = (f"best network routes from {net.reactant} ({len(net.states)} states, {len(net.edges)} steps, "
                f"{len(net.adsorbates)} adsorbates through scaling relations)" + (f"; HER: {her}" if her else ""))
        note = "; ".join([desc] + plan["notes"])
        cond = self._selectivity_conditions(keys, "network", note,
                                            "winner = least negative onset potential (limiting potential of the best network route; HER from its pathway); "
                                            "ties to the alphabetically first product, as in product_ranking; chemical steps not in the onset"
                                            + _limit_rule(chemical_limit), chemical_limit)
        cond["network"] = repr(net)
        cond["her"] = her
        return SelectivityMap(descs, gx, gy, tuple(keys), labels, onset, winner, margin, np.stack(chems).reshape(shape), surf, space.relations, cond,
                              space=space, basis="network", basis_note=note, routes=np.stack(routes).reshape(shape), network=net,
                              excluded=plan["excluded"])


    @staticmethod
    def _two(descriptors) -> tuple[Descriptor, Descriptor]:
        if isinstance(descriptors, (str, Descriptor)) or len(descriptors) != 2:
            raise ScalingError(f"maps need exactly two descriptors, e.g. ('CO*', 'OH*'); got {descriptors!r}")
        return (Descriptor.parse(descriptors[0]), Descriptor.parse(descriptors[1]))


def _winner(onset: np.ndarray, tie_keys: Sequence[str] | None = None) -> tuple[np.ndarray, np.ndarray]:
    """Index of the largest onset (least negative) along axis 0 and its margin over the runner-up (V).

    Exact ties go to the first product, or, with ``tie_keys``, to the alphabetically first key
    (the order of :meth:`ecatlab.network.NetworkAnalysis.product_ranking`). NaN never wins.
    """
    filled = np.where(np.isnan(onset), -np.inf, onset)
    perm = np.arange(len(onset)) if tie_keys is None else np.argsort(np.array(list(tie_keys), dtype=object), kind="stable")
    winner = perm[np.argmax(filled[perm], axis=0)]
    srt = np.sort(filled, axis=0)
    with np.errstate(invalid="ignore"):
        margin = srt[-1] - srt[-2]
    return winner, margin


def _check_chemical_limit(limit) -> float | None:
    """``chemical_limit`` as a finite float (eV) or None; a clear error otherwise."""
    if limit is None:
        return None
    try:
        value = float(limit)
    except (TypeError, ValueError):
        value = float("nan")
    if not np.isfinite(value) or isinstance(limit, bool):
        raise ScalingError(f"chemical_limit must be a finite number in eV (e.g. 0.5) or None; got {limit!r}")
    return value


def _apply_chemical_limit(onset: np.ndarray, max_chem: np.ndarray, limit: float | None) -> tuple[np.ndarray, np.ndarray]:
    """Onset and max chemical dG set to NaN where a chemical step exceeds ``limit`` (eV): pathway unavailable there."""
    if limit is None:
        return onset, max_chem
    with np.errstate(invalid="ignore"):
        blocked = np.asarray(max_chem) > limit
    return np.where(blocked, np.nan, onset), np.where(blocked, np.nan, max_chem)


def _limit_rule(limit: float | None) -> str:
    return "" if limit is None else f"; routes/pathways with a chemical step above chemical_limit = {limit:g} eV excluded"


def _is_pathway_spec(spec) -> bool:
    """True for a Pathway, a built-in pathway key or step text (not a molecule name)."""
    from ecatlab.pathways import BUILTIN_PATHWAYS

    return isinstance(spec, Pathway) or (isinstance(spec, str) and ("->" in spec or spec.strip().lower() in BUILTIN_PATHWAYS))


def _product_molecule(spec) -> tuple[str, str | None]:
    """(molecule text, HER pathway key or None) for a product given as a molecule or a pathway."""
    if _is_pathway_spec(spec):
        path = resolve(spec.strip().lower() if isinstance(spec, str) and "->" not in spec else spec)
        if path.direction != "reduction":
            raise ScalingError(f"selectivity maps compare reductions (onset potentials); {path.name} is an oxidation")
        net = path.overall_net()
        prods = [sp for sp, c in net.items() if c > 0 and sp.is_molecule and sp.formula != "H2O"]
        if [sp.formula for sp in prods] == ["H2"]:
            return "H2(g)", path.name
        if len(prods) != 1:
            raise ScalingError(f"pathway {path.name!r} makes {len(prods)} products; give the product molecule instead")
        return prods[0].key, None
    text = str(spec).strip()
    if text in ("H2", "H2(g)"):
        return "H2(g)", "her-volmer-heyrovsky"
    return text, None


def _crossings(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """x where pairs of non-parallel lines a_i + b_i x cross (slopes differing by > 1e-9)."""
    i, j = np.triu_indices(len(a), 1)
    db = b[i] - b[j]
    ok = np.abs(db) > 1e-9
    return (a[j][ok] - a[i][ok]) / db[ok]


def _breakpoints(a: np.ndarray, b: np.ndarray, direction: str) -> np.ndarray:
    """Crossings that lie on the envelope (min for reduction, max for oxidation)."""
    xs = _crossings(a, b)
    if not xs.size:
        return xs
    lines = a[None, :] + b[None, :] * xs[:, None]
    env = lines.min(axis=1) if direction == "reduction" else lines.max(axis=1)
    on = np.sum(np.abs(lines - env[:, None]) <= 1e-9 * np.maximum(1.0, np.abs(env))[:, None], axis=1) >= 2
    return xs[on]


def _apex_1d(alpha, beta, ec, direction, lo, hi, names):
    """Exact best envelope value over [lo, hi] from the step lines U_i = alpha_i + beta_i x."""
    a, b = alpha[ec], beta[ec]
    ec_names = [n for n, e in zip(names, ec) if e]
    xs = _crossings(a, b)
    cand = np.concatenate([[lo, hi], xs[(xs >= lo) & (xs <= hi)]])
    lines = a[None, :] + b[None, :] * cand[:, None]
    env = lines.min(axis=1) if direction == "reduction" else lines.max(axis=1)
    best = env.max() if direction == "reduction" else env.min()
    tol = 1e-9 * max(1.0, abs(best))
    at = np.abs(env - best) <= tol
    xlo, xhi = float(cand[at].min()), float(cand[at].max())
    xm = 0.5 * (xlo + xhi)
    active_val = a + b * xm
    active = np.abs(active_val - best) <= 1e-6 * max(1.0, abs(best))
    steps = tuple(n for n, k in zip(ec_names, active) if k)
    at_edge = bool(abs(xlo - lo) <= 1e-12 or abs(xhi - hi) <= 1e-12)
    return (xm,), ((xlo, xhi),), float(best), steps, at_edge


def _optimum_2d(alpha, bx, by, ec, direction, xr, yr, names, u_eq) -> Apex:
    """Exact best U_L over the box by linear programming (variables x, y, t)."""
    from scipy.optimize import linprog

    a, px, py = alpha[ec], bx[ec], by[ec]
    if direction == "reduction":  # max t  s.t. t <= a + px x + py y
        A = np.column_stack([-px, -py, np.ones_like(a)])
        ub = a
        c = [0.0, 0.0, -1.0]
    else:  # min t  s.t. t >= a + px x + py y
        A = np.column_stack([px, py, -np.ones_like(a)])
        ub = -a
        c = [0.0, 0.0, 1.0]
    res = linprog(c, A_ub=A, b_ub=ub, bounds=[tuple(map(float, xr)), tuple(map(float, yr)), (None, None)], method="highs")
    if not res.success:  # pragma: no cover - a bounded box always has a solution
        raise ScalingError(f"could not locate the optimum of the map: {res.message}")
    x, y, t = (float(v) for v in res.x)
    vals = a + px * x + py * y
    ec_names = [n for n, e in zip(names, ec) if e]
    steps = tuple(n for n, v in zip(ec_names, vals) if abs(v - t) <= 1e-6)
    edge = bool(min(abs(x - xr[0]), abs(x - xr[1]), abs(y - yr[0]), abs(y - yr[1])) <= 1e-9)
    return Apex((x, y), ((x, x), (y, y)), t, float(kernel.signed_overpotential(t, u_eq, direction)), steps, edge,
                "exact: linear programming over the map range (one optimal point; the optimum may be a line)")


# ------------------------------------------------------------------------------------------------
# functional front ends
# ------------------------------------------------------------------------------------------------
def _analysis(energies, relations, fixed_slopes, pH, scale, temperature, references, fit_against=None) -> VolcanoAnalysis:
    return VolcanoAnalysis(energies, relations or (), fixed_slopes, pH, scale, temperature, references, fit_against)


def volcano(
    energies,
    pathway,
    descriptor,
    relations: Iterable[ScalingRelation] = (),
    fixed_slopes: Mapping[str, float] | None = None,
    pH: float = 0.0,
    scale: str = "RHE",
    temperature: float = STANDARD_TEMPERATURE,
    grid=None,
    span=None,
    points: int = 401,
    references: ReferenceScheme | None = None,
    fit_against: str | None = None,
    chemical_steps: bool = True,
) -> VolcanoCurve:
    """1D limiting-potential volcano of ``pathway`` vs ``descriptor``; see :meth:`VolcanoAnalysis.volcano`.

    ``chemical_steps=True`` (default) puts the pathway's chemical steps on the curve (effective
    limiting potential U_eq -/+ G_max/e); ``False`` gives the purely electrochemical envelope.

    ``energies`` may be None when ``relations`` cover every adsorbate. ``fixed_slopes`` and
    ``fit_against`` control the relations fitted to ``energies`` (see :class:`VolcanoAnalysis`).

    Examples
    --------
    >>> from ecatlab.scaling import ScalingRelation
    >>> rels = [ScalingRelation.given("OOH*", "OH*", 1.0, 3.2), ScalingRelation.given("O*", "OH*", 2.0, 0.0)]
    >>> round(volcano(None, "orr-4e", "OH*", rels).apex.overpotential, 2)
    0.37
    """
    return _analysis(energies, relations, fixed_slopes, pH, scale, temperature, references, fit_against).volcano(
        pathway, descriptor, grid, span, points, chemical_steps
    )


def activity_map(
    energies,
    pathway,
    descriptors: Sequence,
    relations: Iterable[ScalingRelation] = (),
    fixed_slopes: Mapping | None = None,
    pH: float = 0.0,
    scale: str = "RHE",
    temperature: float = STANDARD_TEMPERATURE,
    x=None,
    y=None,
    points=161,
    references: ReferenceScheme | None = None,
    fit_against: Sequence[str] | None = None,
) -> ActivityMap:
    """Limiting potential over two descriptors; see :meth:`VolcanoAnalysis.activity_map`."""
    return _analysis(energies, relations, fixed_slopes, pH, scale, temperature, references, fit_against).activity_map(pathway, descriptors, x, y, points)


def selectivity_map(
    energies,
    descriptors: Sequence,
    products: Sequence | None = None,
    relations: Iterable[ScalingRelation] = (),
    fixed_slopes: Mapping | None = None,
    pH: float = 0.0,
    scale: str = "RHE",
    temperature: float = STANDARD_TEMPERATURE,
    x=None,
    y=None,
    points=None,
    references: ReferenceScheme | None = None,
    fit_against: Sequence[str] | None = None,
    basis: str = "auto",
    reactant: str = "CO2",
    network_options: Mapping | None = None,
    chemical_limit: float | None = None,
) -> SelectivityMap:
    """Winning product over two descriptors; see :meth:`VolcanoAnalysis.selectivity_map`.

    ``basis="auto"`` (default) compares the best routes of the reaction network when the scaling
    relations cover its adsorbates, else the built-in pathways; ``smap.basis`` and
    ``smap.basis_note`` say which was used and what was left out. ``chemical_limit`` (eV, default
    None) drops routes/pathways with a chemical step uphill by more than that;
    ``smap.winner_max_chemical_dG`` (eV) shows the largest chemical step of the winner's route.

    Examples
    --------
    >>> from ecatlab.demo import demo_energies          # ILLUSTRATIVE invented numbers
    >>> s = selectivity_map(demo_energies(), ("CO*", "OH*"), points=21)
    >>> s.basis, s.product_labels[-1]
    ('network', 'H2')
    """
    return _analysis(energies, relations, fixed_slopes, pH, scale, temperature, references, fit_against).selectivity_map(
        descriptors, products, x, y, points, basis, reactant, network_options, chemical_limit
    )


def volcano_summary(energies, pathway, descriptor, **kwargs) -> pd.DataFrame:
    """Apex, equilibrium potential and scaling relations of a 1D volcano as a quantity/value/unit/note table.

    Keyword arguments are those of :func:`volcano`.
    """
    return volcano(energies, pathway, descriptor, **kwargs).summary()
