r"""Error models for adsorption free energies: ensembles and parametric (Gaussian) models.

Every model describes the *deviation* :math:`\delta` of the free energies from the values in the
energy table (eV), so one sample of the analysis uses

.. math:: G^{(k)}_{s,j} = G_{s,j} + \delta^{(k)}_{s,j}

for surface *s*, adsorbate *j* and sample *k*, and (optionally) non-reference molecules
:math:`G^{(k)}_m = G_m + \delta^{(k)}_m`. Deviations are on the energy table's own scale: free
energies *relative to the reference molecules* (default H2(g), H2O(l), CO2(g), N2(g)). The
reference molecules are zero by definition in every sample; an ensemble that carries member
energies of the reference molecules has them folded into the adsorbates, member by member, with
the reference-balance coefficients (:func:`ecatlab.ingest.ensembles.ensemble_from_structures`):

.. math:: \delta^{(k)}(X^*) = \delta^{(k)}_\mathrm{tot}(X^*) - \sum_i n_i\,\delta^{(k)}(\mathrm{ref}_i).

Models
------
* :class:`EnsembleErrors` -- K members, each one functional applied everywhere (BEEF-vdW style:
  Wellendorff et al., Phys. Rev. B 85, 235149 (2012); Medford et al., J. Catal. 309, 397 (2014)).
  Correlations across species and surfaces are whatever the members carry.
* :class:`GaussianErrors` -- per-species standard deviations; correlation ``rho`` between species
  bound through the same atom (or any grouping the user gives).
* :class:`DescriptorErrors` -- a shared descriptor error propagated through slopes plus an
  independent residual per species: :math:`\delta_j = s_j\,\delta_D + r_j`; built from fitted
  scaling relations, it makes the scaling-relation residuals an error source.
* :class:`CovarianceErrors` -- a full species covariance matrix (eV^2) the user gives.

The parametric models share ``surface_correlation`` :math:`\rho_s`: the covariance of species *i*
on surface *s* and species *j* on surface *t* is :math:`\Sigma_{ij}[\delta_{st} + \rho_s(1-\delta_{st})]`
(a systematic error of the method shared by all surfaces when :math:`\rho_s > 0`). This module
holds numbers only; drawing samples is :mod:`ecatlab.uncertainty.sampler`.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from typing import Mapping, Sequence

import numpy as np

from ecatlab.errors import UncertaintyError
from ecatlab.notation import Species

__all__ = [
    "ErrorModel",
    "EnsembleErrors",
    "GaussianErrors",
    "DescriptorErrors",
    "CovarianceErrors",
    "binding_atom",
]

#: Relative tolerance for a covariance matrix to count as positive semidefinite.
PSD_TOLERANCE = 1e-10


def binding_atom(species: str) -> str:
    """The atom through which an adsorbate is taken to bind: the first element of its formula.

    ``OOH*`` -> O, ``COOH*`` -> C, ``OCHO*`` -> O, ``NNH*`` -> N, ``H*`` -> H. This follows the
    way adsorbates are conventionally written, surface-bound atom first (common practice, no
    source); give ``groups=`` to :class:`GaussianErrors` where it does not hold.
    """
    sp = Species.parse(species)
    match = re.match(r"\(?([A-Z][a-z]?)", sp.formula)
    if not match:
        raise UncertaintyError(f"cannot tell the binding atom of {species!r}; give groups={{'{species}': 'O', ...}}")
    return match.group(1)


def _keys(species: Sequence[str]) -> list[str]:
    return [Species.parse(s).key for s in species]


def _check_unit_interval(name: str, value: float, low: float = 0.0) -> float:
    v = float(value)
    if not np.isfinite(v) or v < low or v > 1.0:
        raise UncertaintyError(f"{name} must lie in [{low:g}, 1], got {value!r}")
    return v


def _sigma_lookup(sigma, default, species: list[str], what: str) -> np.ndarray:
    if isinstance(sigma, Mapping):
        table = {Species.parse(k).key: float(v) for k, v in sigma.items()}
        out = []
        for s in species:
            if s in table:
                out.append(table[s])
            elif default is not None:
                out.append(float(default))
            else:
                raise UncertaintyError(
                    f"{what}: no standard deviation for {s}; add it to sigma= or give default_sigma= (eV)"
                )
        values = np.array(out, dtype=float)
    else:
        values = np.full(len(species), float(sigma))
    if not np.all(np.isfinite(values)) or np.any(values < 0):
        raise UncertaintyError(f"{what}: standard deviations must be finite and >= 0 eV, got {values.tolist()}")
    return values


def _check_psd(cov: np.ndarray, what: str, names: Sequence[str]) -> np.ndarray:
    cov = np.asarray(cov, dtype=float)
    if cov.ndim != 2 or cov.shape[0] != cov.shape[1]:
        raise UncertaintyError(f"{what}: the covariance must be a square matrix, got shape {cov.shape}")
    if not np.all(np.isfinite(cov)):
        raise UncertaintyError(f"{what}: the covariance has non-finite entries")
    if not np.allclose(cov, cov.T, rtol=1e-10, atol=1e-14):
        raise UncertaintyError(f"{what}: the covariance must be symmetric")
    if cov.size:
        w = np.linalg.eigvalsh(cov)
        scale = max(float(np.max(np.abs(w))), 1e-300)
        if w.min() < -PSD_TOLERANCE * scale:
            raise UncertaintyError(
                f"{what}: the covariance of {list(names)} is not positive semidefinite (smallest eigenvalue "
                f"{w.min():.3g} eV^2); check the correlations"
            )
    return cov


class ErrorModel:
    """Base class: a source of deviations (eV) for adsorbates and non-reference molecules."""

    #: human-readable kind, used in table attributes
    kind: str = "error model"

    def describe(self) -> str:  # pragma: no cover - overridden
        return self.kind


@dataclass(frozen=True)
class _Parametric(ErrorModel):
    """Common part of the Gaussian models: a species covariance and a surface correlation."""

    def species_covariance(self, species: Sequence[str]) -> np.ndarray:
        """Covariance (eV^2) of the deviations of ``species`` on one surface, shape (n, n)."""
        raise NotImplementedError

    def molecule_covariance(self, molecules: Sequence[str]) -> np.ndarray:
        """Covariance (eV^2) of the deviations of non-reference molecules, shape (m, m)."""
        sig = _sigma_lookup(dict(self.molecule_sigma), 0.0, _keys(molecules), "molecule_sigma")
        return np.diag(sig**2)

    def molecules_with_errors(self) -> tuple[str, ...]:
        return tuple(Species.parse(k).key for k, v in dict(self.molecule_sigma).items() if float(v) != 0.0)

    def _check_common(self) -> None:
        _check_unit_interval("surface_correlation", self.surface_correlation)
        clean = {}
        for k, v in dict(self.molecule_sigma).items():
            sp = Species.parse(k)
            if not sp.is_molecule:
                raise UncertaintyError(f"molecule_sigma: {k!r} is not a molecule; adsorbates go into sigma=")
            if not np.isfinite(float(v)) or float(v) < 0:
                raise UncertaintyError(f"molecule_sigma: the standard deviation of {k} must be >= 0 eV, got {v!r}")
            clean[sp.key] = float(v)
        object.__setattr__(self, "molecule_sigma", clean)


@dataclass(frozen=True)
class GaussianErrors(_Parametric):
    r"""Independent or group-correlated Gaussian errors per species.

    Parameters
    ----------
    sigma : float or mapping of str to float
        Standard deviation per adsorbate (eV); one float applies to every adsorbate.
    correlation : float
        Correlation coefficient :math:`\rho \in [0, 1]` between two different adsorbates of the
        same group (same binding atom by default); 0 between groups.
    groups : {"binding_atom", "none"} or mapping of str to str
        How adsorbates are grouped: by :func:`binding_atom`, no grouping (all independent), or
        an explicit species -> group mapping (species not named form their own group).
    default_sigma : float, optional
        eV, for adsorbates that ``sigma`` (a mapping) does not name; ``None`` makes them an error.
    surface_correlation : float
        :math:`\rho_s \in [0, 1]`: correlation of the same error between different surfaces.
    molecule_sigma : mapping of str to float
        Standard deviations (eV) of non-reference molecules (e.g. ``{"O2(g)": 0.1}``); each
        molecule is one value shared by every surface.

    Notes
    -----
    :math:`\Sigma_{ij} = \sigma_i\sigma_j\,[\delta_{ij} + \rho\,(1-\delta_{ij})\,[g_i = g_j]]`;
    positive semidefinite for :math:`0 \le \rho \le 1` (equicorrelation blocks).
    """

    sigma: float | Mapping[str, float] = 0.1
    correlation: float = 0.0
    groups: str | Mapping[str, str] = "binding_atom"
    default_sigma: float | None = None
    surface_correlation: float = 0.0
    molecule_sigma: Mapping[str, float] = field(default_factory=dict)
    kind: str = field(default="Gaussian per-species errors", init=False, repr=False)

    def __post_init__(self) -> None:
        _check_unit_interval("correlation", self.correlation)
        if isinstance(self.groups, str) and self.groups not in ("binding_atom", "none"):
            raise UncertaintyError(f"groups must be 'binding_atom', 'none' or a mapping, got {self.groups!r}")
        if isinstance(self.sigma, Mapping):
            object.__setattr__(self, "sigma", {Species.parse(k).key: float(v) for k, v in self.sigma.items()})
        self._check_common()

    def group_of(self, species: str) -> str:
        if isinstance(self.groups, Mapping):
            table = {Species.parse(k).key: str(v) for k, v in self.groups.items()}
            return table.get(species, f"<own:{species}>")
        if self.groups == "none":
            return f"<own:{species}>"
        return binding_atom(species)

    def species_covariance(self, species: Sequence[str]) -> np.ndarray:
        keys = _keys(species)
        sig = _sigma_lookup(self.sigma, self.default_sigma, keys, "GaussianErrors")
        g = np.array([self.group_of(k) for k in keys], dtype=object)
        same = (g[:, None] == g[None, :]).astype(float)
        corr = np.where(np.eye(len(keys), dtype=bool), 1.0, self.correlation * same)
        return _check_psd(sig[:, None] * corr * sig[None, :], "GaussianErrors", keys)

    def describe(self) -> str:
        sig = self.sigma if not isinstance(self.sigma, Mapping) else "per species " + ", ".join(f"{k} {v:g}" for k, v in self.sigma.items())
        grp = self.groups if isinstance(self.groups, str) else "user groups"
        return (
            f"Gaussian errors (sigma {sig} eV; correlation {self.correlation:g} within {grp}; "
            f"surface correlation {self.surface_correlation:g})"
        )


@dataclass(frozen=True)
class DescriptorErrors(_Parametric):
    r"""A shared descriptor error plus an independent residual per species.

    :math:`\delta_j = s_j\,\delta_D + r_j` with :math:`\delta_D \sim N(0, \sigma_D^2)` and
    :math:`r_j \sim N(0, \sigma_{r,j}^2)` independent.

    Parameters
    ----------
    descriptor : str
        Descriptor adsorbate (e.g. ``"OH*"``); its own slope is 1 and residual 0.
    descriptor_sigma : float
        :math:`\sigma_D`, eV.
    slopes : mapping of str to float
        :math:`s_j` (dimensionless) of the other species against the descriptor.
    residual_sigma : float or mapping of str to float
        :math:`\sigma_{r,j}` (eV); one float for every non-descriptor species.
    default_slope : float, optional
        For species not in ``slopes``; ``None`` makes them an error.
    surface_correlation, molecule_sigma
        As in :class:`GaussianErrors`.

    Notes
    -----
    :math:`\Sigma_{ij} = s_i s_j \sigma_D^2 + \delta_{ij}\sigma_{r,i}^2`. Build it from fitted
    scaling relations with :meth:`from_relations`: the slopes of the fit and each relation's
    residual standard error as :math:`\sigma_{r,j}` (the spread of the computed energies around
    the line). With ``descriptor_sigma=0`` only the scaling-relation residuals remain.
    """

    descriptor: str = "OH*"
    descriptor_sigma: float = 0.1
    slopes: Mapping[str, float] = field(default_factory=dict)
    residual_sigma: float | Mapping[str, float] = 0.0
    default_slope: float | None = None
    surface_correlation: float = 0.0
    molecule_sigma: Mapping[str, float] = field(default_factory=dict)
    source: str = "given"
    kind: str = field(default="descriptor error + residuals", init=False, repr=False)

    def __post_init__(self) -> None:
        object.__setattr__(self, "descriptor", Species.parse(self.descriptor).key)
        if not np.isfinite(float(self.descriptor_sigma)) or float(self.descriptor_sigma) < 0:
            raise UncertaintyError(f"descriptor_sigma must be >= 0 eV, got {self.descriptor_sigma!r}")
        object.__setattr__(self, "slopes", {Species.parse(k).key: float(v) for k, v in dict(self.slopes).items()})
        if isinstance(self.residual_sigma, Mapping):
            object.__setattr__(self, "residual_sigma", {Species.parse(k).key: float(v) for k, v in self.residual_sigma.items()})
        self._check_common()

    @classmethod
    def from_relations(cls, relations, descriptor_sigma: float = 0.0, surface_correlation: float = 0.0,
                       molecule_sigma: Mapping[str, float] | None = None) -> "DescriptorErrors":
        """Slopes and residual errors from one-descriptor :class:`~ecatlab.scaling.ScalingRelation` objects.

        Each relation's ``residual_std_error`` (eV; the fit's standard error of the residuals) is
        the residual sigma of its target. Relations given without a fit (no residual statistics)
        raise: they carry no residual error to propagate.
        """
        relations = list(relations)
        if not relations:
            raise UncertaintyError("from_relations needs at least one scaling relation")
        descriptors = {r.descriptors for r in relations}
        if len(descriptors) != 1 or len(next(iter(descriptors))) != 1:
            raise UncertaintyError(
                f"from_relations needs relations against one and the same single descriptor; got {sorted(descriptors)}"
            )
        (descriptor,) = next(iter(descriptors))
        slopes, resid = {}, {}
        for r in relations:
            if r.residual_std_error is None:
                raise UncertaintyError(
                    f"scaling relation for {r.target} has no residual statistics (given, not fitted); fit it with "
                    "ecatlab.fit_scaling or give residual_sigma= yourself"
                )
            slopes[r.target] = float(r.slopes[0])
            resid[r.target] = float(r.residual_std_error)
        return cls(descriptor, float(descriptor_sigma), slopes, resid, None, surface_correlation, dict(molecule_sigma or {}),
                   source="fitted scaling relations: " + ", ".join(f"{r.target} vs {descriptor}" for r in relations))

    def species_covariance(self, species: Sequence[str]) -> np.ndarray:
        keys = _keys(species)
        s, r = [], []
        for k in keys:
            if k == self.descriptor:
                s.append(1.0)
                r.append(0.0)
                continue
            if k in self.slopes:
                s.append(self.slopes[k])
            elif self.default_slope is not None:
                s.append(float(self.default_slope))
            else:
                raise UncertaintyError(
                    f"DescriptorErrors: no slope for {k} against {self.descriptor}; add it to slopes= or give default_slope="
                )
            r.append(float(_sigma_lookup(self.residual_sigma, 0.0, [k], "residual_sigma")[0]))
        s, r = np.array(s), np.array(r)
        cov = np.outer(s, s) * float(self.descriptor_sigma) ** 2 + np.diag(r**2)
        return _check_psd(cov, "DescriptorErrors", keys)

    def describe(self) -> str:
        return (
            f"descriptor error on {self.descriptor} (sigma {float(self.descriptor_sigma):g} eV) through slopes, plus residuals "
            f"({self.source}); surface correlation {self.surface_correlation:g}"
        )


@dataclass(frozen=True)
class CovarianceErrors(_Parametric):
    """A full covariance matrix of the species deviations (eV^2), given by the user.

    Parameters
    ----------
    species : sequence of str
        Row/column order of ``covariance``.
    covariance : array_like (n, n)
        Symmetric positive semidefinite, eV^2. A pandas DataFrame with species labels on both
        axes may be given through :meth:`from_frame`.
    surface_correlation, molecule_sigma
        As in :class:`GaussianErrors`.
    """

    species: tuple[str, ...] = ()
    covariance: np.ndarray = field(default_factory=lambda: np.zeros((0, 0)))
    surface_correlation: float = 0.0
    molecule_sigma: Mapping[str, float] = field(default_factory=dict)
    kind: str = field(default="user covariance", init=False, repr=False)

    def __post_init__(self) -> None:
        keys = tuple(_keys(self.species))
        if len(set(keys)) != len(keys):
            raise UncertaintyError(f"CovarianceErrors: species listed twice in {list(keys)}")
        object.__setattr__(self, "species", keys)
        cov = _check_psd(np.array(self.covariance, dtype=float), "CovarianceErrors", keys)
        if cov.shape[0] != len(keys):
            raise UncertaintyError(f"CovarianceErrors: {len(keys)} species but a {cov.shape[0]}x{cov.shape[0]} covariance")
        cov.setflags(write=False)
        object.__setattr__(self, "covariance", cov)
        self._check_common()

    @classmethod
    def from_frame(cls, frame, surface_correlation: float = 0.0, molecule_sigma=None) -> "CovarianceErrors":
        """From a square DataFrame (index and columns the same species, eV^2)."""
        if list(frame.index) != list(frame.columns):
            raise UncertaintyError("covariance frame: index and columns must list the same species in the same order")
        return cls(tuple(map(str, frame.index)), frame.to_numpy(dtype=float), surface_correlation, dict(molecule_sigma or {}))

    def species_covariance(self, species: Sequence[str]) -> np.ndarray:
        keys = _keys(species)
        pos = {k: i for i, k in enumerate(self.species)}
        missing = [k for k in keys if k not in pos]
        if missing:
            raise UncertaintyError(f"CovarianceErrors: the covariance does not cover {missing}; add rows and columns for them")
        idx = np.array([pos[k] for k in keys], dtype=int)
        return self.covariance[np.ix_(idx, idx)].copy()

    def describe(self) -> str:
        return f"user covariance of {len(self.species)} species; surface correlation {self.surface_correlation:g}"


@dataclass(frozen=True)
class EnsembleErrors(ErrorModel):
    """An ensemble of K members (e.g. BEEF-vdW functionals), each one consistent set of energies.

    Parameters
    ----------
    deviations : ndarray (K, n_surfaces, n_species)
        Deviation of member k from the table value (eV), already relative to the reference
        molecules of the same member (see :func:`ecatlab.ingest.ensembles.ensemble_from_structures`).
        NaN marks a (surface, species) the ensemble does not cover.
    surfaces, species : sequence of str
        Axis labels.
    molecule_deviations : ndarray (K, n_molecules), optional
        Member deviations of non-reference molecules (eV), e.g. a DFT CO(g).
    molecules : sequence of str
    source : str
        Where the ensemble comes from (file names), for table attributes.
    notes : tuple of str
        What was done while building it (centering, reference folding).

    Notes
    -----
    Member k is one functional everywhere, so the correlations between species, surfaces and
    molecules are the ensemble's own (Medford et al., J. Catal. 309, 397 (2014)). The sampler
    uses the members themselves (``members="all"``) or draws members with replacement.
    """

    deviations: np.ndarray
    surfaces: tuple[str, ...]
    species: tuple[str, ...]
    molecule_deviations: np.ndarray | None = None
    molecules: tuple[str, ...] = ()
    source: str = "<ensemble>"
    notes: tuple[str, ...] = ()
    kind: str = field(default="ensemble", init=False, repr=False)

    def __post_init__(self) -> None:
        dev = np.array(self.deviations, dtype=float)
        if dev.ndim != 3:
            raise UncertaintyError(f"ensemble {self.source}: deviations must have shape (members, surfaces, species), got {dev.shape}")
        surfaces = tuple(map(str, self.surfaces))
        species = tuple(_keys(self.species))
        if dev.shape[1:] != (len(surfaces), len(species)):
            raise UncertaintyError(
                f"ensemble {self.source}: deviations of shape {dev.shape} do not match {len(surfaces)} surfaces x {len(species)} species"
            )
        if dev.shape[0] < 2:
            raise UncertaintyError(f"ensemble {self.source}: needs at least 2 members, got {dev.shape[0]}")
        if np.isinf(dev).any():
            raise UncertaintyError(f"ensemble {self.source}: infinite deviations")
        dev.setflags(write=False)
        object.__setattr__(self, "deviations", dev)
        object.__setattr__(self, "surfaces", surfaces)
        object.__setattr__(self, "species", species)
        mols = tuple(Species.parse(m).key for m in self.molecules)
        if self.molecule_deviations is None:
            mdev = np.zeros((dev.shape[0], len(mols)))
        else:
            mdev = np.array(self.molecule_deviations, dtype=float).reshape(dev.shape[0], -1)
        if mdev.shape != (dev.shape[0], len(mols)):
            raise UncertaintyError(f"ensemble {self.source}: molecule deviations of shape {mdev.shape} for {len(mols)} molecules and {dev.shape[0]} members")
        for m in mols:
            if not Species.parse(m).is_molecule:
                raise UncertaintyError(f"ensemble {self.source}: {m!r} listed as a molecule is not one")
        mdev.setflags(write=False)
        object.__setattr__(self, "molecule_deviations", mdev)
        object.__setattr__(self, "molecules", mols)

    @property
    def members(self) -> int:
        """Number of ensemble members K."""
        return int(self.deviations.shape[0])

    def select(self, surfaces: Sequence[str], species: Sequence[str]) -> np.ndarray:
        """Deviations for the requested surfaces and species, shape (K, n_surfaces, n_species), eV.

        Raises :class:`~ecatlab.errors.UncertaintyError` naming what the ensemble lacks.
        """
        spos = {s: i for i, s in enumerate(self.surfaces)}
        jpos = {s: i for i, s in enumerate(self.species)}
        keys = _keys(species)
        miss_s = [s for s in surfaces if s not in spos]
        miss_j = [k for k in keys if k not in jpos]
        if miss_s or miss_j:
            raise UncertaintyError(
                f"ensemble {self.source} lacks surfaces {miss_s} / species {miss_j}; add their member energies or "
                "restrict the analysis (surfaces=, pathways=)"
            )
        r = np.array([spos[s] for s in surfaces], dtype=int)
        c = np.array([jpos[k] for k in keys], dtype=int)
        return self.deviations[:, r[:, None], c[None, :]]

    def molecule_select(self, molecules: Sequence[str]) -> np.ndarray:
        """Member deviations (K, n) of the molecules (eV); molecules not in the ensemble get 0."""
        pos = {m: i for i, m in enumerate(self.molecules)}
        out = np.zeros((self.members, len(molecules)))
        for j, m in enumerate(molecules):
            if m in pos:
                out[:, j] = self.molecule_deviations[:, pos[m]]
        return out

    def molecules_with_errors(self) -> tuple[str, ...]:
        return tuple(m for j, m in enumerate(self.molecules) if np.any(self.molecule_deviations[:, j] != 0))

    def describe(self) -> str:
        return f"ensemble of {self.members} members from {self.source}"
