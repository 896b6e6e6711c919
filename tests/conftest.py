"""Test-session settings: keep the checkout clean (no bytecode, cache or example database written into it)."""

import sys

import pytest

sys.dont_write_bytecode = True  # no __pycache__ folders in the checkout from the test run

try:
    import tempfile

    from hypothesis.configuration import set_hypothesis_home_dir

    set_hypothesis_home_dir(tempfile.mkdtemp(prefix="ecatlab-hypothesis-"))  # its caches too stay out of the checkout
    from hypothesis import settings

    settings.register_profile("ecatlab", database=None, deadline=None)  # no .hypothesis/ folder in the checkout
    settings.load_profile("ecatlab")
except ImportError:  # pragma: no cover - hypothesis is in the test extra
    pass



@pytest.fixture(params=["small file", "medium file", "large file"])
def reader_routes(request, monkeypatch):
    """Runs a test three times, down the CSV reader's three routes (forced by zero size thresholds):
    the byte-level scan before the parse (files under 8 MiB), the scan in a thread alongside the
    parse (from 8 MiB), and that with species as Arrow strings instead of the parser's categorical
    (from 128 MiB). All must give the same tables, warnings and messages. Used by the reader tests
    through ``pytestmark = pytest.mark.usefixtures("reader_routes")``."""
    import ecatlab.energies as energies

    if request.param != "small file":
        monkeypatch.setattr(energies, "_OVERLAP_BYTES", 0)
    if request.param == "large file":
        monkeypatch.setattr(energies, "_CATEGORICAL_SPECIES_BYTES", 0)
    return request.param
