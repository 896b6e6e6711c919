r"""Energies for adsorbates the table lacks, estimated from the computed ones.

Two linear models, both fitted by least squares on every (surface, adsorbate) value of the table
whose adsorbate has a structure (:mod:`ecatlab.network.graphs`):

``"additivity"`` (group additivity, Benson-type, with surface-specific surface groups)
    .. math:: G(X^*, s) = \sum_g n_g(X)\, c_g + \sum_{b \in \mathrm{bonds\ to\ }*} \theta_{s,\,A_b,\,o_b}

    :math:`n_g` counts the intramolecular groups (X-H bonds per element, heavy-atom bonds per
    element pair and bond order), :math:`c_g` are surface independent; :math:`\theta_{s,A,o}` is
    the value of a surface bond of atom A with order o (0 = dative, d = di-sigma) on surface s.

``"scaling"`` (scaling with the binding atom; Abild-Pedersen et al., Phys. Rev. Lett. 99, 016105 (2007))
    .. math:: G(X^*, s) = \sum_b \gamma_b\, G(A_b^*, s) + \sum_g n_g(X)\, c_g + \sum_b \xi_{A_b,\,o_b},
              \qquad \gamma_b = o_b / v(A_b)

    with :math:`G(A^*, s)` the table value of the bare atom (C*, N*, O*, S*) on the same surface
    and :math:`v` its valence; only surface-independent parameters are fitted.

The error estimate of every estimated value is the leave-one-adsorbate-out root-mean-square error
of the model on that surface (eV): each computed adsorbate in turn is left out, the model refitted
and the adsorbate predicted. It is reported with every estimate (``estimate_error`` in the route
tables) and is what the uncertainty analysis should propagate. Estimates are a screening aid, not
a substitute for computing the species.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Sequence

import numpy as np
import pandas as pd

from ecatlab.energies import EnergyTable
from ecatlab.errors import EcatlabError, NotationError
from ecatlab.network.graphs import Skeleton, parse_name

__all__ = ["EnergyEstimator", "features", "ESTIMATE_METHODS"]

ESTIMATE_METHODS = ("additivity", "scaling")
_ATOMS = {"C": "C*", "N": "N*", "O": "O*", "S": "S*"}
_RIDGE = 1e-6  # eV^-2 scale: keeps under-determined groups at small values (min-norm like)


def features(sk: Skeleton) -> tuple[dict[str, float], list[tuple[str, int]]]:
    """Intramolecular group counts and surface bonds ``[(atom, order)]`` of the adsorbed structure.

    Order 0 is a dative bond; a di-sigma pair (opened multiple bond) gives two bonds of order 1
    marked ``"d"`` in the group name.
    """
    orders, bind = sk.surface_bonds()
    groups: dict[str, float] = {}
    for a, h in zip(sk.atoms, sk.hydrogens):
        if h:
            groups[f"{a}-H"] = groups.get(f"{a}-H", 0.0) + h
    for (i, j), o in orders.items():
        pair = "".join(sorted((sk.atoms[i], sk.atoms[j])))
        g = f"{pair}{o}"
        groups[g] = groups.get(g, 0.0) + 1.0
    closed = sk.closed_shell
    surf = []
    for i, o in sorted(bind.items()):
        if closed and o == 1 and len(bind) == 2:
            surf.append((sk.atoms[i] + "d", 1))
        else:
            surf.append((sk.atoms[i], int(o)))
    return groups, surf


@dataclass(frozen=True)
class _Design:
    groups: tuple[str, ...]
    surface_groups: tuple[tuple[str, int], ...]


class EnergyEstimator:
    """Fit one of :data:`ESTIMATE_METHODS` on a table and estimate adsorbates it lacks.

    Parameters
    ----------
    table : EnergyTable
        Computed adsorption free energies (eV).
    method : {"additivity", "scaling"}
    structures : mapping of str to Skeleton, optional
        Structures of table species whose names the condensed reading does not place.
    """

    def __init__(self, table: EnergyTable, method: str = "additivity", structures=None):
        if method not in ESTIMATE_METHODS:
            raise EcatlabError(f"estimates: unknown method {method!r}; use one of {', '.join(ESTIMATE_METHODS)}")
        self.table = table
        self.method = method
        self.surfaces = list(table.surfaces)
        names, sks = [], []
        for name in table.species:
            try:
                sk = (structures or {}).get(name) or parse_name(name)
            except NotationError:
                continue
            if not sk.atoms:
                continue
            names.append(name)
            sks.append(sk)
        self.names = tuple(names)
        self._sks = tuple(sks)
        self.values = table.values(self.surfaces, names)  # (S, k) eV
        feats = [features(sk) for sk in sks]
        groups = sorted({g for f, _ in feats for g in f})
        surf = sorted({b for _, s in feats for b in s})
        self.design = _Design(tuple(groups), tuple(surf))
        self._feats = feats
        self._fit_all()

    # -- model ----------------------------------------------------------------------------------
    def _rows(self, feats, surface_idx: np.ndarray):
        """Design rows for (surface, species) pairs and the known offset (scaling: gamma * G(A*))."""
        G, B = self.design.groups, self.design.surface_groups
        S = len(self.surfaces)
        gi = {g: k for k, g in enumerate(G)}
        bi = {b: k for k, b in enumerate(B)}
        k = len(feats)
        intr = np.zeros((k, len(G)))
        surf = np.zeros((k, len(B)))
        unknown = np.zeros(k, dtype=bool)
        for r, (f, s) in enumerate(feats):
            for g, n in f.items():
                if g in gi:
                    intr[r, gi[g]] += n
                else:
                    unknown[r] = True
            for b in s:
                if b in bi:
                    surf[r, bi[b]] += 1.0
                else:
                    unknown[r] = True
        offset = np.zeros((S, k))
        if self.method == "scaling":
            atom_cols = {a: (self.table.values(self.surfaces, [ads])[:, 0] if ads in self.table.species else None) for a, ads in _ATOMS.items()}
            for r, (_, s) in enumerate(feats):
                for atom, order in s:
                    el = atom.rstrip("d")
                    col = atom_cols.get(el)
                    if col is None:
                        unknown[r] = True
                        continue
                    offset[:, r] += (order / {"C": 4, "N": 3, "O": 2, "S": 2}[el]) * col
        return intr, surf, offset, unknown

    def _solve(self, keep: np.ndarray):
        """Least squares on the species in ``keep`` (bool over self.names); returns parameters.

        Ridge-regularised normal equations; for "additivity" the per-surface parameters are
        eliminated surface by surface (Schur complement), so the cost grows linearly with surfaces.
        """
        S = len(self.surfaces)
        intr, surf, offset, _ = self._rows(self._feats, np.arange(S))
        y = self.values - offset  # (S, k)
        w = (np.isfinite(y) & keep[None, :]).astype(float)
        y = np.where(w > 0, y, 0.0)
        nG, nB = intr.shape[1], surf.shape[1]
        if self.method == "scaling":
            x = np.concatenate([intr, surf], axis=1)  # (k, nG + nB)
            wr = w.sum(axis=0)
            lhs = (x.T * wr) @ x + _RIDGE * np.eye(x.shape[1])
            rhs = x.T @ (w * y).sum(axis=0)
            return np.linalg.solve(lhs, rhs)
        II = np.einsum("sr,rg,rh->gh", w, intr, intr)
        M = np.einsum("sr,rb,rc->sbc", w, surf, surf) + _RIDGE * np.eye(nB)[None]
        C = np.einsum("sr,rg,rb->sgb", w, intr, surf)
        Iy = np.einsum("sr,rg,sr->g", w, intr, y)
        By = np.einsum("sr,rb,sr->sb", w, surf, y)
        Minv_Ct = np.linalg.solve(M, np.transpose(C, (0, 2, 1)))  # (S, nB, nG)
        Minv_By = np.linalg.solve(M, By[..., None])[..., 0]  # (S, nB)
        lhs = II + _RIDGE * np.eye(nG) - np.einsum("sgb,sbh->gh", C, Minv_Ct)
        rhs = Iy - np.einsum("sgb,sb->g", C, Minv_By)
        c = np.linalg.solve(lhs, rhs)
        theta = Minv_By - np.einsum("sbg,g->sb", Minv_Ct, c)
        return np.concatenate([c, theta.ravel()])

    def _predict(self, params, feats, allow_unknown: bool = False, keep: np.ndarray | None = None) -> np.ndarray:
        S = len(self.surfaces)
        intr, surf, offset, unknown = self._rows(feats, np.arange(S))
        # identifiable only if the species' group vector lies in the span of the fitted species' vectors
        ti, ts, _, _ = self._rows(self._feats, np.arange(S))
        k = np.ones(len(self._feats), dtype=bool) if keep is None else keep
        X = np.concatenate([ti[k], ts[k]], axis=1)
        x = np.concatenate([intr, surf], axis=1)
        if len(x):
            resid = x - (x @ np.linalg.pinv(X)) @ X
            unknown = unknown | (np.abs(resid).max(axis=1) > 1e-8)
        nG, nB = intr.shape[1], surf.shape[1]
        base = intr @ params[:nG]
        if self.method == "additivity":
            theta = params[nG:].reshape(S, nB)
            out = base[None, :] + theta @ surf.T
        else:
            out = base[None, :] + (surf @ params[nG:])[None, :]
        out = out + offset
        if not allow_unknown:
            out[:, unknown] = np.nan
        return out

    def _fit_all(self) -> None:
        k = len(self.names)
        if k < 2:
            raise EcatlabError("estimates need at least two computed adsorbates with structures in the table")
        self.params = self._solve(np.ones(k, dtype=bool))
        loo = np.full_like(self.values, np.nan)
        for r in range(k):
            keep = np.ones(k, dtype=bool)
            keep[r] = False
            p = self._solve(keep)
            loo[:, r] = self._predict(p, [self._feats[r]], keep=keep)[:, 0]
        #: leave-one-adsorbate-out predictions of every computed value, (n_surfaces, n_species), eV
        self.loo_values = loo
        res = loo - self.values
        with np.errstate(invalid="ignore"):
            #: per-surface leave-one-out RMSE (eV): the error estimate of every estimate on that surface
            self.error = np.sqrt(np.nanmean(res ** 2, axis=1))

    # -- public ---------------------------------------------------------------------------------
    def estimate(self, skeletons: Sequence[Skeleton], surfaces: Sequence[str] | None = None, names: Sequence[str] | None = None):
        """Estimated G (eV) and error (eV) of adsorbates, shape (n_surfaces, n_species) each.

        NaN where the structure has a group the table never shows (e.g. a C-C bond from C1 data
        only) -- such species stay missing rather than guessed.
        """
        feats = [features(sk) for sk in skeletons]
        val = self._predict(self.params, feats)
        err = np.broadcast_to(self.error[:, None], val.shape).copy()
        if surfaces is not None:
            idx = [self.surfaces.index(s) for s in surfaces]
            val, err = val[idx], err[idx]
        err[np.isnan(val)] = np.nan
        return val, err

    def leave_one_out(self) -> pd.DataFrame:
        """Leave-one-adsorbate-out check: table value, prediction without it, residual (eV), long form."""
        S, k = self.values.shape
        out = pd.DataFrame({
            "surface": np.repeat(np.array(self.surfaces, dtype=object), k),
            "species": np.tile(np.array(self.names, dtype=object), S),
            "G": self.values.ravel(),
            "G_loo": self.loo_values.ravel(),
        })
        out["residual"] = out["G_loo"] - out["G"]
        out.attrs.update({"quantity": f"leave-one-out check of the {self.method} estimates", "units": {"G": "eV", "G_loo": "eV", "residual": "eV"},
                          "energy_source": self.table.source})
        return out

    def __repr__(self) -> str:
        return (f"EnergyEstimator({self.method}: {len(self.names)} computed adsorbates, {len(self.design.groups)} groups, "
                f"leave-one-out RMSE {np.nanmean(self.error):.3f} eV)")
