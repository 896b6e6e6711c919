r"""Free energies of every network step on every surface, best routes, products and read-outs.

Step free energies come from the CHE engine (:func:`ecatlab.che.compile_steps`,
:meth:`~ecatlab.che.CompiledPathway.affine`): :math:`\Delta G_e(U) = a_e + n_e U` on the scale
(eV), compiled once per distinct elementary step (spectators cancel). Costs, onsets, envelopes,
chemical obstacles, :math:`G_\mathrm{max}` and blocking come from :mod:`ecatlab.che.kernel`.
The route search is :mod:`ecatlab.network.routes` (bottleneck shortest path, all surfaces at once,
no route enumeration). Energies of adsorbates the table lacks come from
:mod:`ecatlab.network.estimate` when asked for and are flagged in every output.

Results are theoretical estimates (CHE thermodynamics, no kinetics).
"""

from __future__ import annotations

from collections import Counter
from dataclasses import dataclass
from typing import Iterable

import numpy as np
import pandas as pd

from ecatlab._gc import collector_paused
from ecatlab.constants import STANDARD_TEMPERATURE
from ecatlab.energies import EnergyTable, as_energy_table
from ecatlab.errors import EcatlabError, PathwayError
from ecatlab.network.model import TIE_TOLERANCE_EV, ReactionNetwork, _overall_text
from ecatlab.network.routes import BLOCKED_OFFSET, RouteSearch, is_blocked_cost, step_costs
from ecatlab.notation import Pathway

__all__ = ["NetworkAnalysis", "RankedRoute", "ROUTE_COLUMNS", "RANKING_COLUMNS", "STUCK_COLUMNS"]

#: Stoichiometry matrices larger than this (steps x adsorbates) are evaluated sparsely.
_SPARSE_ABOVE = 2_000_000

#: Column documentation of :meth:`NetworkAnalysis.best_routes` (units in brackets).
ROUTE_COLUMNS: dict[str, str] = {
    "surface": "surface name",
    "reactant": "reactant molecule",
    "product": "product molecule",
    "rank": "1 = best route on this surface; 2, 3, ... = best route avoiding the bottleneck steps of the better ranks [-]",
    "limiting_potential": "U_L of the route: least negative potential at which every electrochemical step is downhill [V vs scale]",
    "determining_step": "potential-determining step of the route (equation)",
    "max_chemical_dG": "largest free energy of a chemical step of the route (potential independent); NaN if none [eV]",
    "uphill_chemical_steps": "chemical steps of the route with dG > 0 (potential-independent barriers); empty if none",
    "electrons": "proton-electron pairs per product formed [-]",
    "steps": "number of steps of the route [-]",
    "tied_routes": "other steps into the product state that reach it at the same route cost (within 1e-9 eV) [-]",
    "available_routes": "steps into the product state that some route with complete data reaches [-]",
    "route": "route name (the intermediates visited)",
    "route_steps": "the steps of the route in ecatlab notation, separated by '; '",
    "missing_species": "adsorbates lacking on this surface that block some routes; empty if none",
    "scale": "potential scale (RHE or SHE)",
    "pH": "pH [-]",
    "temperature": "temperature [K]",
    "blocked": "True when a chemical step of the route is uphill (kernel.is_blocked): blocked at every potential [-]",
    "G_max": "largest step free energy of the route at U_eq, electrochemical and chemical (kernel.gmax, Exner 2020) [eV]",
    "stuck_at": "the state before the route's bottleneck step: where the surface gets stuck",
    "estimated": "True when the route uses an adsorbate whose energy is estimated, not computed [-]",
    "estimate_error": "largest error estimate of an estimated adsorbate on the route; 0 if none [eV]",
}

#: Column documentation of :meth:`NetworkAnalysis.product_ranking`.
RANKING_COLUMNS: dict[str, str] = {
    "surface": "surface name",
    "product": "product molecule (H2(g) is hydrogen evolution)",
    "rank": "1 = best product on this surface: unblocked before blocked, then least negative onset (kernel.ranking_order) [-]",
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
    "blocked": "True when the best route has an uphill chemical step [-]",
    "estimated": "True when the best route uses an estimated adsorbate energy [-]",
}

