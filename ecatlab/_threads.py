"""How many threads ecatlab's threaded passes may use: the CPUs this process may run on.

One definition for the CSV reader's per-row lanes (:mod:`ecatlab.energies`) and the uncertainty
propagation's workers (:mod:`ecatlab.uncertainty.propagate`).
"""

from __future__ import annotations

import os

__all__ = ["available_cpus"]


def available_cpus(cap: int = 4) -> int:
    """The CPUs this process may run on (its affinity mask, not the machine's count), at least 1
    and at most ``cap`` (beyond a few threads the memory bandwidth is shared anyway)."""
    try:
        n = len(os.sched_getaffinity(0))
    except (AttributeError, OSError):  # pragma: no cover - not Linux
        n = os.cpu_count() or 1
    return max(1, min(int(cap), n))
