"""``ecatlab currents``: steady-state microkinetic polarization curves from an energy file.

Builds a kinetic model (:func:`ecatlab.kinetics.build_model`) from one or more pathways, solves the
steady state on a potential grid for every surface, prints the onset potential at a current
density per surface (and where barriers were estimated), and writes the polarization table
(CSV), optionally the coverages / faradaic efficiencies and a figure. Results are theoretical
estimates; estimated barriers are flagged in every output.
"""

from __future__ import annotations

import argparse
import pathlib

from ecatlab.cli import _options as opt
from ecatlab.errors import KineticsInputError



def register(sub: argparse._SubParsersAction) -> None:
    p = sub.add_parser(
        "currents",
        help="steady-state microkinetic polarization curves, Tafel slopes, faradaic efficiency and onset potentials",
        description=(
            "Mean-field microkinetic model on the CHE free energies of FILE: steady-state coverages, current density, "
            "Tafel slope, faradaic efficiency and onset potential per surface on a potential grid. Barriers come from "
            "--barriers (CSV: surface, step, G_a[, potential, symmetry_factor, prefactor]) or are estimated (flagged). "
            "Theoretical estimates only."
        ),
    )
    p.add_argument("file", help="energy table (CSV: surface, species, G or E + ZPE/CpdT/TS[/solvation], eV)")
    p.add_argument("--pathway", "-p", nargs="+", required=True, metavar="KEY", help="built-in pathway key(s); several = competing products (e.g. orr-4e orr-2e)")
    p.add_argument("--potentials", nargs=3, type=opt.finite_float, metavar=("START", "STOP", "STEP"), default=None,
                   help="potential grid in V on --scale (default: U_eq - 1 V to U_eq + 0.1 V in 10 mV steps, reversed for oxidations)")
    p.add_argument("--barriers", metavar="CSV", help="transition-state data: surface, step (equation or 1-based index), G_a [eV], optional potential [V], symmetry_factor, prefactor [1/s]")
    p.add_argument("--activity", nargs="+", default=[], metavar="MOLECULE=A", help="activities, gases p/1 bar, solutes c/(1 mol/L), e.g. O2(g)=0.21 H2O2(aq)=1e-6 (default 1)")
    p.add_argument("--intrinsic-barrier", type=opt.finite_float, default=0.3, help="estimated proton-electron transfer barrier at dG = 0, eV (default 0.3; placeholder)")
    p.add_argument("--symmetry-factor", type=opt.finite_float, default=0.5, help="symmetry factor beta of estimated barriers (default 0.5)")
    p.add_argument("--site-density", type=opt.finite_float, default=1e15, help="active sites per cm^2 (default 1e15, common practice)")
    p.add_argument("--onset-current", type=opt.finite_float, default=10.0, help="current density defining the onset potential, mA/cm^2 (default 10)")
    p.add_argument("--check", choices=("sweep", "thorough", "none"), default="sweep", help="multiple-steady-state check (default sweep)")
    p.add_argument("--surface", nargs="+", metavar="NAME", help="only these surfaces")
    p.add_argument("--pH", type=opt.finite_float, default=0.0, help="pH (default 0)")
    p.add_argument("--scale", default="RHE", type=str.upper, choices=("RHE", "SHE"), help="potential scale (default RHE; case-insensitive)")
    p.add_argument("-T", "--temperature", type=opt.temperature, default=298.15, help="temperature in K (default 298.15)")
    p.add_argument("-o", "--output", metavar="CSV", help="write the polarization table (one row per surface and potential)")
    p.add_argument("--coverages", metavar="CSV", help="write the coverage table")
    p.add_argument("--efficiency", metavar="CSV", help="write partial currents and faradaic efficiencies")
    p.add_argument("--figure", metavar="FILE", help="save polarization + Tafel figure (svg, pdf, png)")
    p.add_argument("--force", action="store_true", help="overwrite existing output files")
    p.set_defaults(func=run)


def _activities(items) -> dict[str, float]:
    out = {}
    for item in items:
        key, sep, value = item.partition("=")
        if not sep or not key.strip():
            raise KineticsInputError(f"--activity {item!r}: write MOLECULE=ACTIVITY, e.g. O2(g)=0.21")
        try:
            out[key.strip()] = float(value)
        except ValueError:
            raise KineticsInputError(f"--activity {item!r}: {value!r} is not a number") from None
    return out