#: Column documentation of :meth:`NetworkAnalysis.stuck_points`.
STUCK_COLUMNS: dict[str, str] = {
    "surface": "surface name",
    "product": "product molecule",
    "stuck_at": "state before the bottleneck step of the best route",
    "bottleneck_step": "the bottleneck step (equation)",
    "bottleneck_dG": "dG of the bottleneck step at the potential asked for [eV]",
    "potential": "the potential [V vs scale]",
    "reachable": "True when the product is reached with every step downhill at the potential [-]",
}


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
    blocked : bool
        An uphill chemical step blocks the route at every potential.
    """

    pathway: Pathway
    rank: int
    limiting_potential: float
    max_chemical_dG: float
    determining_step: str
    blocked: bool = False


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
        Chemical steps with dG above this (eV) are excluded outright. Whatever it is, a chemical
        step with dG > 0 counts as uphill: a route with one is used only when no route without
        one exists (and is reported ``blocked``).
    estimates : {"scaling", "additivity"} or EnergyEstimator, optional
        Energies for adsorbates of the network that the table lacks (see
        :mod:`ecatlab.network.estimate`); ``None``: such adsorbates count as missing data.
    computed_only : bool
        Keep only routes through computed (tabulated) species, even when estimates are given.
    """

    @collector_paused()  # object-heavy set-up on a big network: see ecatlab._gc
    def __init__(
        self,
        network: ReactionNetwork,
        energies,
        pH: float = 0.0,
        scale: str = "RHE",
        temperature: float = STANDARD_TEMPERATURE,
        surfaces: Iterable[str] | None = None,
        chemical_limit: float | None = None,
        estimates=None,
        computed_only: bool = False,
    ):
        from ecatlab import che

        self.network = network
        self.table = as_energy_table(energies, None) if not isinstance(energies, EnergyTable) else energies
        if np.ndim(pH) != 0:
            raise EcatlabError("NetworkAnalysis takes one pH value")
        self.scale = che._check_conditions(scale, pH, temperature)
        self.pH = float(pH)
        self.temperature = float(temperature)
        self.surfaces = che._select_surfaces(self.table, surfaces)
        self.chemical_limit = chemical_limit
        # one compiled row per distinct step (edges share Step objects; spectators cancel)
        uniq: dict[int, int] = {}
        by_text: dict[str, int] = {}
        step_of_edge = np.empty(len(network.edges), dtype=np.int64)
        distinct = []
        for j, e in enumerate(network.edges):
            k = uniq.get(id(e.step))
            if k is None:
                eq = e.step.text or e.step.equation
                k = by_text.get(eq)
                if k is None:
                    k = by_text[eq] = len(distinct)
                    distinct.append(e.step)
                uniq[id(e.step)] = k
            step_of_edge[j] = k
        self._step_of_edge = step_of_edge
        self.compiled = che.compile_steps(distinct, network.adsorbates, self.table.scheme)
        values = self.table.values(self.surfaces, network.adsorbates)
        S, A = values.shape
        #: estimated adsorbate energies: mask (n_adsorbates,) and error (n_surfaces, n_adsorbates), eV
        self.estimated_mask = np.zeros(A, dtype=bool)
        self.estimate_error = np.zeros((S, A))
        self.estimator = None
        if estimates is not None and not computed_only:
            from ecatlab.network.estimate import EnergyEstimator

            est = estimates if isinstance(estimates, EnergyEstimator) else EnergyEstimator(self.table, method=str(estimates))
            self.estimator = est
            todo = [j for j, a in enumerate(network.adsorbates) if np.isnan(values[:, j]).all() and a in network.structures]
            if todo:
                names = [network.adsorbates[j] for j in todo]
                val, err = est.estimate([network.structures[n] for n in names], self.surfaces, names=names)
                values[:, todo] = val
                self.estimate_error[:, todo] = err
                self.estimated_mask[todo] = True
        missing = np.isnan(values)
        filled = np.where(missing, 0.0, values)
        stoich = self.compiled.adsorbate_stoichiometry  # (n_steps, n_adsorbates)
        if stoich.size > _SPARSE_ABOVE:
            # the engine's affine map is linear in G: a(G) = a(0) + G @ stoich.T; evaluate the
            # product with a sparse stoichiometry (each step touches <= 3 adsorbates) and check one
            # surface against the engine's own dense evaluation
            from scipy import sparse

            a0, n_step = self.compiled.affine(np.zeros((1, A)), self.pH, self.scale, self.temperature)
            a_step = np.asarray(a0, dtype=float).reshape(1, -1) + np.asarray((sparse.csr_matrix(stoich) @ filled.T).T)
            sample = np.unique(np.linspace(0, len(distinct) - 1, 64).astype(int))
            check = che.compile_steps([distinct[i] for i in sample], network.adsorbates, self.table.scheme)
            ref, _ = check.affine(filled[:1], self.pH, self.scale, self.temperature)
            if not np.allclose(np.asarray(ref).reshape(-1), a_step[0, sample], atol=1e-9, equal_nan=True):
                raise EcatlabError("internal check failed: sparse step free energies differ from the engine's")
        else:
            a_step, n_step = self.compiled.affine(filled, self.pH, self.scale, self.temperature)
            a_step = np.asarray(a_step, dtype=float).reshape(S, len(distinct))
        uses = np.abs(stoich) > 0  # (n_steps, n_adsorbates)
        if missing.any():
            from scipy import sparse

            bad = np.asarray((sparse.csr_matrix(uses.astype(float)) @ missing.T.astype(float)).T) > 0
            a_step[bad] = np.nan
        n_step = np.asarray(n_step, dtype=float)
        self._a_step, self._n_step = a_step, n_step
        #: a_e (eV): dG of every edge at U = 0 on the scale, shape (n_surfaces, n_edges); NaN = missing data.
        self.a = a_step[:, step_of_edge]
        #: electrons n_e of every edge (reduction positive).
        self.n = n_step[step_of_edge]
        from ecatlab.che import kernel

        self.electrochemical = kernel.electrochemical_mask(self.n)
        self._missing = missing
        self._uses_step = uses
        self._uses_edge = uses[step_of_edge]  # (n_edges, n_adsorbates) bool
        #: bottleneck cost of every edge (eV), see :func:`ecatlab.network.routes.step_costs`.
        self.weight = step_costs(a_step, n_step, 0.0, chemical_limit)[:, step_of_edge]
        self._search = RouteSearch([e.source for e in network.edges], [e.target for e in network.edges], network.layers,
                                   len(network.states), network.start)
        self._src = self._search.src
        self._tgt = self._search.tgt
        self._runs: dict = {}
        self._route_cache: dict = {}
        self._distinct = distinct
        self._equations = _LazyEquations(distinct, step_of_edge)

    # -- per-edge table ----------------------------------------------------------------------------
    def edge_table(self, potential: float = 0.0) -> pd.DataFrame:
        """Every step with its dG on every surface at ``potential`` (V on the scale), long form.

        Columns ``surface``, ``source``, ``target``, ``step``, ``kind``, ``electrons``, ``bond``,
        ``change``, ``rule``, ``dG`` (eV, kernel.step_free_energy), ``onset_potential`` (V,
        kernel.onset_potentials; NaN for chemical steps), ``estimated`` (bool).
        """
        from ecatlab.che import kernel

        base = self.network.edge_frame()
        dG = kernel.step_free_energy(self.a, self.n, float(potential))
        onset = kernel.onset_potentials(self.a, self.n)
        est_edge = (self._uses_edge & self.estimated_mask[None, :]).any(axis=1)
        S, E = dG.shape
        out = pd.concat([base] * S, ignore_index=True)
        out.insert(0, "surface", np.repeat(np.array(self.surfaces, dtype=object), E))
        out["dG"] = dG.ravel()
        out["onset_potential"] = onset.ravel()
        out["estimated"] = np.tile(est_edge, S)
        out["potential"] = float(potential)
        out["scale"] = self.scale
        out["pH"] = self.pH
        out.attrs.update(self._attrs(f"step free energies at U = {potential:g} V vs {self.scale}"))
        return out

    # -- search ----------------------------------------------------------------------------------------
    def _run(self, removed: tuple = ()):
        """(d, pred) of the search with the given (surface-wise) removed edges."""
        key = removed
        if key not in self._runs:
            w = self.weight
            if removed:
                w = w.copy()
                rows = np.arange(len(self.surfaces))
                for rem in removed:
                    rem = np.asarray(rem)
                    ok = rem >= 0
                    w[rows[ok], rem[ok]] = np.inf
            self._runs[key] = self._search.run(w)
        return self._runs[key]

    def _route_arrays(self, product: str, rank: int = 1) -> dict:
        """Best route of the given rank to ``product`` on every surface, with its read-outs."""
        key = self.network.resolve_product(product)
        ck = (key, rank)
        if ck in self._route_cache:
            return self._route_cache[ck]
        removed: tuple = ()
        if rank > 1:
            prev = [self._route_arrays(key, r)["bottleneck"] for r in range(1, rank)]
            removed = tuple(tuple(p.tolist()) for p in prev)
        d, pred = self._run(removed)
        t = self.network.product_state(key)
        S = len(self.surfaces)
        rows = np.arange(S)
        cost = d[:, t]
        ok = cost < np.inf
        edges = self._search.routes(pred, t)  # (S, L), -1 padded
        res = self._evaluate(edges, ok)
        # cost-carrying step: argmax of the step costs along the route
        E = len(self.network.edges)
        safe = np.where(edges >= 0, edges, E)
        along = np.where(edges >= 0, self.weight[rows[:, None], np.minimum(safe, E - 1)], -np.inf) if edges.shape[1] else np.full((S, 0), -np.inf)
        if edges.shape[1]:
            kk = along.argmax(axis=1)
            bott = np.where(ok, safe[rows, kk], -1)
        else:
            bott = np.full(S, -1)
        bott = np.where(bott >= E, -1, bott)
        # in-edges of the product state
        into = np.flatnonzero(self._tgt == t)
        via = np.maximum(d[:, self._src[into]], self.weight[:, into]) if into.size else np.full((S, 0), np.inf)
        avail = np.isfinite(via).sum(axis=1)
        with np.errstate(invalid="ignore"):
            tie = (np.abs(via - cost[:, None]) <= TIE_TOLERANCE_EV).sum(axis=1) - 1
        res.update(cost=cost, ok=ok, edges=edges, bottleneck=bott, available=avail, tied=np.where(ok, np.maximum(tie, 0), 0))
        self._route_cache[ck] = res
        return res

    def _evaluate(self, edges: np.ndarray, ok: np.ndarray) -> dict:
        """Kernel read-outs of per-surface routes, grouped by the routes' electron pattern.

        Routes are padded with zero-electron (chemical) dummy steps: a = 0 for the equilibrium
        potential and G_max (a zero step changes neither: sum(dG at U_eq) = 0 so G_max >= 0), and
        a = -inf for the chemical obstacle (never the largest; all-dummy = no chemical step).
        """
        from ecatlab.che import kernel

        S, L = edges.shape
        u_l = np.full(S, np.nan)
        det = np.full(S, -1, dtype=np.int64)
        chem = np.full(S, np.nan)
        g_max = np.full(S, np.nan)
        u_eq = np.full(S, np.nan)
        est = np.zeros(S, dtype=bool)
        err = np.zeros(S)
        if L == 0 or not ok.any():
            return dict(u_l=u_l, det=det, chem=chem, g_max=g_max, u_eq=u_eq, est=est, err=err)
        rows = np.arange(S)[:, None]
        pad = edges < 0
        safe = np.where(pad, 0, edges)
        a_r = np.where(pad, 0.0, self.a[rows, safe])
        n_r = np.where(pad, 0.0, self.n[safe])
        a_chem = np.where(pad, -np.inf, a_r)
        patterns, inv = np.unique(n_r, axis=0, return_inverse=True)
        inv = inv.reshape(-1)
        for g, n in enumerate(patterns):
            sel = np.flatnonzero((inv == g) & ok)
            if sel.size == 0 or not kernel.electrochemical_mask(n).any():
                continue
            ul, k = kernel.envelope(a_r[sel], n, self.network.direction)
            u_l[sel] = ul
            det[sel] = edges[sel, k]
            mc, _ = kernel.chemical_obstacle(a_chem[sel], n)
            chem[sel] = np.where(np.isneginf(mc), np.nan, mc)
            ueq = kernel.equilibrium_potential_from_affine(a_r[sel], n)
            u_eq[sel] = ueq
            gm, _ = kernel.gmax(a_r[sel], n, ueq[:, None])
            g_max[sel] = gm
        if self.estimated_mask.any():
            est_edge, err_edge = self._estimated_edges()
            est = (est_edge[safe] & ~pad).any(axis=1) & ok
            err = np.where(est, np.where(pad, 0.0, err_edge[rows, safe]).max(axis=1), 0.0)
        return dict(u_l=u_l, det=det, chem=chem, g_max=g_max, u_eq=u_eq, est=est, err=err)

    def _estimated_edges(self):
        """Per edge: uses an estimated adsorbate (n_edges,), and the largest error of those (n_surfaces, n_edges), eV."""
        if getattr(self, "_est_edges", None) is None:
            cols = np.flatnonzero(self.estimated_mask)
            step, k = np.nonzero(self._uses_step[:, cols])
            K = self._uses_step.shape[0]
            est_step = np.zeros(K, dtype=bool)
            est_step[step] = True
            err_t = np.zeros((K, len(self.surfaces)))
            np.maximum.at(err_t, step, np.nan_to_num(self.estimate_error[:, cols[k]]).T)
            self._est_edges = (est_step[self._step_of_edge], err_t.T[:, self._step_of_edge])
        return self._est_edges

    # -- public route read-outs --------------------------------------------------------------------------
    def route_costs(self, product: str, max_routes: int = 50_000) -> pd.DataFrame:
        """Cost of every simple route (eV) on every surface, by enumeration -- for small networks and checks.

        Index: surface; columns: route names; +inf where a route is unavailable. A route without an
        uphill chemical step costs -U_L; one with such a step costs more than 500 eV
        (:data:`~ecatlab.network.routes.BLOCKED_OFFSET` + its largest chemical dG).
        """
        routes = self.network.routes(product, max_routes=max_routes)
        E = len(self.network.edges)
        L = max(len(r) for r in routes)
        pad = np.full((len(routes), L), E)
        for i, r in enumerate(routes):
            pad[i, : len(r)] = r
        w = np.concatenate([self.weight, np.full((len(self.surfaces), 1), -np.inf)], axis=1)
        cost = w[:, pad].max(axis=2)
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
            Names of the distinct best routes found (:meth:`ReactionNetwork.route_name`).
        """
        r = self._route_arrays(product, 1)
        ok = r["ok"]
        uniq, inv = np.unique(r["edges"], axis=0, return_inverse=True)
        inv = inv.reshape(-1)
        names = tuple(self.network.route_name(tuple(row[row >= 0])) if (row >= 0).any() else "" for row in uniq)
        return np.where(ok, r["u_l"], np.nan), np.where(ok, r["chem"], np.nan), np.where(ok, inv, -1), names

    @collector_paused()
    def best_routes(self, product: str, top: int = 1) -> pd.DataFrame:
        """Best route (and ``top - 1`` alternatives) to ``product`` on every surface.

        Alternatives: rank k + 1 is the best route that avoids the bottleneck steps of ranks 1..k
        on that surface (one more search each), so each rank has a different limiting step.

        Returns
        -------
        DataFrame
            One row per (surface, rank); columns documented in :data:`ROUTE_COLUMNS`.
        """
        key = self.network.resolve_product(product)
        net = self.network
        S = len(self.surfaces)
        top = max(1, int(top))
        product_state = net.states[net.product_state(key)]
        electrons = product_state.electrons / max(1, Counter(product_state.molecules).get(key, 1))
        missing = self._missing_text()
        frames = []
        name_cache: dict = {}
        for rank in range(1, top + 1):
            r = self._route_arrays(key, rank)
            ok = r["ok"]
            if rank > 1 and not ok.any():
                break
            uniq, inv = np.unique(r["edges"], axis=0, return_inverse=True)
            inv = inv.reshape(-1)
            info = []
            for row in uniq:
                route = tuple(int(x) for x in row[row >= 0])
                if route not in name_cache:
                    name_cache[route] = (net.route_name(route) if route else "no route with complete data",
                                         "; ".join(self._equations._one(j) for j in route), len(route))
                info.append(name_cache[route])
            names = np.array([i[0] for i in info], dtype=object)[inv]
            texts = np.array([i[1] for i in info], dtype=object)[inv]
            lengths = np.array([i[2] for i in info])[inv]
            uphill = np.full(S, "", dtype=object)
            for i in np.flatnonzero(ok & (np.nan_to_num(r["chem"], nan=-np.inf) > 0)):
                route = r["edges"][i][r["edges"][i] >= 0]
                uphill[i] = "; ".join(f"{self._equations[j]} ({self.a[i, j]:+.2f} eV)" for j in route
                                      if not self.electrochemical[j] and self.a[i, j] > 0)
            bott = r["bottleneck"]
            src_b = np.where(bott >= 0, self._src[np.maximum(bott, 0)], -1)
            uniq_s, inv_s = np.unique(src_b, return_inverse=True)
            stuck = np.array([net.states[int(x)].label if x >= 0 else "" for x in uniq_s], dtype=object)[inv_s.reshape(-1)]
            frame = pd.DataFrame(
                {
                    "surface": self.surfaces,
                    "reactant": net.reactant,
                    "product": key,
                    "rank": rank,
                    "limiting_potential": np.where(ok, r["u_l"], np.nan),
                    "determining_step": np.where(ok, self._equations[r["det"]], ""),
                    "max_chemical_dG": np.where(ok, r["chem"], np.nan),
                    "uphill_chemical_steps": uphill,
                    "electrons": electrons,
                    "steps": np.where(ok, lengths, 0),
                    "tied_routes": r["tied"],
                    "available_routes": r["available"],
                    "route": np.where(ok, names, "no route with complete data"),
                    "route_steps": np.where(ok, texts, ""),
                    "missing_species": missing,
                    "scale": self.scale,
                    "pH": self.pH,
                    "temperature": self.temperature,
                    "blocked": ok & is_blocked_cost(r["cost"]),
                    "G_max": np.where(ok, r["g_max"], np.nan),
                    "stuck_at": np.where(ok, stuck, ""),
                    "estimated": r["est"] & ok,
                    "estimate_error": np.where(ok, r["err"], 0.0),
                }
            )
            if top == 1:
                frames.append(frame)
                break
            keep = ok | (rank == 1)
            frame["_order"] = np.arange(S) * (top + 1) + rank
            frames.append(frame[keep])
        if top == 1:
            out = frames[0]
        else:
            out = pd.concat(frames, ignore_index=True).sort_values("_order", kind="stable").drop(columns="_order").reset_index(drop=True)
            out = out[list(ROUTE_COLUMNS)]
        out.attrs.update(self._attrs(f"best routes {self.network.reactant} -> {key}"))
        out.attrs["columns"] = ROUTE_COLUMNS
        return out

    def ranked_routes(self, surface: str, product: str, top: int = 3) -> list[RankedRoute]:
        """The ``top`` best routes to ``product`` on one surface, as :class:`RankedRoute` objects."""
        i = self._surface_index(surface)
        key = self.network.resolve_product(product)
        out = []
        for rank in range(1, max(1, top) + 1):
            r = self._route_arrays(key, rank)
            if not r["ok"][i]:
                break
            route = tuple(int(x) for x in r["edges"][i] if x >= 0)
            u = float(r["u_l"][i])
            blocked = bool(is_blocked_cost(r["cost"][i]))
            desc = (
                f"rank {rank} route {self.network.reactant} -> {key} on {surface}: U_L = {u:+.3f} V vs {self.scale} "
                f"at pH {self.pH:g} (network search){'; blocked by an uphill chemical step' if blocked else ''}"
            )
            path = self.network.route_pathway(route, description=desc)
            out.append(RankedRoute(path, rank, u, float(r["chem"][i]), str(self._equations[r["det"][i]]), blocked))
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

    # -- states ---------------------------------------------------------------------------------------
    def bottleneck(self) -> pd.DataFrame:
        """Least route cost (eV) from the start to every state on every surface.

        A cost c < 500 eV means the state is reached with every step downhill at U <= -c (V on the
        scale); a larger finite cost means only through an uphill chemical step
        (:data:`~ecatlab.network.routes.BLOCKED_OFFSET` + its dG); +inf = unreachable with the data;
        -inf = the start state.
        """
        d, _ = self._run()
        return pd.DataFrame(d, index=pd.Index(self.surfaces, name="surface"), columns=[s.label for s in self.network.states])

    def reachable_states(self, potential: float) -> pd.DataFrame:
        """Which states are reachable from the start with every step downhill at U (V on the scale).

        Returns
        -------
        DataFrame of bool, index surface, columns state labels.
        """
        b = self.bottleneck()
        out = b <= -float(potential) + TIE_TOLERANCE_EV
        out.attrs.update(self._attrs(f"states reachable downhill at U = {potential:g} V vs {self.scale}"))
        return out

    def pruned(self, potential: float, surface: str | None = None) -> ReactionNetwork:
        """The network pruned at a potential: states reachable with every step downhill at U (V on the
        scale), and the downhill steps between them, on ``surface`` (or on any surface)."""
        d, _ = self._run()
        U = float(potential)
        rows = [self._surface_index(surface)] if surface is not None else list(range(len(self.surfaces)))
        live = (d[rows] <= -U + TIE_TOLERANCE_EV).any(axis=0)
        down = (self.weight[rows] <= -U + TIE_TOLERANCE_EV).any(axis=0)
        keep_edges = [j for j in range(len(self.network.edges)) if down[j] and live[self._src[j]] and live[self._tgt[j]]]
        from ecatlab.network.model import NetworkEdge

        keep = sorted(set(np.flatnonzero(live).tolist()) | {self.network.start})
        remap = {old: new for new, old in enumerate(keep)}
        net = self.network
        edges = tuple(NetworkEdge(remap[e.source], remap[e.target], e.step, e.kind, e.bond, e.change, e.rule)
                      for e in (net.edges[j] for j in keep_edges))
        notes = net.notes + (f"pruned at U = {U:g} V vs {self.scale} (pH {self.pH:g})" + (f" on {surface}" if surface else ""),)
        return ReactionNetwork(net.reactant, net.reactant_count, tuple(net.states[i] for i in keep), edges, net.adsorbates, net.molecules,
                               net.sites, remap[net.start], notes, structures=net.structures, computed=net.computed, direction=net.direction,
                               product_filter=net.product_filter)

    def stuck_points(self, product: str, potential: float | None = None) -> pd.DataFrame:
        """Where each surface gets stuck on its best route to ``product``: the state before the
        bottleneck step; at ``potential`` (default: 0 V) also its dG and whether the product is reached."""
        from ecatlab.che import kernel

        key = self.network.resolve_product(product)
        r = self._route_arrays(key, 1)
        U = 0.0 if potential is None else float(potential)
        b = r["bottleneck"]
        rows = np.arange(len(self.surfaces))
        bb = np.maximum(b, 0)
        dG = np.where(b >= 0, kernel.step_free_energy(self.a[rows, bb], self.n[bb], U), np.nan)
        out = pd.DataFrame({
            "surface": self.surfaces,
            "product": key,
            "stuck_at": [self.network.states[self._src[x]].label if x >= 0 else "" for x in b],
            "bottleneck_step": [self._equations[x] if x >= 0 else "" for x in b],
            "bottleneck_dG": dG,
            "potential": U,
            "reachable": r["ok"] & (r["cost"] <= -U + TIE_TOLERANCE_EV),
        })
        out.attrs.update(self._attrs(f"stuck points on the best route to {key}"))
        out.attrs["columns"] = STUCK_COLUMNS
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
            u, *_ = self.best_route_arrays(p)
            data[self.network.resolve_product(p)] = u
        out = pd.DataFrame(data, index=pd.Index(self.surfaces, name="surface"))
        h = self._her(her)
        if h is not None:
            out["H2(g)"] = h["limiting_potential"].to_numpy()
        out.attrs.update(self._attrs("onset potentials [V vs scale]"))
        return out

    def product_ranking(self, products: Iterable[str] | None = None, her: str | None = "her-volmer-heyrovsky") -> pd.DataFrame:
        """Products ranked per surface: unblocked before blocked, then least negative onset
        (:func:`ecatlab.che.kernel.ranking_order` on -onset), HER from the engine included.

        Returns
        -------
        DataFrame
            Long form, columns in :data:`RANKING_COLUMNS`.
        """
        from ecatlab.che import equilibrium_potential, kernel

        prods = [self.network.resolve_product(p) for p in (products if products is not None else self.network.products)]
        frames = []
        net = self.network
        for p in prods:
            best = self.best_routes(p, top=1)
            st = net.states[net.product_state(p)]
            reaction = _overall_text(net.reactant, net.reactant_count, st)
            u_eq = equilibrium_potential(reaction, scale=self.scale, pH=self.pH, temperature=self.temperature, references=self.table.scheme)
            frames.append(pd.DataFrame({
                "surface": best["surface"], "product": p, "onset_potential": best["limiting_potential"],
                "equilibrium_potential": u_eq, "overpotential": u_eq - best["limiting_potential"], "electrons": best["electrons"],
                "determining_step": best["determining_step"], "max_chemical_dG": best["max_chemical_dG"], "route": best["route"],
                "blocked": best["blocked"].to_numpy(dtype=bool), "estimated": best["estimated"].to_numpy(dtype=bool),
            }))
        h = self._her(her)
        if h is not None:
            frames.append(pd.DataFrame({
                "surface": h["surface"].to_numpy(), "product": "H2(g)", "onset_potential": h["limiting_potential"].to_numpy(),
                "equilibrium_potential": h["equilibrium_potential"].to_numpy(), "overpotential": h["overpotential"].to_numpy(),
                "electrons": h["electrons"].to_numpy(), "determining_step": h["determining_step"].to_numpy(),
                "max_chemical_dG": h["max_chemical_dG"].to_numpy(), "route": h["pathway"].to_numpy(),
                "blocked": h["blocked"].to_numpy(dtype=bool), "estimated": False,
            }))
        out = pd.concat(frames, ignore_index=True)
        pos = {s: i for i, s in enumerate(self.surfaces)}
        surf_code = out["surface"].map(pos).to_numpy()
        onset = out["onset_potential"].to_numpy(dtype=float)
        blocked = out["blocked"].to_numpy(dtype=bool)
        # per surface, kernel order: unblocked first, then lower "-onset"; NaN last; then product name
        within = np.empty(len(out), dtype=np.int64)
        for code in np.unique(surf_code):
            idx = np.flatnonzero(surf_code == code)
            names = out["product"].to_numpy()[idx]
            pre = idx[np.argsort(names, kind="stable")]
            order = kernel.ranking_order(-onset[pre], blocked[pre])
            within[pre[order]] = np.arange(len(pre))
        sort = np.lexsort((within, surf_code))
        out = out.iloc[sort].copy()
        out["rank"] = within[sort] + 1
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
        ``first_intermediate_favoured`` (True when dG_first < dG_H), ``best_product`` and
        ``best_onset_potential`` (V), ``her_onset_potential`` (V), ``onset_margin_vs_her``
        (best_onset - her_onset, V), ``products_reachable`` (products whose onset is at or above U).
        """
        from ecatlab.che import kernel, step_free_energies

        net = self.network
        first = [j for j, e in enumerate(net.edges) if e.source == net.start and self.electrochemical[j]]
        if not first:
            raise PathwayError(f"no electrochemical first step from {net.reactant} in this network")
        U = float(potential)
        dG_first_all = kernel.step_free_energy(self.a[:, first], self.n[first], U)
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
    def _state_labels(self) -> np.ndarray:
        if getattr(self, "_labels", None) is None:
            self._labels = np.array([s.label for s in self.network.states], dtype=object)
        return self._labels

    def _her(self, her: str | None):
        if her is None or "H*" not in self.table.species:
            return None
        from ecatlab.che import limiting_potentials

        return limiting_potentials(self.table, her, pH=self.pH, scale=self.scale, temperature=self.temperature, surfaces=self.surfaces, on_missing="report")

    def _surface_index(self, surface: str) -> int:
        if not hasattr(self, "_surface_pos"):
            self._surface_pos = {s: i for i, s in enumerate(self.surfaces)}
        try:
            return self._surface_pos[surface]
        except KeyError:
            from ecatlab.errors import EnergyTableError

            raise EnergyTableError(self.table.source, f"unknown surface {surface!r}; known: {self.surfaces}") from None

    def _missing_text(self) -> list[str]:
        if getattr(self, "_missing_cache", None) is not None:
            return self._missing_cache
        ads = np.array(self.network.adsorbates, dtype=object)
        used = self._uses_step.any(axis=0)
        miss = self._missing & used[None, :]
        cache: dict = {}
        out = []
        for row in miss:
            k = row.tobytes()
            if k not in cache:
                cache[k] = ", ".join(ads[row])
            out.append(cache[k])
        self._missing_cache = out
        return out

    def _attrs(self, quantity: str) -> dict:
        est = [a for a, m in zip(self.network.adsorbates, self.estimated_mask) if m]
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
            "estimated_species": est,
            "estimate_method": getattr(self.estimator, "method", None),
            "notes": list(self.table.notes) + list(self.network.notes)
            + ([f"energies of {len(est)} adsorbates are estimated ({getattr(self.estimator, 'method', '')}), not computed"] if est else []),
        }


class _LazyEquations:
    """Equation text per edge index (array-like; index -1 or n_edges gives ""), built on demand."""

    def __init__(self, steps, step_of_edge):
        self._steps = steps
        self._of = step_of_edge
        self._cache: dict[int, str] = {}

    def _one(self, j: int) -> str:
        if j < 0 or j >= len(self._of):
            return ""
        k = int(self._of[j])
        t = self._cache.get(k)
        if t is None:
            t = self._cache[k] = self._steps[k].equation
        return t

    def __getitem__(self, idx):
        if np.ndim(idx) == 0:
            return self._one(int(idx))
        arr = np.asarray(idx)
        uniq, inv = np.unique(arr, return_inverse=True)
        vals = np.array([self._one(int(j)) for j in uniq], dtype=object)
        return vals[inv.reshape(arr.shape)]


__all__ += ["BLOCKED_OFFSET"]
