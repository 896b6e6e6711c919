"""Tests of ecatlab.notation: parsing, balance checks, pathways."""

import pytest

from ecatlab.errors import BalanceError, NotationError, PathwayError
from ecatlab.notation import ELECTRON, PROTON, SITE, Pathway, Species, Step


@pytest.mark.parametrize(
    "text, key, phase",
    [
        ("OOH*", "OOH*", "ads"),
        ("COOH*", "COOH*", "ads"),
        ("NNH2*", "NNH2*", "ads"),
        ("*", "*", "site"),
        ("O2(g)", "O2(g)", "g"),
        ("H2O(l)", "H2O(l)", "l"),
        ("HCOOH(aq)", "HCOOH(aq)", "aq"),
        ("H+", "H+", "proton"),
        ("H+(aq)", "H+", "proton"),
        ("e-", "e-", "electron"),
        ("OH-", "OH-", "hydroxide"),
        ("  OH*  ", "OH*", "ads"),
    ],
)
def test_species_parse(text, key, phase):
    sp = Species.parse(text)
    assert sp.key == key
    assert sp.phase == phase


def test_species_labels_are_not_compositions():
    # Composition("OH").reduced_formula is 'H2O2' in pymatgen; our key must stay 'OH*'
    oh = Species.parse("OH*")
    assert oh.key == "OH*"
    assert oh.elements == {"H": 1.0, "O": 1.0}
    # OCHO* and COOH* have the same elements but are different species
    assert Species.parse("OCHO*").elements == Species.parse("COOH*").elements
    assert Species.parse("OCHO*") != Species.parse("COOH*")


def test_single_atom_adsorbates_keep_their_label():
    # pymatgen reduces "H" to 'H2' and "O" to 'O2'; ours must not
    assert Species.parse("H*").key == "H*"
    assert Species.parse("H*").elements == {"H": 1.0}
    assert Species.parse("O*").elements == {"O": 1.0}


@pytest.mark.parametrize(
    "text, fragment",
    [
        ("O2", "needs its phase"),
        ("H2O(s)", "not a species"),
        ("Xx*", "not a chemical formula"),
        ("Na+", "only H+, e- and OH-"),
        ("", "empty species"),
        ("OH**", "multi-site"),
        ("oh*", "not a formula"),
    ],
)
def test_species_errors(text, fragment):
    with pytest.raises(NotationError) as err:
        Species.parse(text)
    assert fragment in str(err.value)


def test_step_parse_and_electrons():
    step = Step.parse("OOH* + H+ + e- -> O* + H2O(l)")
    assert step.electrons_transferred == 1
    assert step.is_electrochemical
    assert step.equation == "OOH* + H+ + e- -> O* + H2O(l)"
    ox = Step.parse("OH* -> O* + H+ + e-")
    assert ox.electrons_transferred == -1
    chem = Step.parse("CO* -> * + CO(g)")
    assert not chem.is_electrochemical


def test_step_coefficients():
    step = Step.parse("O2(g) + 4 H+ + 4 e- -> 2 H2O(l)")
    net = step.net()
    assert net[Species.parse("H2O(l)")] == 2
    assert net[PROTON] == -4
    assert net[ELECTRON] == -4
    step2 = Step.parse("2 H* -> 2 * + H2(g)")
    assert step2.net()[SITE] == 2


def test_step_alternative_arrows():
    assert Step.parse("H2(g) => 2 H+ + 2 e-").equation == Step.parse("H2(g) → 2 H+ + 2 e-").equation


def test_unbalanced_step_reports_imbalance_per_element():
    with pytest.raises(BalanceError) as err:
        Step.parse("OOH* + H+ + e- -> O*")
    assert err.value.imbalance == {"H": -2.0, "O": -1.0}
    assert "OOH* + H+ + e- -> O*" in str(err.value)
    assert "H: -2" in str(err.value)


def test_charge_and_site_balance():
    with pytest.raises(BalanceError) as err:
        Step.parse("OH* + H+ -> * + H2O(l)")
    assert err.value.imbalance == {"charge": -1.0}
    with pytest.raises(BalanceError) as err:
        Step.parse("O2(g) + H+ + e- -> OOH*")
    assert err.value.imbalance == {"sites": 1.0}


@pytest.mark.parametrize(
    "text, fragment",
    [
        ("OOH* + H+ + e- O*", "exactly one '->'"),
        ("2H2O(l) -> 2 H2(g) + O2(g)", "put a space"),
        ("OOH* + + H+ -> O*", "empty term"),
        ("-> O*", "empty term"),
    ],
)
def test_step_syntax_errors(text, fragment):
    with pytest.raises(NotationError) as err:
        Step.parse(text)
    assert fragment in str(err.value)


def test_pathway_parse_and_overall():
    p = Pathway.parse(
        """
        # associative ORR
        O2(g) + * + H+ + e- -> OOH*
        OOH* + H+ + e- -> O* + H2O(l)
        O* + H+ + e- -> OH*
        OH* + H+ + e- -> * + H2O(l)
        """,
        name="mine",
    )
    assert len(p) == 4
    assert p.direction == "reduction"
    assert p.total_electrons == 4
    assert p.overall_step().equation == "O2(g) + 4 H+ + 4 e- -> 2 H2O(l)"
    assert [a.key for a in p.adsorbates] == ["OOH*", "O*", "OH*"]
    assert p.labels[0] == "O2(g)" and p.labels[-1] == "H2O(l)"


def test_pathway_roundtrip_dict():
    p = Pathway.parse("* + H+ + e- -> H*\nH* + H+ + e- -> * + H2(g)", name="her", state_labels=["a", "b", "c"])
    assert Pathway.from_dict(p.to_dict()) == p


def test_pathway_errors():
    with pytest.raises(PathwayError, match="mixes reduction and oxidation"):
        Pathway.parse("* + H+ + e- -> H*\nH* -> * + H+ + e-")
    with pytest.raises(PathwayError, match="does not return to the clean surface"):
        Pathway.parse("* + H+ + e- -> H*")
    with pytest.raises(PathwayError, match="no electrochemical step"):
        Pathway.parse("CO* -> * + CO(g)\n* + CO(g) -> CO*")
    with pytest.raises(BalanceError, match="line 2 of pathway"):
        Pathway.parse("O2(g) + * + H+ + e- -> OOH*\nOOH* + H+ + e- -> O*\n")
    with pytest.raises(PathwayError, match="state labels"):
        Pathway.parse("* + H+ + e- -> H*\nH* + H+ + e- -> * + H2(g)", state_labels=["a"])


def test_mathtext_labels():
    assert Species.parse("OOH*").latex() == r"$\mathrm{OOH}{\ast}$"  # site mark on the baseline (ecatlab.chemtext)
    assert Species.parse("NNH2*").latex() == r"$\mathrm{NNH}_{2}{\ast}$"
    assert Species.parse("H2O(l)").latex() == r"$\mathrm{H}_{2}\mathrm{O}$(l)"
