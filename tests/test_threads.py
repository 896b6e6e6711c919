"""ecatlab._threads.available_cpus: the process's CPUs (affinity mask, as os.sched_getaffinity
gives), capped, at least 1."""

import os

import pytest

from ecatlab._threads import available_cpus


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
