r"""Best routes by a bottleneck (minimax) shortest-path search, vectorised over surfaces.

Cost of a step (eV), per surface, from the CHE kernel (:mod:`ecatlab.che.kernel`)::

    electrochemical (reduction):  c_e = -U_e = a_e / n_e      (U_e = kernel.onset_potentials)
    chemical, dG <= threshold:    c_e = -inf                  (never the bottleneck)
    chemical, dG >  threshold:    c_e = BLOCKED_OFFSET + dG   (uphill at every potential)
    missing data / excluded:      c_e = +inf

The cost of a route is the largest step cost; the best route minimises it. A route without an
uphill chemical step therefore always beats one with such a step, and its cost is
:math:`-U_L` (:math:`U_L` the least negative potential at which all its steps are downhill);
when every route has an uphill chemical step, the one with the smallest such step is chosen
(reported ``blocked``). This is the bottleneck path problem (Pollack, Oper. Res. 8, 733 (1960);
Gabow & Tarjan, J. Algorithms 9, 411 (1988)), solved by label-correcting relaxation
``d[v] = min over e=(u,v) of max(d[u], c_e)`` processed layer by layer (electrochemical steps move
from one electron count to the next, chemical steps stay in their layer and are relaxed to a fixed
point), all surfaces at once as numpy arrays. No route is ever enumerated; each step is relaxed
a few times, so the cost is O(steps x surfaces).

Predecessors are kept only on strict improvement, so they form a tree and the route read back is
simple. Among routes of equal cost the one found first wins: with layered relaxation that is the
one whose steps come first in the network's edge order (deterministic).
"""

from __future__ import annotations

import numpy as np

__all__ = ["BLOCKED_OFFSET", "RouteSearch", "step_costs", "is_blocked_cost"]

#: Offset (eV) added to uphill chemical steps so that they dominate any electrochemical cost.
BLOCKED_OFFSET = 1.0e3


def step_costs(a: np.ndarray, n: np.ndarray, chemical_threshold: float = 0.0, chemical_limit: float | None = None) -> np.ndarray:
    """Bottleneck cost of every step on every surface (see the module docstring), eV.

    Parameters
    ----------
    a : ndarray (n_surfaces, n_steps)
        Step free energies at U = 0 V on the scale (eV), NaN where data are missing.
    n : ndarray (n_steps,)
        Electrons taken up per step.
    chemical_threshold : float
        Chemical steps above this dG (eV) count as uphill (blocking).
    chemical_limit : float, optional
        Chemical steps above this dG (eV) are excluded outright (+inf).
    """
    from ecatlab.che import kernel

    a = np.asarray(a, dtype=float)
    n = np.asarray(n, dtype=float)
    ec = kernel.electrochemical_mask(n)
    onset = kernel.onset_potentials(a, n)  # V; NaN for chemical steps
    chem = np.where(a > chemical_threshold, BLOCKED_OFFSET + a, -np.inf)
    if chemical_limit is not None:
        chem = np.where(a > chemical_limit, np.inf, chem)
    c = np.where(ec, -onset, chem)
    return np.where(np.isnan(a), np.inf, c)


def is_blocked_cost(cost) -> np.ndarray:
    """True where a route cost carries an uphill chemical step (finite and >= BLOCKED_OFFSET / 2)."""
    c = np.asarray(cost, dtype=float)
    return np.isfinite(c) & (c >= 0.5 * BLOCKED_OFFSET)


