"""Test-session settings: keep the checkout clean (no bytecode, cache or example database written into it)."""

import sys

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
