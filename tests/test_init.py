"""Tests of the package front door (ecatlab/__init__.py)."""

import pytest

import ecatlab


@pytest.mark.parametrize("name", [n for n in ecatlab.__all__ if n != "__version__"])
def test_every_public_name_resolves(name):
    assert getattr(ecatlab, name) is not None


def test_unknown_name_raises_attribute_error():
    with pytest.raises(AttributeError, match="no attribute 'nope'"):
        ecatlab.nope  # noqa: B018
