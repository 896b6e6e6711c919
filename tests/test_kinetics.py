"""Microkinetics: model, rate constants, steady-state solver (checks against outside references).

Sources are named beside each check value.
"""

from __future__ import annotations

import math
import warnings

import numpy as np
import pandas as pd
import pytest
from scipy import constants as sc

import ecatlab
from ecatlab.che import limiting_potentials
from ecatlab.energies import EnergyTable
from ecatlab.errors import KineticsInputError, MissingSpeciesError
from ecatlab.kinetics import BarrierSettings, build_model, solve_steady_state
from ecatlab.kinetics import analysis as A
from ecatlab.kinetics.rates import rate_constants
from ecatlab.pathways import BUILTIN_PATHWAYS

T = 298.15
KT = sc.k * T / sc.e  # eV, scipy.constants (CODATA)
TST = sc.k * T / sc.h  # 1/s, Eyring prefactor k_B T / h


def _table(rows: dict[str, dict[str, float]]) -> EnergyTable:
    return EnergyTable.from_matrix(pd.DataFrame(rows).T)


@pytest.fixture(scope="module")
def demo():
    return ecatlab.demo_energies()


# ------------------------------------------------------------------------------------------------
# Volmer-Heyrovsky: closed-form steady state
def _vh_closed_form(G_H: float, U: float, G0_V: float, G0_H: float, beta: float, p_H2: float = 1.0):
    """Textbook steady state of Volmer-Heyrovsky (derived here, not taken from ecatlab).

    Volmer  * + H+ + e- -> H*          dG1 = G_H + eU      (CHE, Norskov et al., J. Electrochem. Soc. 152, J23 (2005))
    Heyrovsky H* + H+ + e- -> * + H2    dG2 = -G_H + eU
    Ga = max(G0 + beta dG, dG, 0), Gb = Ga - dG, k = (k_B T/h) exp(-G/k_B T) (Eyring).
    r1 = k1f th* - k1b thH ; r2 = k2f thH - k2b p th* ; r1 = r2 with th* + thH = 1 gives
    thH = (k1f + k2b p) / (k1f + k1b + k2f + k2b p).
    """

    def ks(G0, dG):
        ga = max(G0 + beta * dG, dG, 0.0)
        return TST * math.exp(-ga / KT), TST * math.exp(-(ga - dG) / KT)

    k1f, k1b = ks(G0_V, G_H + U)
    k2f, k2b = ks(G0_H, -G_H + U)
    D = k1f + k1b + k2f + k2b * p_H2
    th_h = (k1f + k2b * p_H2) / D
    # r = r1 = r2 = (k1f k2f - k1b k2b p) / D; k1b k2b / (k1f k2f) = exp((dG1 + dG2)/kT) = exp(2U/kT)
    r = k1f * k2f * -math.expm1(2 * U / KT + math.log(p_H2)) / D
    return th_h, r


@pytest.mark.parametrize("G_H", [-0.25, 0.0, 0.12, 0.4])
def test_volmer_heyrovsky_closed_form(G_H):
    table = _table({"X": {"H*": G_H}})
    barriers = pd.DataFrame({"step": ["* + H+ + e- -> H*", "H* + H+ + e- -> * + H2(g)"], "G_a": [0.55, 0.7], "potential": [0.0, 0.0]})
    # G_a at U = 0 given; the model's raw barrier is G_a + beta (dG(U) - dG(0)) = (G_a - beta dG(0)) + beta dG(U)
    G0_V = 0.55 - 0.5 * G_H
    G0_H = 0.7 - 0.5 * (-G_H)
    model = build_model(table, "her-volmer-heyrovsky", barriers=barriers)
    u = np.linspace(-0.5, 0.2, 15)
    ss = solve_steady_state(model, u)
    assert ss.converged.all()
    i_h = model.species.index("H*")
    j = A.current_density(ss)[0]
    for k, U in enumerate(u):
        th_h, r = _vh_closed_form(G_H, U, G0_V, G0_H, 0.5)
        assert ss.coverages[0, k, i_h] == pytest.approx(th_h, rel=1e-8, abs=1e-300)
        # j = -e rho (r1 + r2) = -2 e rho r (two electrons per H2), mA/cm^2
        if abs(U) > 0.02:  # net rates closer to equilibrium carry the rounding of r_f - r_b (~1e-16 of the gross rate)
            assert j[k] == pytest.approx(-2 * sc.e * 1e15 * r * 1e3, rel=1e-7)


