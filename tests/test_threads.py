"""ecatlab._threads: available_cpus gives the process's CPUs (affinity mask, as os.sched_getaffinity
gives), capped, at least 1; map_in_threads keeps the order and raises what a task raised."""

import os
import threading

import pytest

from ecatlab._threads import available_cpus, map_in_threads


def test_available_cpus_follows_the_affinity_mask_and_the_cap(monkeypatch):
    mine = len(os.sched_getaffinity(0)) if hasattr(os, "sched_getaffinity") else (os.cpu_count() or 1)
    assert available_cpus(64) == min(64, mine)
    assert available_cpus(1) == 1
    if hasattr(os, "sched_getaffinity"):
        monkeypatch.setattr(os, "sched_getaffinity", lambda pid: {0, 1, 2, 3, 4, 5})
        assert available_cpus(4) == 4 and available_cpus(8) == 6
        monkeypatch.setattr(os, "sched_getaffinity", lambda pid: set())
        assert available_cpus(4) == 1  # never zero threads


@pytest.mark.parametrize("cap", [0, -3])
def test_a_cap_below_one_still_gives_one_thread(cap):
    assert available_cpus(cap) == 1


def test_map_in_threads_keeps_order_uses_threads_and_raises():
    seen = set()

    def work(x):
        seen.add(threading.get_ident())
        return x * x

    assert map_in_threads(work, range(50), 3) == [x * x for x in range(50)]
    assert threading.get_ident() not in seen and 1 <= len(seen) <= 3
    seen.clear()
    assert map_in_threads(work, [4], 3) == [16] and seen == {threading.get_ident()}  # one item: no thread
    assert map_in_threads(work, [1, 2], 1) == [1, 4]

    def bad(x):
        if x == 3:
            raise ValueError("three")
        return x

    with pytest.raises(ValueError, match="three"):
        map_in_threads(bad, range(6), 2)
