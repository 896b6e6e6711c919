"""Selectivity maps: which product wins over two descriptors (network routes or built-in pathways).

The rule that picks the winner lives in :func:`_winner`; the map methods are mixed into
:class:`ecatlab.volcano.VolcanoAnalysis`.
"""

from __future__ import annotations

import warnings
from typing import Mapping, Sequence

import numpy as np
import pandas as pd

from ecatlab import che
from ecatlab.che import kernel
from ecatlab.energies import EnergyTable
from ecatlab.errors import MissingDataWarning, PathwayError, ScalingError
from ecatlab.notation import Pathway, Species
from ecatlab.pathways import resolve
from ecatlab.volcano.results import SelectivityMap
from ecatlab.volcano.space import build_space

__all__ = ["DEFAULT_PRODUCTS", "SELECTIVITY_BASES"]

#: Bases of :func:`selectivity_map`: best network routes, built-in pathways, or the network when possible.
SELECTIVITY_BASES: tuple[str, ...] = ("auto", "network", "pathways")
#: Default products of :func:`selectivity_map` on the pathways basis: CO2RR products and the competing HER.
DEFAULT_PRODUCTS: tuple[str, ...] = ("co2rr-co", "co2rr-hcooh", "co2rr-ch4", "co2rr-ch3oh", "her-volmer-heyrovsky")


#: The winner rule of every selectivity map (the kernel's ranking rule, :func:`ecatlab.che.kernel.ranking_order`).
RANKING_RULE = ("products whose route has no uphill chemical step (kernel.is_blocked) first, then the least negative onset potential; "
                "a blocked product (e.g. CO* -> * + CO(g) uphill) wins only where every product is blocked")


def _product_label(path: Pathway) -> str:
    net = path.overall_net()
    prods = [sp for sp, c in net.items() if c > 0 and sp.is_molecule and sp.formula != "H2O"]
    return ", ".join(sp.formula for sp in prods) or path.name


def _winner(onset: np.ndarray, max_chemical_dG: np.ndarray, tie_keys: Sequence[str] | None = None) -> tuple[np.ndarray, np.ndarray]:
    """Winning product along axis 0 by the kernel's ranking rule, and its margin (V).

    Parameters
    ----------
    onset : ndarray (n_products, ...)
        Onset (limiting) potential of each product's best route or pathway, V; NaN: unavailable.
    max_chemical_dG : ndarray like ``onset``
        Largest chemical-step dG of that route or pathway, eV (NaN: none).
    tie_keys : sequence of str, optional
        Product keys; exact ties go to the alphabetically first key (the order of
        :meth:`ecatlab.network.NetworkAnalysis.product_ranking`), else to the product listed first.

    Returns
    -------
    winner : ndarray of int
        Index into the products: :func:`ecatlab.che.kernel.ranking_order` on (-onset, blocked),
        i.e. products whose route is not blocked (:func:`ecatlab.che.kernel.is_blocked`: no chemical
        step uphill) first, then the least negative onset; NaN never wins unless every product is
        NaN. A blocked product therefore wins only where every available product is blocked.
    margin : ndarray
        Winner's onset minus the best onset among the other products of the same class (unblocked
        if the winner is unblocked, else blocked), V; ``inf`` where no other product of that class
        is available, NaN where none is available at all.
    """
    onset = np.asarray(onset, dtype=float)
    blocked = kernel.is_blocked(max_chemical_dG) & np.isfinite(onset)
    perm = np.arange(len(onset)) if tie_keys is None else np.argsort(np.array(list(tie_keys), dtype=object), kind="stable")
    order = kernel.ranking_order(np.moveaxis(-onset[perm], 0, -1), np.moveaxis(blocked[perm], 0, -1))
    winner = perm[order[..., 0]]
    w_onset = np.take_along_axis(onset, winner[None], axis=0)[0]
    w_blocked = np.take_along_axis(blocked, winner[None], axis=0)[0]
    rivals = np.isfinite(onset) & (blocked == w_blocked[None]) & (np.arange(len(onset)).reshape((-1,) + (1,) * winner.ndim) != winner[None])
    with np.errstate(invalid="ignore"):
        margin = w_onset - np.where(rivals, onset, -np.inf).max(axis=0)
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


