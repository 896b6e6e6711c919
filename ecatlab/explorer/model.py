"""State of the explorer: a plain object with no widgets and no drawing.

:class:`ExplorerState` holds the conditions (applied potential U in V on the RHE or SHE scale,
pH, temperature in K), the reaction family, the pathway and the selected surfaces, and answers
what the explorer shows: step free energies, state levels, uphill steps and the limiting-potential
read-out. It computes no physics itself:

* limiting potentials, overpotentials, determining steps and equilibrium potentials come from
  :func:`ecatlab.che.limiting_potentials` and :func:`ecatlab.che.equilibrium_potential`;
* step free energies come from the engine's affine form
  ``dG_i(U) = a_i + n_i U`` (:meth:`ecatlab.che.CompiledPathway.affine`), evaluated once per change
  of pathway, surfaces, pH, scale or temperature; a potential move only evaluates ``a + n U``.

"Best route" choices (CO2RR, NRR, ORR) come from :mod:`ecatlab.network`: the reaction network of
the family's reactant is built once per table, a :class:`~ecatlab.network.NetworkAnalysis` once per
(pH, scale, temperature), and the best route of the **focus** surface (an ordinary Pathway) is
shown for every selected surface; surfaces lacking one of its adsorbates are reported by the
engine (``missing_species``), not rejected. The route is searched again when the focus surface,
pH, scale or temperature changes.

All setters validate before they change anything, so a rejected value leaves the state (and what
is drawn) at the last valid conditions.
"""

from __future__ import annotations

import math
import re
import warnings
from dataclasses import dataclass
from typing import Iterable, Sequence

import numpy as np
import pandas as pd

from ecatlab import che
from ecatlab.che import kernel
from ecatlab.che.conditions import Conditions, check_pH, check_potential, check_scale
from ecatlab.constants import STANDARD_TEMPERATURE
from ecatlab.energies import EnergyTable, as_energy_table
from ecatlab.errors import ConditionError, EcatlabWarning, PathwayError
from ecatlab.notation import Pathway
from ecatlab.pathways import REACTION_FAMILIES, resolve

__all__ = ["ExplorerState", "Conditions", "RouteChoice", "PATHWAY_LABELS", "ROUTE_REACTANTS", "pathway_options", "route_key",
           "is_route_key", "UPHILL_TOLERANCE"]

#: Step free energies above this (eV) count as uphill; a determining step evaluated exactly at the
#: limiting potential is 0 within floating-point rounding and is therefore not marked.
UPHILL_TOLERANCE = 1e-9

#: Number of surfaces shown when none are chosen: the best-ranked ones for the first pathway.
DEFAULT_SURFACE_COUNT = 10

#: Short names of the built-in pathways in the product/pathway selector.
PATHWAY_LABELS: dict[str, str] = {
    "orr-4e": "4e- to H2O (associative, via OOH*)",
    "orr-2e": "2e- to H2O2",
    "orr-4e-dissociative": "4e- to H2O (dissociative)",
    "oer-4e": "4e- from H2O",
    "her-volmer-heyrovsky": "Volmer-Heyrovsky",
    "her-volmer-tafel": "Volmer-Tafel",
    "co2rr-co": "CO",
    "co2rr-hcooh": "HCOOH",
    "co2rr-ch4": "CH4 via CHO*",
    "co2rr-ch4-coh": "CH4 via COH*",
    "co2rr-ch3oh": "CH3OH",
    "nrr-distal": "NH3, distal",
    "nrr-alternating": "NH3, alternating",
}

# Order in the selector (ORR: 4e, 2e, dissociative as in the user guide); other families keep
# the order of REACTION_FAMILIES.
_ORDER = {"ORR": ("orr-4e", "orr-2e", "orr-4e-dissociative")}


#: Reactant of the reaction network behind the "best route to <product>" choices, per family
#: (OER and HER have none: the network enumerates reductions of a reactant).
ROUTE_REACTANTS: dict[str, str] = {"ORR": "O2", "CO2RR": "CO2", "NRR": "N2"}
_ROUTE_PREFIX = "best route:"


def route_key(product: str) -> str:
    """Selector value of the "best route to ``product``" choice (``product`` as the network names it, e.g. ``"CH4(g)"``)."""
    return f"{_ROUTE_PREFIX}{product}"