# ------------------------------------------------------------------------------------------------
# Tafel slopes in the textbook limiting regimes: 2.303 kT/(alpha e) with alpha = beta (Volmer
# limiting, ~120 mV/dec), 1 + beta (Heyrovsky limiting after a fast Volmer, ~40 mV/dec) and 2
# (Tafel limiting after a fast Volmer, ~30 mV/dec) at 298 K (Shinagawa, Garcia-Esparza,
# Takanabe, Sci. Rep. 5, 13801 (2015); Bard & Faulkner, Electrochemical Methods, ch. 3).
def _tafel_expected(alpha):
    return math.log(10) * KT / alpha * 1e3  # mV/dec


def _tafel_at(model, u):
    ss = solve_steady_state(model, u)
    assert ss.converged.all()
    pol = A.polarization_curve(ss)
    return pol["tafel_slope"].to_numpy(), ss


def test_tafel_volmer_limiting_120():
    table = _table({"X": {"H*": 0.3}})
    bar = pd.DataFrame({"step": ["1", "2"], "G_a": [0.9, 0.2]})
    model = build_model(table, "her-volmer-heyrovsky", barriers=bar)
    b, _ = _tafel_at(model, np.array([-0.25, -0.2, -0.15]))
    assert _tafel_expected(0.5) == pytest.approx(118.3, abs=0.1)  # textbook ~120 mV/dec (Shinagawa 2015)
    assert b == pytest.approx(_tafel_expected(0.5), rel=5e-3)


def test_tafel_heyrovsky_limiting_40():
    table = _table({"X": {"H*": 0.4}})
    bar = pd.DataFrame({"step": ["1", "2"], "G_a": [0.05, 0.9]})
    model = build_model(table, "her-volmer-heyrovsky", barriers=bar)
    b, ss = _tafel_at(model, np.array([-0.22, -0.2, -0.18]))
    assert ss.coverages[0, :, model.species.index("H*")].max() < 1e-3
    assert _tafel_expected(1.5) == pytest.approx(39.4, abs=0.1)  # textbook ~40 mV/dec
    assert b == pytest.approx(_tafel_expected(1.5), rel=5e-3)


def test_tafel_tafel_limiting_30():
    table = _table({"X": {"H*": 0.4}})
    model = build_model(table, "her-volmer-tafel", settings=BarrierSettings(intrinsic_barrier=0.05))
    assert model.step_kinds[-1] == "adsorption"  # 2 H* -> 2 * + H2(g): collision theory
    b, ss = _tafel_at(model, np.array([-0.22, -0.2, -0.18]))
    assert ss.coverages[0, :, model.species.index("H*")].max() < 1e-3
    assert _tafel_expected(2.0) == pytest.approx(29.6, abs=0.1)  # textbook ~30 mV/dec
    assert b == pytest.approx(_tafel_expected(2.0), rel=5e-3)


def test_tafel_analytic_matches_finite_difference(demo):
    model = build_model(demo, "orr-4e", surfaces=["ALY-01", "SAS-03"])
    u = np.array([0.7, 0.70001])
    ss = solve_steady_state(model, u)
    j = np.abs(A.current_density(ss))
    fd = 1e3 * np.log(10) * (u[1] - u[0]) / np.abs(np.log(j[:, 1]) - np.log(j[:, 0]))
    b = A.polarization_curve(ss)["tafel_slope"].to_numpy().reshape(2, 2)[:, 0]
    assert b == pytest.approx(fd, rel=1e-3)


