"""Intermediates as molecular graphs and the step rules: identity, names, hand-enumerated networks.

Outside references: RDKit's own canonical SMILES of hand-written structures (an independent
route to the same identity), pymatgen compositions through ecatlab.notation for element counts,
networkx simple paths for the N2 routes. The C1 CO2 and N2 networks are enumerated by hand in
the comments below from the rules (one bond changed per step, one adsorbate at a time).
Demo energies are ILLUSTRATIVE invented numbers.
"""

from __future__ import annotations

import networkx as nx
import pytest
from rdkit import Chem

from ecatlab.demo import demo_energies
from ecatlab.energies import EnergyTable
from ecatlab.errors import PathwayError
from ecatlab.network import build_network
from ecatlab.network.graphs import parse_name, skeleton_from_smiles
from ecatlab.notation import Species


def _rdkit(smiles: str) -> str:
    return Chem.MolToSmiles(Chem.MolFromSmiles(smiles))


@pytest.fixture(scope="module")
def table():
    return demo_energies()


# -- identity -------------------------------------------------------------------------------------
@pytest.mark.parametrize(
    "name,smiles",
    [
        # hand-written structures with the surface as a dummy atom (RDKit canonicalises them independently)
        ("COOH*", "[*]C(=O)O"), ("OCHO*", "[*]OC=O"), ("CO*", "[*]=C=O"), ("CHO*", "[*]C=O"), ("COH*", "[*]#CO"),
        ("CH3O*", "[*]OC"), ("C*", "[*]$[C]"), ("CH*", "[*]#[CH]"), ("CH2*", "[*]=[CH2]"), ("OH*", "[*]O"), ("O*", "[*]=O"),
        ("NNH*", "[*]N=N"), ("NNH2*", "[*]=NN"), ("N*", "[*]#N"), ("NH2*", "[*]N"), ("OOH*", "[*]OO"),
        ("CH2O*", "[*]CO[*]"),  # di-sigma formaldehyde
        ("NH3*", "N->[*]"),  # lone-pair (dative) bond
    ],
)
def test_canonical_identity_matches_rdkit_of_hand_written_structure(name, smiles):
    assert parse_name(name).key(True) == _rdkit(smiles)


def test_isomers_are_distinct_and_duplicates_merge():
    assert parse_name("COOH*").key() != parse_name("OCHO*").key()
    assert parse_name("CH3CHO").key(False) == _rdkit("CC=O")
    assert parse_name("CH2CHOH").key(False) == _rdkit("C=CO")
    assert parse_name("CH3CHO").skeleton_key != parse_name("CH2CHOH").skeleton_key
    # same structure, different writing
    assert parse_name("CH3O*").key() == parse_name("OCH3*").key()
    assert parse_name("CH3CH2OH").key(False) == parse_name("C2H5OH(aq)").key(False) == _rdkit("CCO")
    assert parse_name("CH(CH3)OH*").key() == parse_name("CH3CHOH*").key()
    # a user SMILES with the binding atom marked is the same species as the name
    assert skeleton_from_smiles("*OC=O").key() == parse_name("OCHO*").key()


@pytest.mark.parametrize("name", ["COOH*", "OCHO*", "CH2CHOH*", "CH3CH2CH2OH", "OCCOH*", "CH(CH3)OH*", "NHNH2*", "C(O)CH3*",
                                  "CH3COOH", "OCH2CH3*", "CH2C(OH)CH3*"])
def test_names_round_trip_and_element_counts(name):
    sk = parse_name(name)
    assert parse_name(sk.name()).key() == sk.key()
    # element counts against the notation's composition (pymatgen)
    assert sk.elements == Species.parse(name if name.endswith("*") else name + "(aq)").elements


def test_generated_species_names_round_trip(table):
    net = build_network(table, "2 CO2", sites=2, coupling=True, uncomputed=True)
    assert len(net.uncomputed) > 50
    for a in net.adsorbates:
        sk = net.structures[a]
        assert parse_name(a).key() == sk.key(), a
        assert Species.parse(a).elements == sk.elements


