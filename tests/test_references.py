"""Tests of ecatlab.references: composition balance and molecular free energies."""

import pandas as pd
import pytest

from ecatlab.constants import KJ_PER_MOL_IN_EV
from ecatlab.errors import ReferenceSchemeError
from ecatlab.references import ReferenceScheme


def test_balance_of_common_adsorbates():
    scheme = ReferenceScheme()
    assert scheme.balance({"O": 2, "H": 1}) == {"H2(g)": -1.5, "H2O(l)": 2.0, "CO2(g)": 0.0, "N2(g)": 0.0}
    assert scheme.balance({"C": 1, "O": 1}) == {"H2(g)": 1.0, "H2O(l)": -1.0, "CO2(g)": 1.0, "N2(g)": 0.0}
    assert scheme.balance({"N": 1, "H": 2}) == {"H2(g)": 1.0, "H2O(l)": 0.0, "CO2(g)": 0.0, "N2(g)": 0.5}
    assert scheme.balance({"H": 1}) == {"H2(g)": 0.5, "H2O(l)": 0.0, "CO2(g)": 0.0, "N2(g)": 0.0}


def test_balance_rejects_unknown_elements():
    with pytest.raises(ReferenceSchemeError, match="S cannot be built"):
        ReferenceScheme().balance({"S": 1, "O": 2})


def test_other_reference_sets():
    # O2(g) as the oxygen reference instead of water
    scheme = ReferenceScheme(references=("H2(g)", "O2(g)"))
    assert scheme.balance({"O": 1, "H": 1}) == {"H2(g)": 0.5, "O2(g)": 0.5}
    with pytest.raises(ReferenceSchemeError, match="one new element each"):
        ReferenceScheme(references=("H2(g)", "H2O(l)", "O2(g)"))
    with pytest.raises(ReferenceSchemeError, match="must be a molecule"):
        ReferenceScheme(references=("H*", "H2O(l)"))


def test_o2_sits_at_4_92_ev():
    # 2 H2O(l) -> O2(g) + 2 H2(g): 2 x 237.129 kJ/mol (NBS tables) = 4.915 eV
    g = ReferenceScheme().molecule_free_energy("O2(g)")
    assert g == pytest.approx(2 * 237.129 * KJ_PER_MOL_IN_EV, abs=1e-9)
    assert g == pytest.approx(4.92, abs=0.01)


def test_references_are_zero_and_overrides_win():
    scheme = ReferenceScheme(overrides={"O2(g)": 4.92, "CO(g)": 0.3})
    assert scheme.molecule_free_energy("H2O(l)") == 0.0
    assert scheme.molecule_free_energy("O2(g)") == 4.92
    assert scheme.molecule_free_energy("CO(g)") == 0.3
    assert "overridden: CO(g), O2(g)" in scheme.describe()


def test_unknown_molecule_message():
    with pytest.raises(ReferenceSchemeError, match="overrides"):
        ReferenceScheme().molecule_free_energy("C3H8(g)")
    with pytest.raises(ReferenceSchemeError, match="finite"):
        ReferenceScheme(overrides={"O2(g)": float("nan")})


def test_corrections_table_validation_and_roundtrip():
    scheme = ReferenceScheme()
    assert set(scheme.correction_table.columns) >= {"ZPE", "CpdT", "TS"}
    again = ReferenceScheme.from_dict(scheme.to_dict())
    assert again.references == scheme.references
    pd.testing.assert_series_equal(again.reference_correction(), scheme.reference_correction())
    with pytest.raises(ReferenceSchemeError, match="lacks rows"):
        ReferenceScheme(corrections=pd.DataFrame({"ZPE": {"H2(g)": 0.27}, "CpdT": {"H2(g)": 0.0}, "TS": {"H2(g)": 0.4}}))
