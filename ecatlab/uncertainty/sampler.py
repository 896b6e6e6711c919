"""The one seeded sampler of ecatlab's error models.

Samples come in chunks along a leading sample axis, so memory stays bounded whatever the number
of samples: a chunk of ``c`` samples for ``S`` surfaces and ``A`` adsorbates holds one
(c, S, A) float64 array (the standard normals of a Gaussian model, kept with their covariance
factor, or an ensemble's deviations in eV), plus a (c, M) array for the non-reference molecules;
:class:`SampleChunk` maps them linearly (e.g. into step free energies) without forming the
deviations first.

Reproducibility: samples are drawn in fixed blocks of :data:`BLOCK` samples, block ``b`` from
``numpy.random.default_rng(SeedSequence(seed, spawn_key=(b,)))``. The numbers therefore depend on
the seed, the surfaces and the species only, not on the chunk size; the same seed gives the same
numbers.

Gaussian models draw :math:`\\delta = (\\sqrt{1-\\rho_s}\\,z_s + \\sqrt{\\rho_s}\\,z_c) L^T`
with :math:`z_s` independent per surface, :math:`z_c` shared by all surfaces, and
:math:`L L^T = \\Sigma` (from the eigendecomposition, so singular covariances such as perfectly
correlated species are fine). Ensembles use their members (``members="all"``: sample k is
member k) or members drawn with replacement (``members="bootstrap"``).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Iterator, Sequence

import numpy as np

from ecatlab.errors import UncertaintyError
from ecatlab.uncertainty.models import EnsembleErrors, ErrorModel, _Parametric

__all__ = ["BLOCK", "DEFAULT_CHUNK", "SampleChunk", "SamplePlan", "plan", "chunks", "chunk_at", "chunk_starts", "prepare", "covariance_factor"]

#: Samples per independently seeded block.
BLOCK = 10
#: Floating type of the standard-normal draws (single precision draws faster; each draw is then
#: exact in float64, and every product with the covariance factor is float64).
DTYPE = np.float32
#: Default chunk: at most this many (sample, surface, species) values per chunk (~19 MB of float64
#: draws), the memory bound.
DEFAULT_CHUNK_VALUES = 2_400_000
#: Default chunk: at most this many (sample, surface) pairs per chunk, so that one step of one chunk
#: (a row of the propagation's step array, 8 bytes per pair: 320 kB) and a pathway's few rows stay in
#: a core's L2 cache while the kernel makes its passes over them. Measured on a 2-core Xeon with
#: 2 MB of L2 per core (1,000 surfaces, 13 pathways, 2,000 samples): propagate took 1.0 s with 40
#: samples per chunk and 1.2-2.2 s with 100 (per-pathway blocks of 4 MB spill out of L2).
DEFAULT_CHUNK_PAIRS = 40_000
DEFAULT_CHUNK = None


def covariance_factor(cov: np.ndarray) -> np.ndarray:
    """A matrix L with L L^T = cov (eigendecomposition; negative round-off eigenvalues clipped to 0)."""
    cov = np.asarray(cov, dtype=float)
    if cov.size == 0:
        return np.zeros((0, 0))
    if not np.any(cov):
        return np.zeros_like(cov)
    if np.count_nonzero(cov - np.diag(np.diag(cov))) == 0:
        return np.diag(np.sqrt(np.clip(np.diag(cov), 0.0, None)))
    w, v = np.linalg.eigh(cov)
    return v * np.sqrt(np.clip(w, 0.0, None))


@dataclass(frozen=True)
class SampleChunk:
    """One chunk of samples.

    The adsorbate deviations (eV) are held in factored form,
    :math:`\\delta = z F + z_c F_c` (rows of ``own`` are (sample, surface) pairs; ``shared`` is one
    row per sample, common to all surfaces), so that any linear map of them -- the step free
    energies of all pathways, a kept species -- is one matrix product of the draws
    (:meth:`add_linear`) and the (c, S, A) deviations exist only when asked for (:attr:`adsorbates`).
    Ensembles carry their deviations in ``own`` with ``factor`` None.

    Attributes
    ----------
    start : int
        Index of the first sample of the chunk.
    own : ndarray (c, n_surfaces, n_species), float64
        Gaussian models: independent standard normals; ensembles: the members' deviations (eV).
    factor : ndarray (n_species, n_species) or None
        F (eV): deviations = own @ F (+ shared part).
    shared : ndarray (c, n_species) or None
        Standard normals shared by all surfaces (surface correlation > 0).
    shared_factor : ndarray (n_species, n_species) or None
        F_c (eV) of the shared draws.
    molecules : ndarray (c, n_molecules)
        Deviations of the non-reference molecules (eV).
    """

    start: int
    own: np.ndarray
    factor: np.ndarray | None
    shared: np.ndarray | None
    shared_factor: np.ndarray | None
    molecules: np.ndarray

    @property
    def size(self) -> int:
        return int(self.own.shape[0])

    @property
    def adsorbates(self) -> np.ndarray:
        """Deviations of the adsorbates, (c, n_surfaces, n_species), eV (float64)."""
        if self.factor is None:
            return self.own
        c, S, A = self.own.shape
        out = (self.own.reshape(-1, A) @ self.factor).reshape(c, S, A)
        if self.shared is not None:
            out += (self.shared @ self.shared_factor)[:, None, :]
        return out

    def shared_linear(self, matrix: np.ndarray) -> np.ndarray | None:
        """The part of ``deviations @ matrix`` shared by all surfaces, (c, P), or None when there is none."""
        if self.shared is None:
            return None
        return self.shared @ (self.shared_factor @ np.asarray(matrix, dtype=float))

    def add_linear(self, matrix: np.ndarray, out: np.ndarray, shared: bool = True) -> None:
        """Add ``deviations @ matrix`` to ``out``, laid out with the mapped axis first.

        Parameters
        ----------
        matrix : ndarray (n_species, P)
            A linear map of the adsorbate deviations (e.g. species -> step stoichiometry), eV/eV.
        out : ndarray (P, c, n_surfaces), float64, C-contiguous
            Accumulated in place: ``out[p, k, s] += sum_j delta[k, s, j] * matrix[j, p]``.
            A NaN deviation (an ensemble that does not cover a species) makes NaN only the
            outputs whose column of ``matrix`` uses that species.
        shared : bool
            Include the part shared by all surfaces; False when the caller has added
            :meth:`shared_linear` itself (e.g. together with other per-sample terms, in one pass).
        """
        c, S, A = self.own.shape
        P = matrix.shape[1]
        if A == 0 or P == 0:
            return
        m = np.asarray(matrix, dtype=float)
        own = self.own.reshape(-1, A)
        holes = None
        if self.factor is None:
            if np.isnan(own).any():
                holes = np.isnan(own)
                own = np.where(holes, 0.0, own)
            eff = m
        else:
            if not np.any(self.factor) and (self.shared is None or not np.any(self.shared_factor)):
                return  # zero variance: nothing to add, the central values stay exact
            eff = self.factor @ m
        _accumulate_product(own, eff, out.reshape(P, -1))
        if shared and self.shared is not None:
            out += self.shared_linear(m).T[:, :, None]
        if holes is not None:
            hit = (holes.astype(float) @ (m != 0).astype(float)) > 0  # (c*S, P)
            out.reshape(P, -1)[hit.T] = np.nan


def _accumulate_product(x: np.ndarray, m: np.ndarray, out_t: np.ndarray) -> None:
    """out_t += (x @ m).T for x (R, A) C-contiguous, m (A, P), out_t (P, R) C-contiguous.

    One BLAS dgemm with beta = 1 that writes into ``out_t`` in place (no (R, P) temporary); numpy's
    matmul plus an addition when scipy's BLAS wrapper is unavailable."""
    x = np.ascontiguousarray(x, dtype=float)
    try:
        from scipy.linalg.blas import dgemm
    except ImportError:  # pragma: no cover - scipy is a dependency
        out_t += m.T @ x.T
        return
    # column-major view: out_t.T is (R, P) Fortran-ordered, x.T is (A, R) Fortran-ordered
    res = dgemm(1.0, x.T, np.asfortranarray(m), beta=1.0, c=out_t.T, trans_a=1, overwrite_c=1)
    if not np.shares_memory(res, out_t):  # pragma: no cover - the wrapper copied: write back
        out_t[...] = res.T


