r"""Uncertainty of network read-outs: which product has the best onset, which route is best.

Built on the public network API (:func:`ecatlab.network.build_network`,
:meth:`~ecatlab.network.ReactionNetwork.routes`, :meth:`~ecatlab.network.ReactionNetwork.route_pathway`):
every route is an ordinary pathway, so all routes go through :func:`ecatlab.uncertainty.propagate`
together (samples as a leading axis, same draws for every route). Per sample:

* a product's onset potential is the best limiting potential over its routes (max for reductions,
  min for oxidations), as in :meth:`ecatlab.network.NetworkAnalysis.onset_potentials`;
* the winning product is the one with the best onset (HER included through the engine pathway
  ``her``), as in :meth:`~ecatlab.network.NetworkAnalysis.product_ranking`;
* the best route of a product is the route with the best limiting potential. Routes tied within
  :data:`ecatlab.network.TIE_TOLERANCE_EV` share that sample equally.

Routes blocked by an uphill chemical step compete only where every route of the product is
blocked, as in the network's search. Not covered: the network's secondary tie-breaks (next-largest
step, fewer steps, route text) are not applied per sample -- tied routes share the probability
instead -- and ``chemical_limit`` is not applied. Theoretical estimates.
"""

from __future__ import annotations

from typing import Iterable, Sequence

import numpy as np
import pandas as pd

from ecatlab.constants import STANDARD_TEMPERATURE
from ecatlab.energies import as_energy_table
from ecatlab.errors import UncertaintyError
from ecatlab.uncertainty.models import ErrorModel
from ecatlab.uncertainty.propagate import propagate

__all__ = ["network_uncertainty", "NetworkUncertainty"]


class NetworkUncertainty:
    """Per-sample product and route read-outs of a reaction network (see the module docstring)."""

    def __init__(self, result, products: dict, her_key: str | None, network):
        self.result = result
        self.products = products  # product -> list of route pathway names
        self.her_key = her_key
        self.network = network

    def _best(self, names: Sequence[str]) -> tuple[np.ndarray, np.ndarray]:
        """Best U_L over the named pathways per (sample, surface), and the stacked (routes, samples, surfaces) U_L
        of the competing routes.

        As in the network's route search, a route blocked by an uphill chemical step competes only where
        every route is blocked (an open route always beats a blocked one)."""
        stack = np.stack([self.result.results[n].limiting_potential for n in names])
        blocked = np.stack([np.asarray(self.result.results[n].blocked, dtype=bool) for n in names])
        direction = self.result.results[names[0]].pathway.direction
        fill = -np.inf if direction == "reduction" else np.inf
        clean = np.where(np.isnan(stack), fill, stack)
        open_exists = (~blocked & np.isfinite(clean)).any(axis=0)
        clean = np.where(blocked & open_exists[None], fill, clean)
        best = clean.max(axis=0) if direction == "reduction" else clean.min(axis=0)
        return np.where(np.isfinite(best), best, np.nan), clean

    def onset_samples(self) -> dict[str, np.ndarray]:
        """Onset potential (V vs scale) per product, arrays (samples, surfaces)."""
        out = {p: self._best(names)[0] for p, names in self.products.items()}
        if self.her_key is not None:
            out["H2(g)"] = self.result.results[self.her_key].limiting_potential
        return out

    def product_probabilities(self) -> pd.DataFrame:
        """P(product has the best onset potential) per surface; rows sum to 1 (surfaces with data)."""
        onsets = self.onset_samples()
        names = list(onsets)
        stack = np.stack([np.where(np.isnan(onsets[n]), -np.inf, onsets[n]) for n in names])  # reductions: higher is better
        win = np.argmax(stack, axis=0)
        has = np.isfinite(stack).any(axis=0)
        p = np.stack([((win == k) & has).mean(axis=0) for k in range(len(names))], axis=1)
        out = pd.DataFrame(p, index=pd.Index(list(self.result.surfaces), name="surface"), columns=pd.Index(names, name="product"))
        out.attrs.update(dict(self.result.conditions))
        out.attrs.update({"quantity": "probability that the product has the best (least negative) onset potential",
                          "rule": "per sample, as NetworkAnalysis.product_ranking: best route per product, then best onset",
                          "standard_error": "sqrt(p(1-p)/samples)", "samples": self.result.n_samples})
        return out

    def route_probabilities(self, product: str, top: int | None = 10) -> pd.DataFrame:
        """P(route is the best route to ``product``) per surface (tied routes share a sample).

        Returns a long table: surface, route, probability, probability_se, deterministic_limiting_potential
        (V vs scale), sorted by surface and probability; ``top`` keeps the most probable routes per surface.
        """
        key = self.network.resolve_product(product)
        if key not in self.products:
            raise UncertaintyError(f"product {product!r} was not propagated; products: {list(self.products)}")
        names = self.products[key]
        best, clean = self._best(names)
        tied = np.abs(clean - best[None]) <= 1e-9
        tied &= np.isfinite(clean)
        share = tied / np.maximum(tied.sum(axis=0, keepdims=True), 1)
        p = share.mean(axis=1)  # (routes, surfaces)
        n = self.result.n_samples
        det = self.result.deterministic
        frames = []
        for i, name in enumerate(names):
            d = det[(det["pathway"] == name).to_numpy()]
            frames.append(pd.DataFrame({
                "surface": list(self.result.surfaces), "route": name, "probability": p[i],
                "probability_se": np.sqrt(p[i] * (1 - p[i]) / n),
                "deterministic_limiting_potential": d["limiting_potential"].to_numpy(dtype=float),
            }))
        out = pd.concat(frames, ignore_index=True).sort_values(["surface", "probability"], ascending=[True, False], kind="stable")
        if top is not None:
            out = out.groupby("surface", sort=False).head(int(top))
        out = out.reset_index(drop=True)
        out.attrs.update(dict(self.result.conditions))
        out.attrs.update({"quantity": f"probability that the route is the best route to {key}",
                          "ties": "routes within 1e-9 eV of the best share the sample equally; the network's secondary tie-breaks are not applied",
                          "samples": n})
        return out