def is_route_key(value) -> bool:
    return isinstance(value, str) and value.startswith(_ROUTE_PREFIX)


def product_label(product: str) -> str:
    """``"CH4(g)"`` -> ``"CH4"`` (phase dropped, for labels)."""
    return re.sub(r"\((g|l|aq|s)\)$", "", product)


@dataclass(frozen=True)
class RouteChoice:
    """The best route of the focus surface, as shown by the explorer.

    Attributes
    ----------
    reactant, product : str
        As the network names them (``"CO2"``, ``"CH4(g)"``).
    focus : str
        Surface whose best route is drawn for all selected surfaces.
    ranked : tuple of RankedRoute
        Best route first, then the runner-up when one has complete data
        (:meth:`ecatlab.network.NetworkAnalysis.ranked_routes`); limiting potentials in V vs ``scale``.
    tied : int
        Number of other routes with the best route's limiting potential (within the network's tie tolerance).
    scale, pH, temperature
        Conditions of the search.
    """

    reactant: str
    product: str
    focus: str
    ranked: tuple
    tied: int
    scale: str
    pH: float
    temperature: float

    @property
    def pathway(self) -> Pathway:
        return self.ranked[0].pathway

    def describe(self) -> str:
        return f"best route to {product_label(self.product)} on {self.focus}"


def pathway_options(family: str) -> list[tuple[str, str]]:
    """(label, key) pairs of the built-in pathways of a reaction family, in selector order."""
    if family not in REACTION_FAMILIES:
        raise PathwayError(f"unknown reaction {family!r}; choose one of {', '.join(REACTION_FAMILIES)}")
    keys = list(_ORDER.get(family, ()))
    keys += [k for k in REACTION_FAMILIES[family] if k not in keys]
    return [(PATHWAY_LABELS.get(k, k), k) for k in keys]


def _family_of(key: str) -> str | None:
    for family, keys in REACTION_FAMILIES.items():
        if key in keys:
            return family
    return None


