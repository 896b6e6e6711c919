"""The one Conditions value (ecatlab.che.conditions)."""

import dataclasses
import math

import numpy as np
import pytest
import scipy.constants as sc

from ecatlab.che.conditions import PH_RANGE, Conditions, check_pH, check_potential
from ecatlab.errors import ConditionError, ConditionsWarning


def test_validated_once_and_immutable():
    c = Conditions("rhe", pH=13, temperature=298.15, potential=0.8)
    assert c.scale == "RHE" and c.pH == 13.0 and c.potential == 0.8
    with pytest.raises(dataclasses.FrozenInstanceError):
        c.pH = 1.0
    assert hash(c) == hash(Conditions("RHE", 13.0, 298.15, 0.8))
    assert Conditions.from_dict(c.to_dict()) == c


def test_nernst_shift_from_scipy_constants():
    # k_B T ln(10) / e from scipy.constants (CODATA), 0.05916 V per pH at 298.15 K
    c = Conditions(pH=7.0, temperature=310.0)
    assert c.thermal_voltage_per_pH == pytest.approx(sc.k * 310.0 * math.log(10) / sc.e, rel=1e-12)
    assert c.nernst_shift == pytest.approx(7 * sc.k * 310.0 * math.log(10) / sc.e, rel=1e-12)
    assert Conditions("RHE", 7.0).to_she(0.0) == pytest.approx(-7 * 0.05916, abs=1e-4)
    assert Conditions("SHE", 7.0).to_rhe(-0.414) == pytest.approx(0.0, abs=2e-3)


@pytest.mark.parametrize(
    "kwargs,match",
    [
        ({"scale": "NHE"}, "unknown potential scale"),
        ({"pH": float("nan")}, "finite"),
        ({"pH": PH_RANGE[1] + 0.5}, "outside the aqueous range"),
        ({"temperature": -5}, "outside"),
        ({"temperature": float("inf")}, "finite"),
        ({"potential": float("nan")}, "finite"),
        ({"potential": 1e6}, "outside"),
        ({"pH": [1, 2]}, "one pH"),
        ({"pH": "seven"}, "number"),
    ],
)
def test_bad_conditions_name_the_value(kwargs, match):
    with pytest.raises(ConditionError, match=match):
        Conditions(**kwargs)


def test_warning_outside_liquid_water():
    with pytest.warns(ConditionsWarning, match="liquid range of water"):
        Conditions(temperature=390.0)


def test_array_validators():
    assert np.allclose(check_pH([0, 7, 14]), [0, 7, 14])
    with pytest.raises(ConditionError):
        check_potential([0.1, np.inf])
