"""ecatlab's threaded passes: how many threads (the CPUs this process may run on) and how to run
work in them.

One definition for the CSV reader's per-row lanes (:mod:`ecatlab.energies`) and the uncertainty
propagation's workers and tables (:mod:`ecatlab.uncertainty.propagate`). Threads pay off because
numpy's and Arrow's kernels release the GIL.
"""

from __future__ import annotations

import os

__all__ = ["available_cpus", "map_in_threads"]


def available_cpus(cap: int = 4) -> int:
    """The CPUs this process may run on (its affinity mask, not the machine's count), at least 1
    and at most ``cap`` (beyond a few threads the memory bandwidth is shared anyway)."""
    try:
        n = len(os.sched_getaffinity(0))
    except (AttributeError, OSError):  # pragma: no cover - not Linux
        n = os.cpu_count() or 1
    return max(1, min(int(cap), n))


def map_in_threads(fn, items, threads: int) -> list:
    """``[fn(x) for x in items]``, in at most ``threads`` worker threads; results in the order of
    ``items``. With one thread or one item
    no thread is started. An exception from ``fn`` is raised once every item has finished."""
    items = list(items)
    n = min(int(threads), len(items))
    if n <= 1:
        return [fn(x) for x in items]
    from concurrent.futures import ThreadPoolExecutor

    with ThreadPoolExecutor(max_workers=n) as pool:
        futures = [pool.submit(fn, x) for x in items]
        return [f.result() for f in futures]