# -- hand-enumerated networks --------------------------------------------------------------------------
# CO2 on the demo species, one site. From O=C=O: H to O -> COOH*, H to C -> OCHO*, H to O with
# C-O scission -> OH* + CO(g). COOH*: H to C -> HCOOH released; H to OH with C-O scission -> CO* +
# H2O or CO(g) + H2O. OCHO*: H to O -> HCOOH released; H to C with C-O scission -> O* + CH2O(g).
# CO*: H to C -> CHO*, H to O -> COH*, desorbs. CHO*: H to C -> CH2O* or CH2O(g). COH*: H to OH
# with scission -> C* + H2O. CH2O*: H to C -> CH3O*, desorbs. CH3O*: H to O -> CH3OH released,
# H to C with C-O scission -> O* + CH4(g). C* -> CH* -> CH2* -> CH3* -> CH4(g). O* -> OH* -> H2O.
# Everything else needs a second site or a species outside the table (OCH2O*, CHOH*, CH2OH*, HCOOH*).
CO2_STEPS = {
    ("CO2(g)", "CO2(g) + * + H+ + e- -> COOH*"),
    ("CO2(g)", "CO2(g) + * + H+ + e- -> OCHO*"),
    ("CO2(g)", "CO2(g) + * + H+ + e- -> OH* + CO(g)"),
    ("COOH*", "COOH* + H+ + e- -> * + HCOOH(aq)"),
    ("COOH*", "COOH* + H+ + e- -> CO* + H2O(l)"),
    ("COOH*", "COOH* + H+ + e- -> * + CO(g) + H2O(l)"),
    ("OCHO*", "OCHO* + H+ + e- -> * + HCOOH(aq)"),
    ("OCHO*", "OCHO* + H+ + e- -> O* + CH2O(g)"),
    ("OH* + CO(g)", "OH* + H+ + e- -> * + H2O(l)"),
    ("CO*", "CO* + H+ + e- -> CHO*"),
    ("CO*", "CO* + H+ + e- -> COH*"),
    ("CO*", "CO* -> * + CO(g)"),
    ("CO(g)", "CO(g) + * -> CO*"),
    ("O* + CH2O(g)", "O* + H+ + e- -> OH*"),
    ("CHO*", "CHO* + H+ + e- -> CH2O*"),
    ("CHO*", "CHO* + H+ + e- -> * + CH2O(g)"),
    ("COH*", "COH* + H+ + e- -> C* + H2O(l)"),
    ("OH* + CH2O(g)", "OH* + H+ + e- -> * + H2O(l)"),
    ("CH2O*", "CH2O* + H+ + e- -> CH3O*"),
    ("CH2O*", "CH2O* -> * + CH2O(g)"),
    ("CH2O(g)", "CH2O(g) + * -> CH2O*"),
    ("C*", "C* + H+ + e- -> CH*"),
    ("CH3O*", "CH3O* + H+ + e- -> * + CH3OH(aq)"),
    ("CH3O*", "CH3O* + H+ + e- -> O* + CH4(g)"),
    ("CH*", "CH* + H+ + e- -> CH2*"),
    ("O* + CH4(g)", "O* + H+ + e- -> OH*"),
    ("CH2*", "CH2* + H+ + e- -> CH3*"),
    ("OH* + CH4(g)", "OH* + H+ + e- -> * + H2O(l)"),
    ("CH3*", "CH3* + H+ + e- -> * + CH4(g)"),
}

# N2, one site. N2 -> NNH* (H to N). NNH*: H to the bound N -> NHNH*, to the other -> NNH2*.
# NHNH* -> NHNH2*. NNH2*: H to the bare N -> NHNH2*; H to NH2 with N-N scission -> N* + NH3(g).
# NHNH2*: H to NH -> NH2NH2* or N2H4(g); H to NH2 with scission -> NH* + NH3(g). NH2NH2*: H with
# scission -> NH2* + NH3(g); desorbs. N* -> NH* -> NH2* -> NH3* or NH3(g); NH3* desorbs.
N2_STEPS = {
    ("N2(g)", "N2(g) + * + H+ + e- -> NNH*"),
    ("NNH*", "NNH* + H+ + e- -> NHNH*"),
    ("NNH*", "NNH* + H+ + e- -> NNH2*"),
    ("NHNH*", "NHNH* + H+ + e- -> NHNH2*"),
    ("NNH2*", "NNH2* + H+ + e- -> NHNH2*"),
    ("NNH2*", "NNH2* + H+ + e- -> N* + NH3(g)"),
    ("NHNH2*", "NHNH2* + H+ + e- -> NH2NH2*"),
    ("NHNH2*", "NHNH2* + H+ + e- -> * + N2H4(g)"),
    ("NHNH2*", "NHNH2* + H+ + e- -> NH* + NH3(g)"),
    ("N* + NH3(g)", "N* + H+ + e- -> NH*"),
    ("NH2NH2*", "NH2NH2* + H+ + e- -> NH2* + NH3(g)"),
    ("NH2NH2*", "NH2NH2* -> * + N2H4(g)"),
    ("N2H4(g)", "N2H4(g) + * -> NH2NH2*"),
    ("NH* + NH3(g)", "NH* + H+ + e- -> NH2*"),
    ("NH2* + NH3(g)", "NH2* + H+ + e- -> NH3*"),
    ("NH2* + NH3(g)", "NH2* + H+ + e- -> * + NH3(g)"),
    ("NH3* + NH3(g)", "NH3* -> * + NH3(g)"),
    ("2 NH3(g)", "NH3(g) + * -> NH3*"),
}


