"""Steady-state microkinetics: 1,000 surfaces x 100 potentials, 4e ORR.

Run:  python tests/benchmarks/bench_kinetics.py [--surfaces 1000] [--potentials 100] [--baseline-surfaces 20]

Measured in one process on an ILLUSTRATIVE synthetic screening set (OH*, O*, OOH* drawn around
the usual scaling relations, seeded):

* ecatlab: ``build_model`` + ``solve_steady_state`` (batched log-space Newton over all surfaces,
  continuation along the potential, default multiple-steady-state check = ascending and
  descending sweeps) + the current density read-out;
* baseline: what a competent user writes by hand: for each surface, for each potential (ascending,
  the previous solution as the start), ``scipy.optimize.root`` (hybr) on the same log-coverage
  equations with the analytic Jacobian, then the current. Run on ``--baseline-surfaces`` surfaces
  and extrapolated linearly to all of them (per-surface cost does not depend on the others);
  the script says so in its output.

Both sides must give the same coverages (max |d theta| < 1e-6) and currents (rel. 1e-6 where
|j| > 1e-12 mA/cm^2) on the baseline subset. Goals (issue 15): ecatlab under 5 s, at least 20x
faster than the baseline. Exit code 1 when a goal or the agreement is missed.
"""

from __future__ import annotations

import argparse
import sys
import time

import numpy as np
import pandas as pd


def synthetic_table(n: int, seed: int = 0):
    from ecatlab.energies import EnergyTable

    rng = np.random.default_rng(seed)
    oh = rng.uniform(0.3, 1.6, n)
    o = 2.0 * oh + rng.normal(0.0, 0.15, n)
    ooh = oh + 3.2 + rng.normal(0.0, 0.1, n)
    mat = pd.DataFrame({"OH*": oh, "O*": o, "OOH*": ooh}, index=[f"ILL-{i:04d}" for i in range(n)])
    return EnergyTable.from_matrix(mat, source="ILLUSTRATIVE synthetic screening set")