# ------------------------------------------------------------------------------------------------
# Detailed balance: zero net rate of every step at the equilibrium potential, all pathways
@pytest.mark.parametrize("key", list(BUILTIN_PATHWAYS))
def test_zero_current_at_equilibrium_potential(demo, key):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        model = build_model(demo, key, on_missing="drop")
    u_eq = model.pathways[0].equilibrium_potential
    # the kernel's U_eq agrees with the tabulated one (e.g. 1.229 V for ORR, NBS/CRC via ecatlab.references)
    assert u_eq == pytest.approx(ecatlab.equilibrium_potential(key), abs=1e-12)
    ss = solve_steady_state(model, [u_eq - 0.05, u_eq, u_eq + 0.05])
    assert ss.converged.all()
    gross = ss.forward_rates[:, 1] + ss.backward_rates[:, 1]
    rel = np.abs(ss.net_rates[:, 1]) / np.maximum(gross, 1e-300)
    assert rel.max() < 1e-8
    # the net current is zero up to rounding of the exchange flux e rho sum_i |n_i| (r_f + r_b)
    j = A.current_density(ss)
    exchange = sc.e * 1e15 * 1e3 * (np.abs(model.electrons) * gross).sum(axis=1)
    assert np.all(np.abs(j[:, 1]) <= 1e-9 * exchange)


def test_rate_constants_detailed_balance_exact():
    rng = np.random.default_rng(3)
    dG = rng.uniform(-2, 2, (50, 4))
    rc = rate_constants(dG, rng.uniform(0, 1, (50, 4)), rng.uniform(0, 1, (50, 4)), np.log(TST), T)
    assert np.allclose(rc.ln_kf - rc.ln_kb, -dG / KT, rtol=0, atol=1e-12)
    assert np.all(rc.G_f >= 0) and np.all(rc.G_f - dG >= -1e-15)


# ------------------------------------------------------------------------------------------------
# Site balance and faradaic efficiencies
def test_coverages_sum_to_one(demo):
    model = build_model(demo, ["orr-4e", "orr-2e"])
    ss = solve_steady_state(model, np.linspace(0.2, 1.1, 19))
    assert ss.converged.all()
    cov = A.coverage_table(ss)
    sums = cov.groupby(["surface", "potential"])["coverage"].sum()
    assert np.allclose(sums, 1.0, atol=1e-12)
    assert (cov["coverage"] >= 0).all()


@pytest.mark.parametrize("paths", [["orr-4e", "orr-2e"], ["co2rr-co", "her-volmer-heyrovsky"], ["co2rr-hcooh", "co2rr-co", "her-volmer-heyrovsky"]])
def test_faradaic_efficiencies_sum_to_one(demo, paths):
    model = build_model(demo, paths, activities={"H2O2(aq)": 1e-6} if "orr-2e" in paths else None)
    u = np.linspace(-1.0, -0.3, 8) if "co2rr-co" in paths else np.linspace(0.2, 0.6, 5)
    ss = solve_steady_state(model, u)
    fe = A.faradaic_efficiencies(ss)
    ok = fe["faradaic_efficiency"].notna()
    assert ok.any()
    sums = fe[ok].groupby(["surface", "potential"])["faradaic_efficiency"].sum()
    assert np.allclose(sums, 1.0, atol=1e-8)
    assert np.allclose(fe.loc[ok, "fe_unassigned"], 0.0, atol=1e-8)
    part = fe.groupby(["surface", "potential"])["partial_current_density"].sum().to_numpy()
    pol = A.polarization_curve(ss)
    assert np.allclose(part, pol["current_density"].to_numpy(), rtol=1e-8, atol=1e-30)