@pytest.mark.parametrize("reactant,expected", [("CO2", CO2_STEPS), ("N2", N2_STEPS)])
def test_c1_networks_equal_hand_enumeration(table, reactant, expected):
    net = build_network(table, reactant)
    got = {(net.states[e.source].label, e.step.equation) for e in net.edges}
    assert got == expected
    assert len(net.edges) == len(expected)  # no duplicate edges
    states = {net.states[e.source].label for e in net.edges} | {net.states[e.target].label for e in net.edges}
    assert len(states) == len(net.states)
    # every step records the bond it changes
    assert all(e.bond and e.change in ("formed", "broken") for e in net.edges)
    # the composition-only steps of the old enumeration are gone
    eqs = {e.step.equation for e in net.edges}
    assert "OCHO* + H+ + e- -> CO* + H2O(l)" not in eqs and "CH2O* + H+ + e- -> CH* + H2O(l)" not in eqs


def test_n2_distal_alternating_and_mixed_routes_present(table):
    net = build_network(table, "N2")
    g = net.to_networkx()
    target = net.product_state("NH3")
    routes = set()
    for path in nx.all_simple_paths(g, net.start, target):
        routes.add(tuple(net.states[i].label for i in path[1:-1]))
    distal = ("NNH*", "NNH2*", "N* + NH3(g)", "NH* + NH3(g)", "NH2* + NH3(g)")
    alternating = ("NNH*", "NHNH*", "NHNH2*", "NH2NH2*", "NH2* + NH3(g)")
    mixed = [("NNH*", "NNH2*", "NHNH2*", "NH2NH2*", "NH2* + NH3(g)"), ("NNH*", "NHNH*", "NHNH2*", "NH* + NH3(g)", "NH2* + NH3(g)")]
    assert distal in routes and alternating in routes
    assert all(m in routes for m in mixed)
    assert distal + ("NH3* + NH3(g)",) in routes  # via adsorbed NH3 and its desorption


def test_filters(table):
    full = build_network(table, "CO2")
    no_co = build_network(table, "CO2", forbid=["bond:C-O"])
    assert all(e.bond != "C-O" for e in no_co.edges) and len(no_co.edges) < len(full.edges)
    assert "HCOOH(aq)" in no_co.products and "CH4(g)" not in no_co.products  # CH4 needs a C-O scission
    short = build_network(table, "CO2", max_steps=2)
    assert set(short.products) <= {"CO(g)", "HCOOH(aq)"}
    only = build_network(table, "CO2", products=["CH3OH"])
    assert only.products == ("CH3OH(aq)",)
    assert all(s.electrons <= 6 for s in only.states)
    ch4 = build_network(table, "CO2", products=["CH4"])
    assert ch4.products == ("CH4(g)",)
    # released CO(g) stays in the network: it re-adsorbs on the way to CH4
    assert "CO(g)" in {s.label for s in ch4.states} and any(e.step.equation == "CO(g) + * -> CO*" for e in ch4.edges)
    pat = build_network(table, "CO2", forbid_patterns=["[#6]-[OX2H1]"])  # no C-OH groups (COOH*, COH*)
    assert "COOH*" not in pat.used_adsorbates and "COH*" not in pat.used_adsorbates and "OCHO*" in pat.used_adsorbates
    with pytest.raises(PathwayError, match="SMARTS"):
        build_network(table, "CO2", forbid_patterns=["[#6"])


def test_user_structure_for_a_name_the_reading_cannot_place():
    # "OOCH*" reads as a peroxide O-O-CH; the user says it is formate, bound through O
    t = EnergyTable.from_matrix({"OOCH*": {"X": 0.1}, "COOH*": {"X": 0.3}})
    with_s = build_network(t, "CO2", structures={"OOCH*": "*OC=O"})
    assert "OOCH*" in with_s.used_adsorbates
    assert any(e.step.equation == "OOCH* + H+ + e- -> * + HCOOH(aq)" for e in with_s.edges)
    assert with_s.smiles("OOCH*") == _rdkit("[*]OC=O")
    without = build_network(t, "CO2")
    assert "OOCH*" not in without.used_adsorbates  # no rule forms an O-O bond from CO2
