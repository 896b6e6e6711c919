"""The CHE engine's compile (numpy assembly) against the per-step definition, bit for bit.

The reference (tests/_loop_compile.py) is the definition written out step by step: ``Step.net()`` (products positive,
species cancelling between the sides dropped), electrons and protons counted as consumed, H+ at
pH 0 costing 1/2 G(H2) of the reference scheme (0 when H2(g) is a reference; Nørskov et al.,
J. Phys. Chem. B 108, 17886 (2004)) and OH- costing G(H2O(l)) - 1/2 G(H2) (water autoprotolysis
equilibrium). The engine must give the same arrays, float for float (it adds in the same order).
"""

import numpy as np
import pytest

from ecatlab.che import compile_pathway, compile_steps
from ecatlab.notation import Step
from ecatlab.pathways import BUILTIN_PATHWAYS, pathway
from ecatlab.references import ReferenceScheme

from _loop_compile import loop_compile


def arrays(compiled):
    return compiled.adsorbate_stoichiometry, compiled.molecule_dG, compiled.electrons, compiled.proton_coefficient


SCHEMES = {
    "H2 reference, 298.15 K": ReferenceScheme(),
    "no H2 among the references": ReferenceScheme(references=("H2O(l)", "O2(g)", "CO2(g)", "N2(g)")),
    "330 K": ReferenceScheme(temperature=330.0),
}


@pytest.mark.parametrize("scheme_name", list(SCHEMES))
def test_builtin_pathways_compile_as_the_per_step_definition(scheme_name):
    scheme = SCHEMES[scheme_name]
    for key in BUILTIN_PATHWAYS:
        path = pathway(key)
        compiled = compile_pathway(path, scheme)
        ref = loop_compile(path.steps, compiled.adsorbates, scheme)
        for got, want, what in zip(arrays(compiled), ref, ("stoichiometry", "molecules", "electrons", "protons")):
            assert got.shape == want.shape and np.array_equal(got, want), f"{key} ({scheme_name}): {what} differs"


def test_hydroxide_cancelling_species_and_fractions():
    steps = [
        Step.parse("O2(g) + * + H2O(l) + e- -> OOH* + OH-"),  # alkaline ORR: OH- and H2O(l)
        Step.parse("OH* + H2O(l) -> O* + H2O(l) + H+ + e-"),  # H2O(l) on both sides cancels
        Step.parse("0.5 O2(g) + * -> O*"),  # fractional coefficient, chemical step
        Step.parse("OH* + OH- -> O* + H2O(l) + e-"),
        Step.parse("2 H+ + 2 e- + O* -> * + H2O(l)"),
    ]
    adsorbates = ("O*", "OH*", "OOH*")
    for scheme in SCHEMES.values():
        compiled = compile_steps(steps, adsorbates, scheme)
        ref = loop_compile(steps, adsorbates, scheme)
        for got, want in zip(arrays(compiled), ref):
            assert np.array_equal(got, want)
    # the numbers themselves (definition above; sign: consumed is positive)
    assert compiled.electrons.tolist() == [1.0, -1.0, 0.0, -1.0, 2.0]
    assert compiled.proton_coefficient.tolist() == [1.0, -1.0, 0.0, -1.0, 2.0]  # OH- released counts as a proton consumed
    assert compiled.adsorbate_stoichiometry[1].tolist() == [1.0, -1.0, 0.0]


def test_empty_and_adsorbate_free_steps():
    scheme = ReferenceScheme()
    empty = compile_steps([], ("O*",), scheme)
    assert empty.adsorbate_stoichiometry.shape == (0, 1) and empty.electrons.shape == (0,)
    overall = pathway("orr-4e").overall_step()
    compiled = compile_steps([overall], (), scheme)
    ref = loop_compile([overall], (), scheme)
    for got, want in zip(arrays(compiled), ref):
        assert np.array_equal(got, want)
    # O2 + 4 H+ + 4 e- -> 2 H2O(l): U_eq = -dG/(n e) = 1.229 V (CRC Handbook, standard reduction potentials)
    assert -compiled.molecule_dG[0] / compiled.electrons[0] == pytest.approx(1.229, abs=2e-3)


def test_adsorbate_missing_from_the_columns_is_refused():
    with pytest.raises(KeyError):
        compile_steps([Step.parse("OH* + H+ + e- -> * + H2O(l)")], ("O*",), ReferenceScheme())