def _targets(args, inputs) -> list[pathlib.Path]:
    """Every output validated before the model is solved (:func:`ecatlab.safe_io.check_output`)."""
    from ecatlab.safe_io import check_output

    inputs = [i for i in inputs if i]
    targets = [check_output(value, force=args.force, inputs=inputs, option=f"--{opt}")
               for opt in ("output", "coverages", "efficiency", "figure") if (value := getattr(args, opt))]
    if len(set(p.resolve() for p in targets)) != len(targets):
        raise KineticsInputError("two outputs point to the same file; give each its own name")
    return targets


def _write_csv(frame, path: str, force: bool = True) -> None:
    """The table with its conditions as a ``#`` line, through :func:`ecatlab.safe_io.write_csv`
    (atomic; text cells neutralised against formula injection). ``_targets`` checked the names."""
    from ecatlab.safe_io import write_csv

    a = frame.attrs
    header = (f"{a.get('quantity', '')}; {a.get('note', '')}; site density {a.get('site_density_per_cm2')} cm^-2; "
              f"scale {a.get('scale')}, pH {a.get('pH')}, {a.get('temperature')} K; theoretical estimates")
    write_csv(frame, path, header_lines=[header], force=force, index=False)


def run(args: argparse.Namespace) -> int:
    import numpy as np

    from ecatlab.che.conditions import Conditions
    from ecatlab.energies import read_energies
    from ecatlab.kinetics import BarrierSettings, build_model, solve_steady_state
    from ecatlab.kinetics import analysis as A

    _targets(args, [args.file, args.barriers])
    cond = Conditions(args.scale, args.pH, args.temperature)
    table = read_energies(args.file, temperature=args.temperature)
    settings = BarrierSettings(intrinsic_barrier=args.intrinsic_barrier, symmetry_factor=args.symmetry_factor, site_density=args.site_density)
    model = build_model(table, args.pathway, cond, barriers=args.barriers, activities=_activities(args.activity), settings=settings, surfaces=args.surface)
    info = model.pathways[0]
    if args.potentials is None:
        u_eq = info.equilibrium_potential_at_activities
        lo, hi = (u_eq - 1.0, u_eq + 0.1) if info.direction == "reduction" else (u_eq - 0.1, u_eq + 1.0)
        u = np.round(np.arange(lo, hi + 1e-9, 0.01), 6)
    else:
        start, stop, step = args.potentials
        if step == 0 or (stop - start) / step < 0:
            raise KineticsInputError("--potentials START STOP STEP: STEP must be non-zero and point from START to STOP")
        n = int(np.floor((stop - start) / step + 1e-9)) + 1
        if n > 20001:
            raise KineticsInputError(f"--potentials gives {n} points; use at most 20001")
        u = start + step * np.arange(n)
    ss = solve_steady_state(model, u, check=args.check)
    pol = A.polarization_curve(ss)
    summary = A.kinetics_summary(ss, args.onset_current)
    rep = ss.report()
    print(f"{len(model.surfaces)} surfaces x {u.size} potentials ({u.min():.3f} to {u.max():.3f} V vs {cond.scale}), {model.n_steps} steps; "
          f"{rep['converged']}/{rep['points']} converged, {rep['multiple_steady_states']} with multiple steady states")
    if model.any_estimated:
        print("ESTIMATED barriers (" + model.settings.describe() + ")")
    print(f"onset potential at {args.onset_current:g} mA/cm^2 ({info.name}, U_eq = {info.equilibrium_potential_at_activities:.3f} V vs {cond.scale}):")
    for r in summary.itertuples():
        onset = (f"{r.onset_potential:.3f} V" + (" (grid edge)" if r.at_grid_edge else "")) if r.reached else "not reached"
        print(f"  {r.surface:<16} {onset:>12}   barriers {r.barriers}")
    if args.output:
        _write_csv(pol, args.output)
        print(f"wrote {args.output}")
    if args.coverages:
        _write_csv(A.coverage_table(ss), args.coverages)
        print(f"wrote {args.coverages}")
    if args.efficiency:
        _write_csv(A.faradaic_efficiencies(ss), args.efficiency)
        print(f"wrote {args.efficiency}")
    if args.figure:
        import matplotlib

        matplotlib.use("Agg")
        import matplotlib.pyplot as plt

        from ecatlab.plotting.kinetics import plot_polarization_tafel

        fig = plot_polarization_tafel(pol, surfaces=list(model.surfaces)[:8]).figure
        from ecatlab.safe_io import atomic_path

        target = pathlib.Path(args.figure)
        try:
            with atomic_path(target, force=True, option="--figure", what="figure") as tmp:
                fig.savefig(tmp, bbox_inches="tight", format=target.suffix.lstrip(".") or "png")
        finally:
            plt.close(fig)
        print(f"wrote {args.figure}")
    return 0