class ExplorerState:
    """Everything the explorer shows, driven by plain attribute-like setters.

    Parameters
    ----------
    energies : EnergyTable, DataFrame or path
        Adsorption free energies (eV), see :func:`ecatlab.read_energies`.
    reaction : {"ORR", "OER", "HER", "CO2RR", "NRR"}
        Reaction family; ignored when ``pathway`` is a built-in key (its family is used).
    pathway : str or Pathway, optional
        Built-in key, Pathway or step text (default: first pathway of the family).
    surfaces : list of str, optional
        Surfaces shown (default: the ten best-ranked for the first pathway, by the kernel's ranking
        rule: unblocked first, then lowest G_max).
    potential : float
        Applied potential U in V on ``scale``.
    pH : float
        pH (the range of :data:`ecatlab.che.conditions.PH_RANGE`).
    scale : {"RHE", "SHE"}
    temperature : float
        K.
    """

    def __init__(
        self,
        energies,
        reaction: str = "ORR",
        pathway: str | Pathway | None = None,
        surfaces: Iterable[str] | None = None,
        potential: float = 0.0,
        pH: float = 0.0,
        scale: str = "RHE",
        temperature: float = STANDARD_TEMPERATURE,
    ):
        self.table: EnergyTable = as_energy_table(energies, temperature)
        self._tables: dict[float, tuple[EnergyTable, pd.DataFrame]] = {}  # temperature -> (table, wide matrix)
        self.notices: list[str] = []
        if pathway is not None and isinstance(pathway, str) and _family_of(pathway) is not None:
            reaction = _family_of(pathway)
        if reaction not in REACTION_FAMILIES and pathway is None:
            raise PathwayError(f"unknown reaction {reaction!r}; choose one of {', '.join(REACTION_FAMILIES)}")
        self._reaction = reaction
        self._networks: dict = {}  # reactant -> ReactionNetwork (or the error that prevented it)
        self._analyses: dict = {}  # (reactant, pH, scale, T) -> NetworkAnalysis (most recent few)
        self._route: RouteChoice | None = None
        self._conditions = Conditions(scale=scale, pH=pH, temperature=temperature, potential=potential)
        if surfaces is not None:
            chosen = list(surfaces)
        else:
            start = pathway if pathway is not None and not is_route_key(pathway) else pathway_options(reaction)[0][1]
            chosen = self.best_surfaces(start, DEFAULT_SURFACE_COUNT)
        self._surfaces = self._check_surfaces(chosen)
        self._focus = self._surfaces[0]
        if is_route_key(pathway):
            if reaction not in ROUTE_REACTANTS:
                raise PathwayError(f"{reaction} has no best-route choices; they exist for {', '.join(ROUTE_REACTANTS)}")
            route = self._find_route(reaction, pathway[len(_ROUTE_PREFIX):], self._focus, self._conditions)
            self._rebuild(route.pathway, self._surfaces, self._conditions, route)
        else:
            self._pathway: Pathway = resolve(pathway if pathway is not None else pathway_options(reaction)[0][1])
            self._rebuild(self._pathway, self._surfaces, self._conditions)

    # -- read-only views -----------------------------------------------------------------------
    @property
    def reaction(self) -> str:
        """Reaction family shown (ORR, OER, HER, CO2RR, NRR)."""
        return self._reaction

    @property
    def pathway(self) -> Pathway:
        return self._pathway

    @property
    def surfaces(self) -> list[str]:
        return list(self._surfaces)

    @property
    def focus(self) -> str:
        """Focus surface: target of "snap to limiting potential" and, for a best-route choice, the
        surface whose best route is drawn for all selected surfaces."""
        return self._focus

    @property
    def route(self) -> RouteChoice | None:
        """The best-route choice shown, or ``None`` for a built-in or custom pathway."""
        return self._route

    @property
    def selection(self) -> str:
        """Value of the product/pathway selector: the built-in key, or ``route_key(product)``."""
        return route_key(self._route.product) if self._route is not None else self._pathway.name

    @property
    def conditions(self) -> Conditions:
        return self._conditions

    @property
    def potential(self) -> float:
        """Applied potential U in V on :attr:`scale`."""
        return self._conditions.potential

    @property
    def pH(self) -> float:
        return self._conditions.pH

    @property
    def scale(self) -> str:
        return self._conditions.scale

    @property
    def temperature(self) -> float:
        return self._conditions.temperature

    @property
    def electrochemical(self) -> np.ndarray:
        """Boolean per step: True where electrons are transferred."""
        return self._compiled.electrochemical

    # -- validation ------------------------------------------------------------------------------
    def _check_surfaces(self, surfaces: Sequence[str]) -> list[str]:
        from ecatlab.errors import EnergyTableError

        surfaces = [str(s) for s in surfaces]
        if not surfaces:
            raise EnergyTableError(self.table.source, "no surface selected; select at least one surface")
        known = set(self.table.surfaces)
        unknown = [s for s in surfaces if s not in known]
        if unknown:
            raise EnergyTableError(self.table.source, f"unknown surface(s) {unknown}; known: {self.table.surfaces}")
        return surfaces

    @staticmethod
    def _check_scale(scale: str) -> str:
        return check_scale(scale)

    @staticmethod
    def _check_potential(value: float) -> None:
        check_potential(value)

    @staticmethod
    def _check_pH(value: float) -> None:
        check_pH(value)

    def _table_at(self, temperature: float) -> tuple[EnergyTable, pd.DataFrame]:
        """The energy table (and its wide matrix) at ``temperature``: re-evaluated once per temperature."""
        key = round(float(temperature), 9)
        if key not in self._tables:
            if len(self._tables) > 8:
                self._tables.pop(next(iter(self._tables)))
            table = self.table.at_temperature(key)
            self._tables[key] = (table, table.matrix)
        return self._tables[key]

    @property
    def scheme(self):
        """The reference scheme at the current temperature (molecules and corrections at that T)."""
        return self._table_at(self._conditions.temperature)[0].scheme

    def best_surfaces(self, pathway, count: int) -> list[str]:
        """The ``count`` best-ranked surfaces for ``pathway`` at the current conditions (the kernel's
        ranking rule: unblocked first, then lower G_max; surfaces lacking data last)."""
        from ecatlab.tables import sort_by_ranking

        table, _ = self._table_at(self._conditions.temperature)
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", EcatlabWarning)
            lp = che.limiting_potentials(table, pathway, pH=self._conditions.pH, scale=self._conditions.scale,
                                         temperature=self._conditions.temperature, on_missing="report")
        return list(sort_by_ranking(lp)["surface"].astype(str))[: int(count)]

    # -- engine calls ------------------------------------------------------------------------------
    def _rebuild(self, path: Pathway, surfaces: list[str], cond: Conditions, route: RouteChoice | None = None) -> None:
        """Ask the engine for everything that does not depend on U; commit only if it all succeeds."""
        notices: list[str] = []
        table, matrix = self._table_at(cond.temperature)
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always", EcatlabWarning)
            limiting = che.limiting_potentials(
                table, path, pH=cond.pH, scale=cond.scale, temperature=cond.temperature, surfaces=surfaces, on_missing="report"
            )
            u_eq = che.equilibrium_potential(path, scale=cond.scale, pH=cond.pH, temperature=cond.temperature, references=table.scheme)
        notices += [str(w.message) for w in caught if issubclass(w.category, EcatlabWarning)]
        if abs(cond.temperature - self.table.temperature) > 1e-9:
            notices.append(f"energies re-evaluated at {cond.temperature:g} K (reference corrections and molecules at that "
                           "temperature; adsorbate corrections as given)")
        compiled = che.compile_pathway(path, table.scheme)
        G = matrix.reindex(index=surfaces, columns=list(compiled.adsorbates)).to_numpy(dtype=float)
        a, n = compiled.affine(G, cond.pH, cond.scale, cond.temperature)
        # commit
        self._pathway, self._surfaces, self._conditions = path, list(surfaces), cond
        self._compiled, self._a, self._n = compiled, np.asarray(a, dtype=float), np.asarray(n, dtype=float)
        self._limiting = limiting.set_index("surface", drop=False)
        self._u_eq = float(u_eq)
        self._det = limiting["determining_step_index"].to_numpy(dtype=int)
        self._route = route
        if route is not None:
            self._focus = route.focus
        self.notices = notices

    # -- reaction networks (best routes) ------------------------------------------------------------
    def _network(self, reactant: str):
        from ecatlab.network import build_network

        if reactant not in self._networks:
            try:
                self._networks[reactant] = build_network(self.table, reactant)
            except Exception as exc:  # noqa: BLE001 - kept and re-raised where the network is needed
                self._networks[reactant] = exc
        net = self._networks[reactant]
        if isinstance(net, Exception):
            raise net
        return net

    def route_products(self, family: str) -> list[str]:
        """Products of the family's reaction network (``[]`` for OER/HER or when the table lacks
        the adsorbates to build it)."""
        reactant = ROUTE_REACTANTS.get(family)
        if reactant is None:
            return []
        try:
            return list(self._network(reactant).products)
        except Exception:  # noqa: BLE001 - no network, no best-route choices
            return []

    def pathway_choices(self, family: str) -> list[tuple[str, str]]:
        """(label, value) pairs of the product/pathway selector: the built-in pathways of the family,
        then one "best route to <product>" per network product."""
        return pathway_options(family) + [(f"best route to {product_label(p)}", route_key(p)) for p in self.route_products(family)]

    def _analysis(self, reactant: str, cond: Conditions):
        from ecatlab.network import NetworkAnalysis

        key = (reactant, cond.pH, cond.scale, cond.temperature)
        if key not in self._analyses:
            if len(self._analyses) >= 8:
                self._analyses.pop(next(iter(self._analyses)))
            self._analyses[key] = NetworkAnalysis(self._network(reactant), self._table_at(cond.temperature)[0], pH=cond.pH, scale=cond.scale,
                                                  temperature=cond.temperature)
        return self._analyses[key]

    def _find_route(self, family: str, product: str, focus: str, cond: Conditions) -> RouteChoice:
        """Ask the network for the best route (and the runner-up) of ``focus``; PathwayError when
        no route to ``product`` has complete data on ``focus``."""
        reactant = ROUTE_REACTANTS.get(family)
        if reactant is None:
            raise PathwayError(f"{family} has no best-route choices; they exist for {', '.join(ROUTE_REACTANTS)}")
        analysis = self._analysis(reactant, cond)
        ranked = tuple(analysis.ranked_routes(focus, product, top=2))
        table = analysis.best_routes(product, top=1)
        tied = int(table.loc[table["surface"] == focus, "tied_routes"].iloc[0])
        return RouteChoice(reactant, analysis.network.resolve_product(product), focus, ranked, tied, cond.scale, cond.pH, cond.temperature)

    def _rebuild_at(self, cond: Conditions, surfaces: list[str] | None = None, focus: str | None = None) -> None:
        """Rebuild for new conditions/surfaces/focus; a best-route choice is searched again first."""
        surfaces = self._surfaces if surfaces is None else surfaces
        focus = self._focus if focus is None else focus
        if self._route is not None:
            route = self._find_route(self._reaction, self._route.product, focus, cond)
            self._rebuild(route.pathway, surfaces, cond, route)
        else:
            self._rebuild(self._pathway, surfaces, cond)
            self._focus = focus

    # -- setters -----------------------------------------------------------------------------------
    def set_potential(self, value: float) -> None:
        """Set U (V on the current scale). Only ``a + n U`` is re-evaluated."""
        value = float(value)
        self._check_potential(value)
        c = self._conditions
        self._conditions = Conditions(scale=c.scale, pH=c.pH, temperature=c.temperature, potential=value)

    def set_pH(self, value: float) -> None:
        value = float(value)
        self._check_pH(value)
        c = self._conditions
        self._rebuild_at(Conditions(scale=c.scale, pH=value, temperature=c.temperature, potential=c.potential))

    def set_temperature(self, value: float) -> None:
        """Temperature in K; the engine rejects non-positive values (ConditionError)."""
        c = self._conditions
        self._rebuild_at(Conditions(scale=c.scale, pH=c.pH, temperature=float(value), potential=c.potential))

    def set_scale(self, scale: str, keep_physical_potential: bool = True) -> None:
        """Switch RHE/SHE. By default the electrode stays at the same physical potential, so U is
        converted with the engine's Nernst shift: U_SHE = U_RHE - k_B T ln(10) pH / e."""
        sc = self._check_scale(scale)
        c = self._conditions
        if sc == c.scale:
            return
        u = c.potential
        if keep_physical_potential:
            shift = float(che.nernst_shift(c.pH, c.temperature))
            u = u - shift if sc == "SHE" else u + shift
        self._rebuild_at(Conditions(scale=sc, pH=c.pH, temperature=c.temperature, potential=u))

    def set_reaction(self, family: str, pathway: str | None = None) -> None:
        """Switch the reaction family; the pathway becomes ``pathway`` (a built-in key of the family or
        a ``route_key``) or the family's first built-in one."""
        options = pathway_options(family)
        key = pathway if pathway is not None else options[0][1]
        if is_route_key(key):
            route = self._find_route(family, key[len(_ROUTE_PREFIX):], self._focus, self._conditions)
            self._rebuild(route.pathway, self._surfaces, self._conditions, route)
            self._reaction = family
            return
        if key not in [k for _, k in options]:
            raise PathwayError(f"pathway {key!r} does not belong to {family}; choose one of {[k for _, k in options]}")
        self._rebuild(resolve(key), self._surfaces, self._conditions)
        self._reaction = family

    def set_pathway(self, pathway: str | Pathway) -> None:
        """Switch the pathway (built-in key, Pathway, step text, or ``route_key(product)`` for the
        best route of the focus surface in the current family's network)."""
        if is_route_key(pathway):
            self.set_reaction(self._reaction, pathway)
            return
        path = resolve(pathway)
        self._rebuild(path, self._surfaces, self._conditions)
        family = _family_of(path.name) if isinstance(pathway, str) else None
        if family is not None:
            self._reaction = family

    def set_surfaces(self, surfaces: Iterable[str]) -> None:
        """Shown surfaces; the focus stays if it is still shown, else it becomes the first one."""
        chosen = self._check_surfaces(list(surfaces))
        self._rebuild_at(self._conditions, chosen, self._focus if self._focus in chosen else chosen[0])

    def set_focus(self, surface: str) -> None:
        """Focus surface (one of the shown surfaces). For a best-route choice the route is searched
        again on the new focus surface; PathwayError when it has no route with complete data."""
        surface = str(surface)
        if surface not in self._surfaces:
            raise ConditionError(f"focus surface {surface!r} is not shown; shown: {self._surfaces}")
        if surface == self._focus:
            return
        self._rebuild_at(self._conditions, focus=surface)

    # -- what is shown ------------------------------------------------------------------------------
    def step_energies(self) -> np.ndarray:
        """dG_i(U) = a_i + n_i U, eV, shape (n_surfaces, n_steps) (the engine's affine form)."""
        return kernel.step_free_energy(self._a, self._n, self._conditions.potential)

    def levels(self) -> np.ndarray:
        """Free energy of each state (first state 0 eV), shape (n_surfaces, n_steps + 1), eV."""
        dG = self.step_energies()
        return np.concatenate([np.zeros((dG.shape[0], 1)), np.cumsum(dG, axis=1)], axis=1)

    def uphill(self) -> np.ndarray:
        """Boolean (n_surfaces, n_steps): electrochemical steps with dG > UPHILL_TOLERANCE."""
        return (self.step_energies() > UPHILL_TOLERANCE) & self.electrochemical[None, :]

    def uphill_chemical(self) -> np.ndarray:
        """Boolean (n_surfaces, n_steps): chemical (potential-independent) steps with dG > tolerance."""
        return (self.step_energies() > UPHILL_TOLERANCE) & ~self.electrochemical[None, :]

    def step_table(self) -> pd.DataFrame:
        """Step free energies at the current conditions: index surface, columns step names, eV."""
        frame = pd.DataFrame(self.step_energies(), index=pd.Index(self._surfaces, name="surface"), columns=list(self._pathway.step_names))
        frame.attrs.update(
            {
                "quantity": "step free energy dG_i [eV]",
                "pathway": self._pathway.name,
                "steps": [s.equation for s in self._pathway.steps],
                "potential": self.potential,
                "scale": self.scale,
                "pH": self.pH,
                "temperature": self.temperature,
                "references": self.scheme.describe(),
                "energy_source": self.table.source,
            }
        )
        return frame

    def determining_steps(self) -> np.ndarray:
        """1-based index of each surface's potential-determining step (0 where undefined), from the engine."""
        return self._det.copy()

    def limiting(self) -> pd.DataFrame:
        """The engine's limiting-potential table for the shown pathway and surfaces (see
        :func:`ecatlab.che.limiting_potentials`; potentials in V vs :attr:`scale`)."""
        return self._limiting.reset_index(drop=True)

    def readout(self) -> pd.DataFrame:
        """Per shown surface (in the order shown): U_L [V vs scale],
        overpotential [V], G_max [eV], blocked, determining step, and the electrochemical steps
        still uphill at the current U."""
        lim = self._limiting
        uphill = self.uphill()
        names = np.array([f"{i + 1}" for i in range(len(self._pathway.steps))])
        still = [", ".join(names[row]) for row in uphill]
        frame = pd.DataFrame(
            {
                "limiting_potential": lim["limiting_potential"].to_numpy(dtype=float),
                "overpotential": lim["overpotential"].to_numpy(dtype=float),
                "G_max": lim["G_max"].to_numpy(dtype=float),
                "blocked": lim["blocked"].to_numpy(dtype=bool),
                "determining_step": lim["determining_step"].to_numpy(dtype=object),
                "determining_step_index": lim["determining_step_index"].to_numpy(dtype=int),
                "uphill_steps_now": still,
                "uphill_chemical_steps": lim["uphill_chemical_steps"].to_numpy(dtype=object),
                "missing_species": lim["missing_species"].to_numpy(dtype=object),
            },
            index=pd.Index(self._surfaces, name="surface"),
        )
        frame.attrs.update({"scale": self.scale, "pH": self.pH, "temperature": self.temperature, "potential": self.potential})
        return frame

    # -- snap targets (the pure functions behind the buttons) ---------------------------------------
    def limiting_potential_of(self, surface: str) -> float:
        """The engine's limiting potential of ``surface`` for the shown pathway, V vs :attr:`scale`."""
        if surface not in self._limiting.index:
            raise ConditionError(f"surface {surface!r} is not shown; shown: {self._surfaces}")
        value = float(self._limiting.loc[surface, "limiting_potential"])
        if not math.isfinite(value):
            missing = self._limiting.loc[surface, "missing_species"]
            raise ConditionError(f"{surface} has no limiting potential for {self._pathway.name}: missing {missing}")
        return value

    def equilibrium_potential(self) -> float:
        """The engine's equilibrium potential of the overall reaction, V vs :attr:`scale`."""
        return self._u_eq

    def describe(self) -> str:
        """One line with pathway and conditions (written into figure captions and exports)."""
        text = self._conditions.describe()
        if self._route is not None:
            return f"{self._route.describe()} ({self._pathway.name}): {text}"
        return f"{self._pathway.name}: {text}"
