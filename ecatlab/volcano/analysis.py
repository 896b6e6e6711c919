"""The volcano analysis: scaling relations (given or fitted) -> synthetic surfaces -> CHE kernel.

:class:`VolcanoAnalysis` builds 1D volcanoes and 2D activity maps here; its selectivity maps come
from :class:`ecatlab.volcano.selectivity.SelectivityMixin`. See :mod:`ecatlab.volcano` for the model.
"""

from __future__ import annotations

import warnings
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
from ecatlab.volcano.lines import _apex_1d, _breakpoints, _optimum_2d
from ecatlab.volcano.results import ActivityMap, Apex, VolcanoCurve, _conditions
from ecatlab.volcano.selectivity import SelectivityMixin
from ecatlab.volcano.space import DescriptorSpace, build_space

__all__ = ["VolcanoAnalysis"]


class VolcanoAnalysis(SelectivityMixin):
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

    @staticmethod
    def _two(descriptors) -> tuple[Descriptor, Descriptor]:
        if isinstance(descriptors, (str, Descriptor)) or len(descriptors) != 2:
            raise ScalingError(f"maps need exactly two descriptors, e.g. ('CO*', 'OH*'); got {descriptors!r}")
        return (Descriptor.parse(descriptors[0]), Descriptor.parse(descriptors[1]))
