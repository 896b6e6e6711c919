"""The one seeded sampler of ecatlab's error models.

Samples come in chunks along a leading sample axis, so memory stays bounded whatever the number
of samples: a chunk of ``c`` samples for ``S`` surfaces and ``A`` adsorbates is one
(c, S, A) float array of deviations in eV, plus a (c, M) array for the non-reference molecules.

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

__all__ = ["BLOCK", "DEFAULT_CHUNK", "SampleChunk", "SamplePlan", "plan", "chunks", "covariance_factor"]

#: Samples per independently seeded block.
BLOCK = 10
#: Floating type of the Gaussian draws and deviations (single precision: about 1e-7 relative, far
#: below any energy error it models; halves memory traffic). Central values stay float64.
DTYPE = np.float32
#: Default chunk: the number of samples per chunk is chosen so a chunk holds about this many
#: (sample, surface, species) values (~10 MB of float32, small enough to stay in cache-friendly sizes).
DEFAULT_CHUNK_VALUES = 2_400_000
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

    Attributes
    ----------
    start : int
        Index of the first sample of the chunk.
    adsorbates : ndarray (c, n_surfaces, n_species)
        Deviations (eV).
    molecules : ndarray (c, n_molecules)
        Deviations of the non-reference molecules (eV).
    """

    start: int
    adsorbates: np.ndarray
    molecules: np.ndarray

    @property
    def size(self) -> int:
        return int(self.adsorbates.shape[0])


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
        Samples per chunk, rounded up to a multiple of :data:`BLOCK`; default about 8e6 values per chunk.
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
    c = chunk_size if chunk_size is not None else max(BLOCK, DEFAULT_CHUNK_VALUES // per_sample)
    if not isinstance(c, (int, np.integer)) or c < 1:
        raise UncertaintyError(f"chunk_size must be a positive integer, got {chunk_size!r}")
    c = int(-(-int(c) // BLOCK) * BLOCK)
    return SamplePlan(model, tuple(surfaces), tuple(species), tuple(molecules), int(n), int(seed), c, members)


def _rng(seed: int, block: int) -> np.random.Generator:
    return np.random.default_rng(np.random.SeedSequence(seed, spawn_key=(block,)))


def chunks(p: SamplePlan) -> Iterator[SampleChunk]:
    """Yield the samples of a plan chunk by chunk (see the module docstring for the recipe)."""
    model = p.model
    S, A, M = len(p.surfaces), len(p.species), len(p.molecules)
    if isinstance(model, EnsembleErrors):
        dev = model.select(p.surfaces, p.species)
        mdev = model.molecule_select(p.molecules)
        for start in range(0, p.n_samples, p.chunk_size):
            stop = min(start + p.chunk_size, p.n_samples)
            if p.members == "all":
                idx = np.arange(start, stop)
            else:
                idx = np.concatenate([
                    _rng(p.seed, b).integers(0, model.members, size=min(BLOCK, p.n_samples - b * BLOCK))
                    for b in range(start // BLOCK, -(-stop // BLOCK))
                ])
            ads = dev[idx]
            yield SampleChunk(start, ads, mdev[idx])
        return
    L = covariance_factor(model.species_covariance(p.species)) if A else np.zeros((0, 0))
    Lm = covariance_factor(model.molecule_covariance(p.molecules)) if M else np.zeros((0, 0))
    Lt = np.ascontiguousarray(L.T, dtype=DTYPE)
    rho = float(model.surface_correlation)
    w_own, w_shared = DTYPE(np.sqrt(1.0 - rho)), DTYPE(np.sqrt(rho))
    zero = not np.any(L)
    for start in range(0, p.n_samples, p.chunk_size):
        stop = min(start + p.chunk_size, p.n_samples)
        ads = np.empty((stop - start, S, A), dtype=DTYPE)
        mol = np.empty((stop - start, M))
        for b in range(start // BLOCK, -(-stop // BLOCK)):
            lo, hi = b * BLOCK, min((b + 1) * BLOCK, p.n_samples)
            rng = _rng(p.seed, b)
            z = rng.standard_normal((hi - lo, S, A), dtype=DTYPE)
            if rho > 0.0:
                z *= w_own
                z += w_shared * rng.standard_normal((hi - lo, 1, A), dtype=DTYPE)
            zm = rng.standard_normal((hi - lo, M))
            target = ads[lo - start:hi - start]
            if zero:
                target[...] = 0.0
            else:  # one 2-D product (a batched 3-D matmul is many times slower)
                np.matmul(z.reshape(-1, A), Lt, out=target.reshape(-1, A))
            mol[lo - start:hi - start] = zm @ Lm.T if M else zm
        yield SampleChunk(start, ads, mol)