# ------------------------------------------------------------------------------------------------
# Thermodynamic-minimum barriers: the kinetic onset converges on the CHE limiting potential
def test_onset_ordering_matches_che_ordering(demo):
    """With G_f = max(dG, 0) every rate is capped by k_B T/h, so a target current close to the
    barrierless maximum e rho k_B T/h (here one fifth of it, 2e11 mA/cm^2: a mathematical limit, not
    a lab current) is reached only where every step is (nearly) downhill, i.e. just positive of U_L."""
    settings = BarrierSettings(intrinsic_barrier=0.0)  # the thermodynamic minimum
    model = build_model(demo, "orr-4e", settings=settings)
    u = np.linspace(-0.5, 1.25, 351)
    ss = solve_steady_state(model, u)
    assert ss.converged.all()
    j_max = sc.e * 1e15 * TST * 1e3  # mA/cm^2, one electron per site per k_B T/h
    onset = A.onset_potentials(ss, 0.2 * j_max).set_index("surface")
    che = limiting_potentials(demo, "orr-4e").set_index("surface")
    assert onset["reached"].all()
    names = list(model.surfaces)
    u_l = che.loc[names, "limiting_potential"].to_numpy()
    u_on = onset.loc[names, "onset_potential"].to_numpy()
    assert np.all(u_on - u_l > -0.01) and np.all(u_on - u_l < 3 * KT)
    # the ordering agrees for every pair of surfaces whose limiting potentials differ by > 2 kT/e
    for i in range(len(names)):
        for k in range(len(names)):
            if u_l[i] - u_l[k] > 2 * KT:
                assert u_on[i] > u_on[k]
    # and so does the CHE ranking (kernel.ranking_order on G_max, unblocked first)
    order = ecatlab.che.kernel.ranking_order(che.loc[names, "G_max"].to_numpy(), che.loc[names, "blocked"].to_numpy())
    ranked_onsets = u_on[order]
    gaps = np.diff(u_l[order])
    assert np.all((np.diff(ranked_onsets) < 0) | (np.abs(gaps) < 2 * KT))


def test_turnover_matches_energetic_span_formula(demo):
    """Steady-state TOF of a linear catalytic cycle of first-order steps with a common prefactor:
    TOF = (k_B T/h)(1 - exp(dG_r/kT)) / sum_ij exp((T_i - I_j + [i <= j] dG_r)/kT)
    (energetic span model, Kozuch & Shaik, Acc. Chem. Res. 44, 101 (2011); the [i <= j] term
    derived here from the two-step closed form). The 4e ORR with unit activities is such a cycle."""
    model = build_model(demo, "orr-4e", settings=BarrierSettings(intrinsic_barrier=0.35, symmetry_factor=0.4))
    u = np.array([0.3, 0.6, 0.9, 1.1])
    ss = solve_steady_state(model, u)
    dG = model.step_free_energies(u)  # (S, P, 4)
    tof = A.polarization_curve(ss)["electron_turnover"].to_numpy().reshape(dG.shape[:2]) / 4.0
    for s in range(dG.shape[0]):
        for k in range(dG.shape[1]):
            d = dG[s, k]
            I = np.concatenate([[0.0], np.cumsum(d)])  # I_0..I_4 (I_4 = dG_r)
            ga = np.maximum(np.maximum(0.35 + 0.4 * d, d), 0.0)  # documented barrier rule
            Ts = I[:-1] + ga  # T_1..T_4
            dGr = I[-1]
            total = 0.0
            for i in range(4):  # TS of step i+1
                for jj in range(4):  # intermediate I_jj
                    total += math.exp((Ts[i] - I[jj] + (dGr if i + 1 <= jj else 0.0)) / KT)
            expected = TST * -math.expm1(dGr / KT) / total
            assert tof[s, k] == pytest.approx(expected, rel=1e-6)


# ------------------------------------------------------------------------------------------------
# A stiff case against scipy's BDF integrator run to steady state
def test_stiff_case_matches_solve_ivp_bdf():
    from scipy.integrate import solve_ivp

    # rate constants spanning ~1e-8 .. 1e13 1/s: OOH* very unstable, O* very stable
    table = _table({"X": {"OH*": 0.55, "O*": 1.0, "OOH*": 4.3}})
    model = build_model(table, "orr-4e", settings=BarrierSettings(intrinsic_barrier=0.45))
    U = 0.75
    ss = solve_steady_state(model, [U])
    assert ss.converged.all()
    dG = model.step_free_energies([U])[0, 0]
    rc = rate_constants(dG, model.raw_offset[0], model.raw_slope[0], model.ln_prefactor[0], T)
    kf, kb = np.exp(rc.ln_kf), np.exp(rc.ln_kb)
    ratio = np.concatenate([kf, kb])
    assert ratio.max() / ratio[ratio > 0].min() > 1e15  # stiff
    R, P = model.reactant_orders, model.product_orders
    N = P - R
    m = model.n_species - 1
    af, ab = np.exp(model.ln_activity_forward), np.exp(model.ln_activity_backward)

    def rhs(t, y):
        th = np.append(y, 1.0 - y.sum())
        r = kf * af * np.prod(th ** R, axis=1) - kb * ab * np.prod(th ** P, axis=1)
        return (N[:, :m].T @ r)

    # two implicit integrators of scipy as references; BDF at rtol 1e-10 / atol 1e-14 (scipy 1.17's BDF
    # stops at 1e-12 / 1e-16 here with "required step size is less than spacing between numbers")
    for method, rtol, atol in (("BDF", 1e-10, 1e-14), ("Radau", 1e-12, 1e-16)):
        sol = solve_ivp(rhs, (0, 1e10), np.full(m, 1.0 / (m + 1)), method=method, rtol=rtol, atol=atol)
        assert sol.success, f"{method}: {sol.message}"
        y = sol.y[:, -1]
        th_ref = np.append(y, 1 - y.sum())
        assert np.allclose(ss.coverages[0, 0], th_ref, atol=1e-6), method