class SelectivityMixin:
    """Selectivity-map methods of :class:`ecatlab.volcano.VolcanoAnalysis` (they use its ``_space``,
    ``_evaluate``, ``_grid_2d`` and ``_two``)."""

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
        """Winning product over two descriptors: unblocked routes first, then the least negative onset potential (see :class:`SelectivityMap`).

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
            left). ``None`` (default) keeps every route. Either way the routes that remain are
            ranked by the winner rule below, so an uphill chemical step (dG > 0 eV) demotes its
            product whatever the limit.

        Notes
        -----
        Winner rule (:func:`ecatlab.che.kernel.ranking_order`, the rule of every ecatlab ranking
        and of :meth:`ecatlab.network.NetworkAnalysis.product_ranking`): at each point the products
        whose best route (or pathway) has no uphill chemical step (:func:`ecatlab.che.kernel.is_blocked`,
        e.g. CO* -> * + CO(g) with dG > 0) come first, then the least negative onset potential.
        The onset itself is the electrochemical limiting potential; a blocked product, whose
        product is not released at any potential, wins only where every product is blocked
        (:attr:`SelectivityMap.winner_blocked`). The network search already prefers an open route
        to each product when one exists.
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
        winner, margin = _winner(onset, np.stack(chems))
        labels = tuple(_product_label(p) for p in paths)
        surf = pd.DataFrame(columns=["surface", "x", "y"])
        if self.table is not None and len(points_frames):
            names = list(points_frames.index)
            lp = che.limiting_potentials(self.table, paths, self.pH, self.scale, self.temperature, surfaces=names, on_missing="report")
            wide = lp.pivot(index="surface", columns="pathway", values="limiting_potential").reindex(index=names, columns=[p.name for p in paths])
            values = wide.to_numpy(dtype=float)
            chem = lp.pivot(index="surface", columns="pathway", values="max_chemical_dG").reindex(index=names, columns=[p.name for p in paths])
            chem = chem.to_numpy(dtype=float)
            excluded = np.zeros(values.shape, dtype=bool)
            if chemical_limit is not None:
                excluded = np.isfinite(values) & (chem > chemical_limit)
            surf = self._surface_winners(names, points_frames, labels, np.where(excluded, np.nan, values), np.where(excluded, np.nan, chem),
                                         None, excluded)
        routes = np.broadcast_to(np.array([p.name for p in paths], dtype=object)[:, None, None], onset.shape).copy()
        routes[np.isnan(onset)] = ""
        cond = self._selectivity_conditions([p.name for p in paths], "pathways", note,
                                            "winner = " + RANKING_RULE + " (limiting potential of each pathway); ties to the product listed first"
                                            + _limit_rule(chemical_limit), chemical_limit)
        return SelectivityMap(descs, gx, gy, tuple(p.name for p in paths), labels, onset, winner, margin, np.stack(chems), surf, space.relations, cond,
                              space=space, basis="pathways", basis_note=note, routes=routes)

    def _surface_winners(self, names, points_frames, labels, values: np.ndarray, chem: np.ndarray, tie_keys, excluded=None) -> pd.DataFrame:
        """Computed surfaces with every product's exact onset (columns ``onset <label>``, V), winner, margin
        and ``winner_blocked``, by the rule of :func:`_winner` (``chem``: max chemical dG per product, eV).

        Surfaces missing data for a product are dropped; ``excluded`` (bool, like ``values``) marks
        onsets that are NaN because of ``chemical_limit`` (kept: that product just does not compete).
        """
        complete = (np.isfinite(values) | (False if excluded is None else excluded)).all(axis=1)
        surf = pd.DataFrame({"surface": names, "x": points_frames.iloc[:, 0].to_numpy(dtype=float), "y": points_frames.iloc[:, 1].to_numpy(dtype=float)})
        for k, lab in enumerate(labels):
            surf[f"onset {lab}"] = values[:, k]
        surf = surf[complete].reset_index(drop=True)
        if len(surf):
            w, mg = _winner(values[complete].T, chem[complete].T, tie_keys)
            surf["winner"] = np.array(labels, dtype=object)[w]
            surf["margin"] = mg
            w_chem = np.take_along_axis(chem[complete], w[:, None], axis=1)[:, 0]
            surf["winner_blocked"] = kernel.is_blocked(w_chem)
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
        chem_all = np.stack(chems).reshape(shape)
        winner, margin = _winner(onset, chem_all, keys)
        labels = tuple(Species.parse(k).formula for k in keys)
        surf = pd.DataFrame(columns=["surface", "x", "y"])
        if self.table is not None and len(points_frames):
            names = list(points_frames.index)
            real = NetworkAnalysis(net, self.table, pH=self.pH, scale=self.scale, temperature=self.temperature, surfaces=names,
                                   chemical_limit=chemical_limit)
            best = [real.best_route_arrays(p) for p in carbon]
            cols = [b[0] for b in best]
            chem_cols = [b[1] for b in best]
            if chemical_limit is not None:  # which NaNs come from the limit, not from missing data
                free = NetworkAnalysis(net, self.table, pH=self.pH, scale=self.scale, temperature=self.temperature, surfaces=names)
                had = [np.isfinite(free.best_route_arrays(p)[0]) for p in carbon]
            if her:
                lp = che.limiting_potentials(self.table, her, self.pH, self.scale, self.temperature, surfaces=names, on_missing="report").set_index("surface")
                u_h, mc_h = _apply_chemical_limit(lp.loc[names, "limiting_potential"].to_numpy(dtype=float),
                                                  lp.loc[names, "max_chemical_dG"].to_numpy(dtype=float), chemical_limit)
                cols.append(u_h)
                chem_cols.append(mc_h)
                if chemical_limit is not None:
                    had.append(np.isfinite(lp.loc[names, "limiting_potential"].to_numpy(dtype=float)))
            values = np.column_stack(cols)
            excluded = None if chemical_limit is None else (np.column_stack(had) & np.isnan(values))
            surf = self._surface_winners(names, points_frames, labels, values, np.column_stack(chem_cols), keys, excluded)
        desc = (f"best network routes from {net.reactant} ({len(net.states)} states, {len(net.edges)} steps, "
                f"{len(net.adsorbates)} adsorbates through scaling relations)" + (f"; HER: {her}" if her else ""))
        note = "; ".join([desc] + plan["notes"])
        cond = self._selectivity_conditions(keys, "network", note,
                                            "winner = " + RANKING_RULE + " (limiting potential of the best network route; HER from its pathway); "
                                            "ties to the alphabetically first product, as in product_ranking"
                                            + _limit_rule(chemical_limit), chemical_limit)
        cond["network"] = repr(net)
        cond["her"] = her
        return SelectivityMap(descs, gx, gy, tuple(keys), labels, onset, winner, margin, chem_all, surf, space.relations, cond,
                              space=space, basis="network", basis_note=note, routes=np.stack(routes).reshape(shape), network=net,
                              excluded=plan["excluded"])