@dataclass(frozen=True)
class SamplePlan:
    """What the sampler will draw: model, axes, number of samples, seed and chunking."""

    model: ErrorModel
    surfaces: tuple[str, ...]
    species: tuple[str, ...]
    molecules: tuple[str, ...]
    n_samples: int
    seed: int
    chunk_size: int
    members: str = "all"

    @property
    def n_chunks(self) -> int:
        return -(-self.n_samples // self.chunk_size)


def plan(model: ErrorModel, surfaces: Sequence[str], species: Sequence[str], molecules: Sequence[str] = (),
         n_samples: int | None = None, seed: int = 0, chunk_size: int | None = None, members: str = "all") -> SamplePlan:
    """Validate a sampling request and fix its chunking.

    Parameters
    ----------
    model : ErrorModel
    surfaces, species, molecules : sequences of str
        Axes of the deviations (molecules: non-reference molecules that carry errors).
    n_samples : int, optional
        Number of samples; default 1000 for Gaussian models and K (every member once) for ensembles.
    seed : int
        Seed of the random numbers (non-negative integer).
    chunk_size : int, optional
        Samples per chunk, rounded up to a multiple of :data:`BLOCK`; default: at most
        :data:`DEFAULT_CHUNK_VALUES` draws and :data:`DEFAULT_CHUNK_PAIRS` (sample, surface) pairs per chunk.
    members : {"all", "bootstrap"}
        Ensembles only: use each member once in order, or draw ``n_samples`` members with replacement.
    """
    if not isinstance(seed, (int, np.integer)) or isinstance(seed, bool) or seed < 0:
        raise UncertaintyError(f"seed must be a non-negative integer, got {seed!r}")
    if isinstance(model, EnsembleErrors):
        if members not in ("all", "bootstrap"):
            raise UncertaintyError(f"members must be 'all' or 'bootstrap', got {members!r}")
        if members == "all":
            if n_samples is not None and int(n_samples) != model.members:
                raise UncertaintyError(
                    f"the ensemble has {model.members} members; with members='all' n_samples must be {model.members} "
                    "(or None); use members='bootstrap' to draw another number of samples"
                )
            n_samples = model.members
        model.select(surfaces, species)  # raises naming what is missing
    elif isinstance(model, _Parametric):
        model.species_covariance(species)  # validates now: raises naming a missing sigma/slope or a bad matrix
        model.molecule_covariance(molecules)
    else:
        raise UncertaintyError(f"unknown error model {type(model).__name__}; use an ecatlab.uncertainty model")
    n = 1000 if n_samples is None else n_samples
    if not isinstance(n, (int, np.integer)) or isinstance(n, bool) or n < 1:
        raise UncertaintyError(f"n_samples must be a positive integer, got {n_samples!r}")
    per_sample = max(1, len(surfaces) * max(1, len(species)))
    default = min(DEFAULT_CHUNK_VALUES // per_sample, DEFAULT_CHUNK_PAIRS // max(1, len(surfaces)))
    c = chunk_size if chunk_size is not None else max(BLOCK, default)
    if not isinstance(c, (int, np.integer)) or c < 1:
        raise UncertaintyError(f"chunk_size must be a positive integer, got {chunk_size!r}")
    c = int(-(-int(c) // BLOCK) * BLOCK)
    return SamplePlan(model, tuple(surfaces), tuple(species), tuple(molecules), int(n), int(seed), c, members)


def _rng(seed: int, block: int) -> np.random.Generator:
    return np.random.default_rng(np.random.SeedSequence(seed, spawn_key=(block,)))


def chunk_starts(p: SamplePlan) -> range:
    """Index of the first sample of every chunk of a plan."""
    return range(0, p.n_samples, p.chunk_size)


def chunks(p: SamplePlan) -> Iterator[SampleChunk]:
    """Yield the samples of a plan chunk by chunk (see the module docstring for the recipe)."""
    prepared = prepare(p)
    for start in chunk_starts(p):
        yield chunk_at(p, start, prepared)


def prepare(p: SamplePlan) -> tuple:
    """What every chunk of a plan shares (covariance factors, the ensemble's selected members);
    computed once and passed to :func:`chunk_at`."""
    model = p.model
    if isinstance(model, EnsembleErrors):
        return ("ensemble", model.select(p.surfaces, p.species), model.molecule_select(p.molecules))
    A, M = len(p.species), len(p.molecules)
    L = covariance_factor(model.species_covariance(p.species)) if A else np.zeros((0, 0))
    Lm = covariance_factor(model.molecule_covariance(p.molecules)) if M else np.zeros((0, 0))
    rho = float(model.surface_correlation)
    factor = np.sqrt(1.0 - rho) * L.T
    shared_factor = np.sqrt(rho) * L.T if rho > 0.0 else None
    return ("gaussian", factor, shared_factor, Lm)


def chunk_at(p: SamplePlan, start: int, prepared: tuple | None = None) -> SampleChunk:
    """The chunk of a plan that begins at sample ``start`` (one of :func:`chunk_starts`).

    Chunks are independent of each other (each draws its own seeded blocks), so they can be
    drawn in any order or in parallel; ``prepared`` is :func:`prepare` of the plan (computed
    when not given)."""
    prepared = prepare(p) if prepared is None else prepared
    S, A, M = len(p.surfaces), len(p.species), len(p.molecules)
    stop = min(start + p.chunk_size, p.n_samples)
    if prepared[0] == "ensemble":
        _, dev, mdev = prepared
        if p.members == "all":
            idx = np.arange(start, stop)
        else:
            idx = np.concatenate([
                _rng(p.seed, b).integers(0, p.model.members, size=min(BLOCK, p.n_samples - b * BLOCK))
                for b in range(start // BLOCK, -(-stop // BLOCK))
            ])
        return SampleChunk(start, np.asarray(dev[idx], dtype=float), None, None, None, mdev[idx])
    _, factor, shared_factor, Lm = prepared
    own = np.empty((stop - start, S, A))
    shared = np.empty((stop - start, A)) if shared_factor is not None else None
    mol = np.empty((stop - start, M))
    for b in range(start // BLOCK, -(-stop // BLOCK)):
        lo, hi = b * BLOCK, min((b + 1) * BLOCK, p.n_samples)
        rng = _rng(p.seed, b)
        own[lo - start:hi - start] = rng.standard_normal((hi - lo, S, A), dtype=DTYPE)  # exact in float64
        if shared is not None:
            shared[lo - start:hi - start] = rng.standard_normal((hi - lo, A), dtype=DTYPE)
        zm = rng.standard_normal((hi - lo, M))
        mol[lo - start:hi - start] = zm @ Lm.T if M else zm
    return SampleChunk(start, own, factor, shared, shared_factor, mol)