def network_uncertainty(
    energies,
    reactant: str,
    model: ErrorModel,
    products: Iterable[str] | None = None,
    her: str | None = "her-volmer-heyrovsky",
    n_samples: int | None = None,
    pH: float = 0.0,
    scale: str = "RHE",
    temperature: float = STANDARD_TEMPERATURE,
    surfaces=None,
    seed: int = 0,
    max_routes: int = 2000,
    progress: bool | None = None,
    **network_options,
) -> NetworkUncertainty:
    """Propagate an error model through every route of a reaction network.

    Parameters
    ----------
    energies, model, n_samples, pH, scale, temperature, surfaces, seed, progress
        As in :func:`ecatlab.uncertainty.propagate`.
    reactant : str
        As in :func:`ecatlab.network.build_network` (e.g. ``"CO2"``).
    products : list of str, optional
        Default: every product the network reaches.
    her : str or None
        Engine pathway for the hydrogen-evolution competitor (None: leave it out).
    max_routes : int
        Refuse networks with more routes than this in total (memory: 27 bytes per route, sample
        and surface).
    network_options
        Passed to :func:`ecatlab.network.build_network`.
    """
    from ecatlab.network import build_network

    table = as_energy_table(energies, temperature)
    net = build_network(table, reactant, **network_options)
    prods = [net.resolve_product(p) for p in (products if products is not None else net.products)]
    routes: dict[str, list[str]] = {}
    pathways = []
    total = 0
    for p in prods:
        rs = net.routes(p)
        total += len(rs)
        if total > max_routes:
            raise UncertaintyError(f"the network has more than {max_routes} routes in total; restrict it (products=, allow=, forbid=) or raise max_routes")
        names = []
        for r in rs:
            path = net.route_pathway(r)
            names.append(path.name)
            pathways.append(path)
        routes[p] = names
    her_key = None
    if her is not None and "H*" in table.species:
        from ecatlab.pathways import resolve

        her_path = resolve(her)
        her_key = her_path.name
        pathways.append(her_path)
    result = propagate(table, pathways, model, n_samples=n_samples, pH=pH, scale=scale, temperature=temperature,
                       surfaces=surfaces, seed=seed, progress=progress)
    return NetworkUncertainty(result, routes, her_key, net)