# ------------------------------------------------------------------------------------------------
# Newton vs a per-surface scipy.optimize.root
def test_newton_matches_scipy_root(demo):
    from scipy.optimize import root

    model = build_model(demo, "orr-4e")
    u = np.array([0.6, 0.8, 0.9])
    ss = solve_steady_state(model, u)
    R, P = model.reactant_orders, model.product_orders
    N = P - R
    m = model.n_species - 1
    dGs = model.step_free_energies(u)
    compared = 0
    for s in range(len(model.surfaces)):
        for k in range(len(u)):
            rc = rate_constants(dGs[s, k], model.raw_offset[s], model.raw_slope[s], model.ln_prefactor[s], T)
            lkf = rc.ln_kf + model.ln_activity_forward
            lkb = rc.ln_kb + model.ln_activity_backward

            def fun(x):  # log coverages of all species; rows: scaled balances + site balance
                rf = np.exp(lkf + R @ x)
                rb = np.exp(lkb + P @ x)
                scale = np.abs(N[:, :m]).T @ (rf + rb)
                return np.append((N[:, :m].T @ (rf - rb)) / scale, np.exp(x).sum() - 1)

            sol = root(fun, np.full(m + 1, -np.log(m + 1)), method="lm", options={"xtol": 1e-14, "ftol": 1e-14, "maxiter": 20000})
            th = np.exp(sol.x)
            if np.max(np.abs(fun(sol.x))) < 1e-9:
                compared += 1
                assert np.allclose(ss.coverages[s, k], th, atol=1e-8, rtol=1e-6)
    assert compared >= 0.8 * len(model.surfaces) * len(u)  # scipy converged on most points: the check is not vacuous


def test_bdf_fallback_and_flagged_failures(demo):
    # Newton given no iterations: the fallback integrates in time (solve_ivp BDF) and polishes;
    # without the fallback the points are NaN, flagged and warned about, never filled in
    model = build_model(demo, "orr-4e-dissociative", surfaces=["ALY-01", "SAS-03"])
    u = np.linspace(0.5, 1.0, 6)
    ref = solve_steady_state(model, u)
    ss = solve_steady_state(model, u, max_iter=0, check="none")
    rep = ss.report()
    assert rep["by_bdf+newton"] > 0 and rep["failed"] == 0
    assert np.allclose(ss.coverages, ref.coverages, atol=1e-9)
    with pytest.warns(ecatlab.errors.KineticsConvergenceWarning, match="no steady state"):
        bad = solve_steady_state(model, u, max_iter=0, check="none", fallback=False)
    assert (~bad.converged).any()
    assert np.isnan(bad.coverages[~bad.converged]).all()
    pol = A.polarization_curve(bad)
    assert pol.loc[~pol["converged"], "current_density"].isna().all()


