"""ecatlab._gc: the collector is off inside and restored after, also after an error (the network
and compile tests check the numbers of the functions that use it)."""

import gc

import pytest

from ecatlab._gc import collector_paused


def test_collector_off_inside_and_restored():
    assert gc.isenabled()
    with collector_paused():
        assert not gc.isenabled()
    assert gc.isenabled()
    with pytest.raises(ZeroDivisionError):
        with collector_paused():
            1 / 0
    assert gc.isenabled()
    gc.disable()  # a caller that has it off keeps it off
    try:
        with collector_paused():
            pass
        assert not gc.isenabled()
    finally:
        gc.enable()


def test_decorated_function_keeps_its_name_and_restores_the_collector():
    @collector_paused()
    def work(x):
        """doc"""
        assert not gc.isenabled()
        return 2 * x

    assert work(3) == 6 and work(4) == 8  # reusable: a fresh context per call
    assert work.__name__ == "work" and work.__doc__ == "doc"
    assert gc.isenabled()
