"""Result objects of the volcano analysis: apex, 1D curve, activity map, selectivity map (arrays + DataFrames)."""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from ecatlab.che import kernel
from ecatlab.notation import Pathway
from ecatlab.references import ReferenceScheme
from ecatlab.scaling import Descriptor, ScalingRelation
from ecatlab.volcano.space import DescriptorSpace

__all__ = ["Apex", "VolcanoCurve", "ActivityMap", "SelectivityMap"]


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
    """Which product wins over two descriptors: products whose route has no uphill chemical step first,
    then the least negative onset (limiting) potential (:func:`ecatlab.che.kernel.ranking_order`).

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
        Index into ``products`` of the winner: among the products whose route is not blocked
        (:func:`ecatlab.che.kernel.is_blocked` on ``max_chemical_dG``: no chemical step uphill) the
        least negative onset; a blocked product wins only where every product is blocked.
    margin : ndarray (len(y), len(x))
        Onset of the winner minus the best onset of the other products of the same class
        (unblocked, or blocked where all are), V (small margins: no clear selectivity; ``inf``:
        no other product of that class competes).
    max_chemical_dG : ndarray (n_products, len(y), len(x))
        Largest chemical-step dG of each product's best route or pathway (eV; NaN if it has no
        chemical step or the product is unavailable there), e.g. CO desorption.
    winner_max_chemical_dG : ndarray (len(y), len(x))
        Largest chemical-step dG (eV) of the winning product's route (network basis: the best
        route of :meth:`ecatlab.network.NetworkAnalysis.best_route_arrays`; pathways basis: the
        engine's ``max_chemical_dG`` of the winning pathway); NaN if that route has no chemical
        step. A positive value is an uphill, potential-independent step: e.g. CO* -> * + CO(g)
        uphill by 0.8 eV means CO stays bound (poisons the surface) rather than being released,
        whatever the potential. By the winner rule it occurs only where every product is blocked.
        Computed from ``max_chemical_dG`` and ``winner``.
    winner_blocked : ndarray of bool (len(y), len(x))
        True where the winner's route is blocked (then every product is).
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
    winner_blocked: np.ndarray = field(init=False, repr=False)

    def __post_init__(self):
        chem = np.take_along_axis(np.asarray(self.max_chemical_dG, dtype=float), np.asarray(self.winner)[None], axis=0)[0]
        object.__setattr__(self, "winner_max_chemical_dG", chem)
        object.__setattr__(self, "winner_blocked", kernel.is_blocked(chem))

    def winner_route(self) -> np.ndarray:
        """Name of the best route (or pathway) to the winning product at each point, (len(y), len(x))."""
        return np.take_along_axis(self.routes, self.winner[None], axis=0)[0]

    def to_frame(self) -> pd.DataFrame:
        """Long table: x, y (eV), onset per product (V), winner (product label), margin (V), winner_route,
        winner_max_chemical_dG (eV, largest chemical-step dG of the winner's route; NaN if none), winner_blocked."""
        X, Y = np.meshgrid(self.x, self.y)
        frame = pd.DataFrame({"x": X.ravel(), "y": Y.ravel()})
        for k, lab in enumerate(self.product_labels):
            frame[f"onset {lab}"] = self.onset[k].ravel()
        frame["winner"] = np.array(self.product_labels, dtype=object)[self.winner.ravel()]
        frame["margin"] = self.margin.ravel()
        if self.routes is not None:
            frame["winner_route"] = self.winner_route().ravel()
        frame["winner_max_chemical_dG"] = self.winner_max_chemical_dG.ravel()
        frame["winner_blocked"] = self.winner_blocked.ravel()
        frame.attrs.update(self.conditions)
        return frame

    def area_fractions(self) -> pd.Series:
        """Share of the map area won by each product (0..1)."""
        counts = np.bincount(self.winner.ravel(), minlength=len(self.products)) / self.winner.size
        return pd.Series(counts, index=list(self.product_labels), name="area fraction")