class RouteSearch:
    """Layered bottleneck relaxation on a fixed network structure (reused for any costs).

    Parameters
    ----------
    source, target : ndarray of int (n_edges,)
        Edge end points (state indices).
    layer : ndarray of int (n_states,)
        Electron count of every state; electrochemical edges must go to a higher layer and
        chemical edges stay in theirs, else a generic (slower) relaxation to a fixed point is used.
    n_states : int
    start : int
    """

    def __init__(self, source, target, layer, n_states: int, start: int):
        self.src = np.asarray(source, dtype=np.int64)
        self.tgt = np.asarray(target, dtype=np.int64)
        self.V = int(n_states)
        self.E = len(self.src)
        self.start = int(start)
        layer = np.asarray(layer)
        ls, lt = layer[self.src], layer[self.tgt]
        self.layered = bool(np.all(lt >= ls))
        self.groups = []  # (targets, padded edge matrix, iterate?) in processing order
        if self.layered:
            for L in np.unique(layer):
                up = np.flatnonzero((lt == L) & (ls < L))
                same = np.flatnonzero((lt == L) & (ls == L))
                if up.size:
                    self.groups.append(self._pad(up) + (False,))
                if same.size:
                    self.groups.append(self._pad(same) + (True,))
        else:
            self.groups.append(self._pad(np.arange(self.E)) + (True,))

    def _pad(self, edges: np.ndarray):
        order = edges[np.lexsort((edges, self.tgt[edges]))]
        t = self.tgt[order]
        targets, starts, counts = np.unique(t, return_index=True, return_counts=True)
        width = int(counts.max())
        pad = np.full((len(targets), width), self.E, dtype=np.int64)  # E = sentinel edge (cost +inf)
        col = np.arange(len(order)) - np.repeat(starts, counts)
        pad[np.repeat(np.arange(len(targets)), counts), col] = order
        return targets, pad

    def run(self, cost: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Bottleneck distance and predecessor edge of every state.

        Parameters
        ----------
        cost : ndarray (n_surfaces, n_edges)

        Returns
        -------
        d : ndarray (n_surfaces, n_states)
            Least route cost from the start (eV); -inf at the start, +inf where unreachable.
        pred : ndarray of int (n_surfaces, n_states)
            Edge into each state on its best route; -1 at the start and where unreachable.
        """
        cost = np.asarray(cost, dtype=float)
        S = cost.shape[0]
        c = np.concatenate([cost, np.full((S, 1), np.inf)], axis=1)
        d = np.full((S, self.V), np.inf)
        d[:, self.start] = -np.inf
        pred = np.full((S, self.V), -1, dtype=np.int64)
        src_pad = np.concatenate([self.src, [self.start]])
        rows = np.arange(S)[:, None]
        for targets, pad, iterate in self.groups:
            cw = c[:, pad]  # (S, T, W) costs of the group's edges, fixed
            srcs = src_pad[pad]
            for _ in range(len(targets) + 1 if iterate else 1):
                cand = np.maximum(d[:, srcs], cw)
                k = cand.argmin(axis=2)
                best = np.take_along_axis(cand, k[..., None], axis=2)[..., 0]
                cur = d[:, targets]
                better = best < cur
                if not better.any():
                    break
                d[:, targets] = np.where(better, best, cur)
                pred[:, targets] = np.where(better, pad[np.arange(len(targets))[None, :], k], pred[:, targets])
        del rows
        return d, pred

    def routes(self, pred: np.ndarray, target, max_len: int | None = None) -> np.ndarray:
        """Edges of the best route to ``target`` on every surface, padded with -1 (n_surfaces, L).

        ``target`` is one state index or one per surface. Rows with no route are all -1.
        """
        S = pred.shape[0]
        cur = np.broadcast_to(np.asarray(target, dtype=np.int64), (S,)).copy()
        rows = np.arange(S)
        out = []
        limit = max_len or self.V
        for _ in range(limit):
            e = np.where(cur == self.start, -1, pred[rows, np.maximum(cur, 0)])
            e = np.where(cur < 0, -1, e)
            if not (e >= 0).any():
                break
            out.append(e)
            cur = np.where(e >= 0, self.src[np.maximum(e, 0)], -1)
        if not out:
            return np.full((S, 0), -1, dtype=np.int64)
        back = np.stack(out[::-1], axis=1)  # reversed: start first, but padding at the front
        # move padding (-1) to the end of each row, keep order
        valid = back >= 0
        order = np.argsort(~valid, axis=1, kind="stable")
        return np.take_along_axis(back, order, axis=1)