# ------------------------------------------------------------------------------------------------
# Degree of rate control
def test_degree_of_rate_control_sum_rule_and_finite_difference(demo):
    import dataclasses

    model = build_model(demo, "orr-4e", surfaces=["ALY-02", "SAS-01"])
    u = np.array([0.5, 0.8])
    ss = solve_steady_state(model, u)
    drc = A.degree_of_rate_control(ss)
    sums = drc.groupby(["surface", "potential"])["degree_of_rate_control"].sum()
    assert np.allclose(sums, 1.0, atol=1e-6)  # sum rule for one route (Stegelmann, Andreasen & Campbell, JACS 131, 8077 (2009))
    X = drc["degree_of_rate_control"].to_numpy().reshape(2, 2, model.n_steps)
    base = np.abs(A.current_density(ss))
    h = 1e-5
    for i in range(model.n_steps):
        lnA = model.ln_prefactor.copy()
        lnA[:, i] += h  # scales k_f and k_b alike: equilibrium constant unchanged
        pert = solve_steady_state(dataclasses.replace(model, ln_prefactor=lnA), u)
        fd = (np.log(np.abs(A.current_density(pert))) - np.log(base)) / h
        assert np.allclose(X[:, :, i], fd, atol=1e-3)


# ------------------------------------------------------------------------------------------------
# Multiple steady states are detected and reported
def test_multiple_steady_states_reported():
    from ecatlab.notation import Step
    from ecatlab.references import ReferenceScheme

    # Langmuir-Hinshelwood CO oxidation with dissociative O2 adsorption: the mean-field model has
    # coexisting O-poisoned and CO-poisoned states (Ziff, Gulari & Barshad, PRL 56, 2553 (1986),
    # mean-field analysis; from memory)
    scheme = ReferenceScheme()
    steps = [Step.parse(s) for s in ("O2(g) + 2 * -> 2 O*", "CO(g) + * -> CO*", "CO* + O* -> CO2(g) + 2 *")]
    table = _table({"X": {"CO*": scheme.molecule_free_energy("CO(g)") - 1.0, "O*": scheme.molecule_free_energy("O2(g)") / 2 - 1.0}})
    model = build_model(table, steps, activities={"CO(g)": 0.01, "O2(g)": 1.0, "CO2(g)": 1e-6})
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        ss = solve_steady_state(model, [0.0, 0.05], check="thorough")
    assert (ss.steady_states > 1).all()
    assert any("more than one steady state" in str(w.message) for w in caught)
    assert ss.stable.all()  # the reported state is the stable one
    pol = A.polarization_curve(ss)
    assert (pol["steady_states"] > 1).all()
    alt = ss.alternatives[(0, 0)][0]
    assert np.max(np.abs(np.exp(alt) - ss.coverages[0, 0])) > 1e-3
    with pytest.raises(KineticsInputError, match="bare steps"):
        A.onset_potentials(ss)


# ------------------------------------------------------------------------------------------------
# Input errors, flags and provenance
def test_estimated_barriers_flagged_everywhere(demo):
    model = build_model(demo, "orr-4e", surfaces=["ALY-01"])
    ss = solve_steady_state(model, [0.8])
    for frame in (A.polarization_curve(ss), A.coverage_table(ss), A.faradaic_efficiencies(ss), A.onset_potentials(ss), A.gmax_descriptor(ss)):
        assert frame.attrs["estimated_barriers"] is True
        assert "ESTIMATED" in frame.attrs["note"]
    assert (A.polarization_curve(ss)["barriers"] == "estimated").all()
    bar = pd.DataFrame({"surface": ["ALY-01"] * 4, "step": ["1", "2", "3", "4"], "G_a": [0.3, 0.3, 0.3, 0.3]})
    user = build_model(demo, "orr-4e", surfaces=["ALY-01"], barriers=bar)
    ss2 = solve_steady_state(user, [0.8])
    assert (A.polarization_curve(ss2)["barriers"] == "user").all()
    assert A.polarization_curve(ss2).attrs["estimated_barriers"] is False


