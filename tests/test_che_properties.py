"""Property-based tests (hypothesis) of CHE invariants over random adsorbate energies."""

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import ecatlab
from ecatlab.che import compile_pathway, limiting_potentials, step_free_energies
from ecatlab.constants import thermal_voltage_per_pH
from ecatlab.energies import EnergyTable
from ecatlab.pathways import BUILTIN_PATHWAYS, pathway
from ecatlab.references import ReferenceScheme

KEYS = list(BUILTIN_PATHWAYS)
ALL_ADSORBATES = sorted({a.key for k in KEYS for a in pathway(k).adsorbates})
energy = st.floats(min_value=-4.0, max_value=6.0, allow_nan=False, allow_infinity=False)


def random_table(draw_values, n_surfaces):
    data = {sp: draw_values[i * n_surfaces:(i + 1) * n_surfaces] for i, sp in enumerate(ALL_ADSORBATES)}
    return EnergyTable.from_matrix(pd.DataFrame(data, index=[f"s{i}" for i in range(n_surfaces)]))


tables = st.integers(1, 4).flatmap(
    lambda n: st.lists(energy, min_size=n * len(ALL_ADSORBATES), max_size=n * len(ALL_ADSORBATES)).map(lambda v: random_table(v, n))
)


@settings(max_examples=40, deadline=None)
@given(table=tables, key=st.sampled_from(KEYS), potential=st.floats(-2, 2), pH=st.floats(0, 14), scale=st.sampled_from(["RHE", "SHE"]))
def test_hess_law(table, key, potential, pH, scale):
    # the steps sum to the overall reaction free energy whatever the adsorbate energies
    steps = step_free_energies(table, key, potential=potential, pH=pH, scale=scale)
    overall = pathway(key).overall_step()
    u_eq = ecatlab.equilibrium_potential(overall, scale=scale, pH=pH)
    n = pathway(key).total_electrons
    expected = n * (potential - u_eq)  # dG_total(U) = n e (U - U_eq)
    np.testing.assert_allclose(steps.sum(axis=1).to_numpy(), expected, atol=1e-9)


@settings(max_examples=40, deadline=None)
@given(table=tables, key=st.sampled_from(KEYS), pH=st.floats(0, 14))
def test_rhe_and_she_agree_after_nernst_shift(table, key, pH):
    rhe = limiting_potentials(table, key, pH=pH, scale="RHE")
    she = limiting_potentials(table, key, pH=pH, scale="SHE")
    shift = thermal_voltage_per_pH(298.15) * pH
    np.testing.assert_allclose(she.limiting_potential, rhe.limiting_potential - shift, atol=1e-9)
    np.testing.assert_allclose(she.overpotential, rhe.overpotential, atol=1e-9)
    assert (she.determining_step_index.to_numpy() == rhe.determining_step_index.to_numpy()).all()


@settings(max_examples=30, deadline=None)
@given(table=tables, key=st.sampled_from(KEYS))
def test_at_limiting_potential_determining_step_is_zero_and_others_downhill(table, key):
    r = limiting_potentials(table, key)
    steps = step_free_energies(table, key, potential=r.limiting_potential.to_numpy())
    ec = np.array(pathway(key).electrochemical_mask)
    values = steps.to_numpy()[:, ec]
    assert (values <= 1e-9).all()
    det = r.determining_step_index.to_numpy() - 1
    np.testing.assert_allclose(steps.to_numpy()[np.arange(len(det)), det], 0.0, atol=1e-9)


def ideal_energies(key):
    """Adsorbate energies making every electrochemical step equal and chemical steps zero (if solvable)."""
    path = pathway(key)
    compiled = compile_pathway(path, ReferenceScheme())
    u_eq = ecatlab.equilibrium_potential(key)
    target = np.where(compiled.electrochemical, -compiled.electrons * u_eq, 0.0)
    g, *_ = np.linalg.lstsq(compiled.adsorbate_stoichiometry, target - compiled.molecule_dG, rcond=None)
    ok = np.allclose(compiled.adsorbate_stoichiometry @ g + compiled.molecule_dG, target, atol=1e-9)
    return ok, dict(zip(compiled.adsorbates, g))


@pytest.mark.parametrize("key", KEYS)
def test_ideal_catalyst_has_zero_overpotential(key):
    ok, g = ideal_energies(key)
    if not ok:
        pytest.skip(f"{key}: equal steps not reachable with independent adsorbate energies")
    table = EnergyTable.from_matrix(pd.DataFrame(g, index=["ideal"]))
    r = limiting_potentials(table, key).iloc[0]
    assert r.overpotential == pytest.approx(0.0, abs=1e-9)


def test_ideal_catalyst_solvable_for_the_main_pathways():
    for key in ["orr-4e", "oer-4e", "orr-2e", "her-volmer-heyrovsky", "co2rr-hcooh", "co2rr-ch4", "nrr-distal"]:
        assert ideal_energies(key)[0], key


@settings(max_examples=25, deadline=None)
@given(table=tables, key=st.sampled_from(KEYS), pH=st.floats(0, 14))
def test_vectorised_equals_per_surface(table, key, pH):
    together = limiting_potentials(table, key, pH=pH).limiting_potential.to_numpy()
    alone = [limiting_potentials(table, key, pH=pH, surfaces=[s]).limiting_potential.iloc[0] for s in table.surfaces]
    np.testing.assert_allclose(together, alone, atol=1e-12)