def baseline(model, potentials, surfaces):
    """Per-surface, per-potential scipy.optimize.root loop (hybr, analytic Jacobian, continuation)."""
    from scipy.optimize import root

    from ecatlab.constants import ELEMENTARY_CHARGE
    from ecatlab.kinetics.rates import rate_constants

    R, P = model.reactant_orders, model.product_orders
    N = P - R
    m = model.n_species - 1
    Na = N[:, :m]
    dGs = model.step_free_energies(potentials)
    order = np.argsort(potentials)
    theta = np.full((len(surfaces), len(potentials), m + 1), np.nan)
    current = np.full((len(surfaces), len(potentials)), np.nan)
    failures = 0
    for si, s in enumerate(surfaces):
        x = np.full(m + 1, -np.log(m + 1))
        for k in order:
            rc = rate_constants(dGs[s, k], model.raw_offset[s], model.raw_slope[s], model.ln_prefactor[s], model.temperature)
            lkf = rc.ln_kf + model.ln_activity_forward
            lkb = rc.ln_kb + model.ln_activity_backward

            def gross(x):
                return np.abs(Na).T @ (np.exp(lkf + R @ x) + np.exp(lkb + P @ x)) + 1e-300

            scale = gross(x)  # row scale frozen per solve, so the analytic Jacobian is exact

            def fun(x):
                rf = np.exp(lkf + R @ x)
                rb = np.exp(lkb + P @ x)
                F = np.append((Na.T @ (rf - rb)) / scale, np.exp(x).sum() - 1.0)
                J = np.vstack([(Na.T @ (rf[:, None] * R - rb[:, None] * P)) / scale[:, None], np.exp(x)[None]])
                return F, J

            sol = None
            for start in (x, x, np.full(m + 1, -np.log(m + 1))):
                scale = gross(start)
                trial = root(fun, start, jac=True, method="hybr", options={"xtol": 1e-14})
                scale = gross(trial.x)  # check with the scale at the solution, as ecatlab does
                if np.max(np.abs(fun(trial.x)[0])) < 1e-10:
                    sol = trial
                    break
                x = trial.x  # restart from where it stopped, with a refreshed scale
            if sol is None:
                failures += 1
                continue
            x = sol.x
            theta[si, k] = np.exp(x)
            rf = np.exp(lkf + R @ x)
            rb = np.exp(lkb + P @ x)
            # slowest-step read-out of the cycle rate (a linear cycle: every step carries the same net rate)
            net = rf - rb
            i_best = np.argmax(np.abs(net) / (rf + rb))
            current[si, k] = -ELEMENTARY_CHARGE * model.settings.site_density * float(np.sum(model.electrons)) * net[i_best] * 1e3
    return theta, current, failures


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--surfaces", type=int, default=1000)
    ap.add_argument("--potentials", type=int, default=100)
    ap.add_argument("--baseline-surfaces", type=int, default=20)
    ap.add_argument("--goal-seconds", type=float, default=5.0)
    ap.add_argument("--goal-ratio", type=float, default=20.0)
    args = ap.parse_args(argv)

    import warnings

    from ecatlab.kinetics import build_model, solve_steady_state
    from ecatlab.kinetics.analysis import current_density

    table = synthetic_table(args.surfaces)
    u = np.linspace(0.3, 1.2, args.potentials)
    build_model(synthetic_table(5), "orr-4e")  # warm imports (scipy, pymatgen) outside the timing

    t0 = time.perf_counter()
    model = build_model(table, "orr-4e")
    with warnings.catch_warnings():
        warnings.simplefilter("error")  # a non-converged point would be a KineticsConvergenceWarning
        ss = solve_steady_state(model, u)
    j = current_density(ss)
    t_ecat = time.perf_counter() - t0
    report = ss.report()

    nb = min(args.baseline_surfaces, args.surfaces)
    subset = np.linspace(0, args.surfaces - 1, nb).round().astype(int)
    t0 = time.perf_counter()
    theta_b, j_b, failures = baseline(model, u, subset)
    t_base_sub = time.perf_counter() - t0
    t_base = t_base_sub * args.surfaces / nb

    d_theta = np.nanmax(np.abs(ss.coverages[subset] - theta_b))
    jj = j[subset]
    big = np.abs(jj) > 1e-12
    rel_j = np.nanmax(np.abs(jj[big] - j_b[big]) / np.abs(jj[big])) if big.any() else 0.0
    ratio = t_base / t_ecat
    print(f"4e ORR steady state, {args.surfaces} surfaces x {args.potentials} potentials (ILLUSTRATIVE synthetic data)")
    print(f"  ecatlab (build + solve + current): {t_ecat:8.3f} s   converged {report['converged']}/{report['points']}, "
          f"multiple states {report['multiple_steady_states']}, max residual {report['max_residual']:.1e}")
    print(f"  baseline scipy.optimize.root loop: {t_base_sub:8.3f} s on {nb} surfaces -> {t_base:8.1f} s extrapolated to {args.surfaces} "
          f"(linear in the number of surfaces; {failures} baseline failures)")
    print(f"  ratio baseline/ecatlab: {ratio:8.1f}x   (goals: ecatlab < {args.goal_seconds:g} s, ratio >= {args.goal_ratio:g}x)")
    print(f"  agreement on the subset: max |d theta| = {d_theta:.2e}, max rel. |d j| = {rel_j:.2e}")
    ok = True
    if not (d_theta < 1e-6 and rel_j < 1e-6):
        print("FAIL: the two sides disagree")
        ok = False
    if report["failed"]:
        print("FAIL: ecatlab left points unconverged")
        ok = False
    if t_ecat >= args.goal_seconds:
        print(f"FAIL: ecatlab took {t_ecat:.2f} s >= {args.goal_seconds:g} s")
        ok = False
    if ratio < args.goal_ratio:
        print(f"FAIL: ratio {ratio:.1f}x < {args.goal_ratio:g}x")
        ok = False
    print("OK" if ok else "MISSED")
    return 0 if ok else 1


if __name__ == "__main__":
    sys.exit(main())