def test_bad_inputs_raise_clear_errors(demo, tmp_path):
    with pytest.raises(KineticsInputError, match="not in the model"):
        build_model(demo, "orr-4e", barriers=pd.DataFrame({"step": ["CO* -> * + CO(g)"], "G_a": [0.5]}))
    with pytest.raises(KineticsInputError, match="reverse"):
        build_model(demo, "orr-4e", barriers=pd.DataFrame({"step": ["OH* -> O* + H+ + e-"], "G_a": [0.5]}))
    with pytest.raises(KineticsInputError, match="index 9"):
        build_model(demo, "orr-4e", barriers=pd.DataFrame({"step": ["9"], "G_a": [0.5]}))
    with pytest.raises(KineticsInputError, match="activity"):
        build_model(demo, "orr-4e", activities={"CO(g)": 1.0})
    with pytest.raises(KineticsInputError, match=">= 0"):
        build_model(demo, "orr-4e", activities={"O2(g)": -1.0})
    with pytest.raises(KineticsInputError, match="symmetry_factor"):
        BarrierSettings(symmetry_factor=1.5)
    csv = tmp_path / "bar.csv"
    csv.write_text("surface,step,G_a\nALY-01,1,abc\n")
    with pytest.raises(KineticsInputError, match="line"):
        build_model(demo, "orr-4e", barriers=str(csv))
    table = _table({"X": {"OH*": 1.0, "O*": 2.0}})
    with pytest.raises(MissingSpeciesError):
        build_model(table, "orr-4e")
    with pytest.raises(Exception, match="potential"):
        solve_steady_state(build_model(demo, "orr-4e"), [np.nan])


def test_activities_shift_equilibrium_potential_by_nernst(demo):
    # Nernst: U_eq(p_O2) = U_eq + (k_B T / 4e) ln p_O2 for O2 + 4(H+ + e-) -> 2 H2O (Bard & Faulkner ch. 2)
    model = build_model(demo, "orr-4e", activities={"O2(g)": 0.21})
    info = model.pathways[0]
    assert info.equilibrium_potential_at_activities - info.equilibrium_potential == pytest.approx(KT / 4 * math.log(0.21), abs=1e-12)
    ss = solve_steady_state(model, [info.equilibrium_potential_at_activities])
    rel = np.abs(ss.net_rates[:, 0]) / (ss.forward_rates[:, 0] + ss.backward_rates[:, 0])
    assert rel.max() < 1e-8


def test_lateral_interactions_change_coverages_and_keep_balance(demo):
    base = build_model(demo, "orr-4e", surfaces=["ALY-03"])
    inter = build_model(demo, "orr-4e", surfaces=["ALY-03"], interactions={("OH*", "OH*"): 0.3, ("O*", "OH*"): 0.1})
    u = np.linspace(0.5, 1.0, 11)
    s0 = solve_steady_state(base, u)
    s1 = solve_steady_state(inter, u)
    assert s1.converged.all()
    assert np.allclose(s1.coverages.sum(axis=-1), 1.0, atol=1e-12)
    i = base.species.index("OH*")
    assert np.all(s1.coverages[0, :, i] <= s0.coverages[0, :, i] + 1e-12)  # repulsion lowers OH* coverage
    assert not np.allclose(s1.coverages, s0.coverages)
    # still detailed-balance consistent at U_eq
    s2 = solve_steady_state(inter, [inter.pathways[0].equilibrium_potential])
    rel = np.abs(s2.net_rates) / (s2.forward_rates + s2.backward_rates)
    assert rel.max() < 1e-8


def test_temperature_reaches_rate_constants(demo):
    m1 = build_model(demo, "her-volmer-heyrovsky", surfaces=["ALY-01"], temperature=298.15)
    m2 = build_model(demo, "her-volmer-heyrovsky", surfaces=["ALY-01"], temperature=330.0)
    assert m2.ln_prefactor[0, 0] - m1.ln_prefactor[0, 0] == pytest.approx(math.log(330.0 / 298.15), abs=1e-12)
    assert m2.conditions.temperature == 330.0


def test_routh_hurwitz_stability_matches_eigenvalues():
    from ecatlab.kinetics.solver import _routh_hurwitz_stable

    rng = np.random.default_rng(1)
    for m in (1, 2, 3):
        G = rng.normal(size=(5000, m, m))
        ref = np.all(np.linalg.eigvals(G).real < 0, axis=1)  # numpy.linalg eigenvalues as the reference
        assert np.array_equal(_routh_hurwitz_stable(G), ref)
