"""``ecatlab pourbaix``: the most stable surface state (clean, H*, OH*, O* at several coverages, ...)
over potential and pH, the state at each pathway's own limiting potential, and the map as a figure."""

from __future__ import annotations

import argparse
import json

from ecatlab.cli import _options as opt


#: Widest potential range of the map, V (electrochemical stability questions live within a few volts).
MAX_RANGE_V = 20.0


def register(sub: argparse._SubParsersAction) -> None:
    p = sub.add_parser(
        "pourbaix",
        help="surface Pourbaix diagram: stable surface state vs potential and pH; flags pathways whose surface is not stable at U_L",
        description=(
            "Read surface states (CSV: surface, state, adsorbates, sites, G in eV per cell [, coverage in ML]) and report the most "
            "stable state of every surface at the given potentials and pH, and the potentials where it changes. With --energies and "
            "--pathway, the limiting-potential table gains the state at each pathway's own U_L and a flag where the clean surface "
            "the pathway assumes is not the stable one. -o draws the map of one surface."
        ),
    )
    p.add_argument("states", nargs="?", help="surface-state table (CSV); omit with --demo")
    p.add_argument("--demo", action="store_true", help="use the bundled ILLUSTRATIVE surface states (invented numbers)")
    p.add_argument("--energies", metavar="FILE", help="energy table for the pathways' limiting potentials")
    p.add_argument("--pathway", "-p", nargs="+", default=[], metavar="KEY", help="pathway keys, e.g. orr-4e oer-4e (needs --energies, or the demo energies with --demo)")
    p.add_argument("--surface", nargs="+", metavar="NAME", help="surfaces (default all)")
    p.add_argument("--potential", "-U", nargs="+", type=opt.finite_float, default=[0.0], metavar="V", help="potentials at which to report the stable state (V vs scale; default 0)")
    p.add_argument("--pH", type=opt.finite_float, default=0.0, help="pH (default 0)")
    p.add_argument("--scale", choices=("RHE", "SHE"), default="RHE", type=str.upper, help="potential scale (default RHE)")
    p.add_argument("-T", "--temperature", type=opt.temperature, default=298.15, help="temperature in K (default 298.15)")
    p.add_argument("--range", nargs=2, type=opt.finite_float, default=(-1.0, 2.0), metavar=("UMIN", "UMAX"), help="potential range of the map, V (default -1 2)")
    p.add_argument("--tolerance", type=opt.finite_float, default=0.0, metavar="EV", help="eV per cell within which the clean surface counts as stable (default 0)")
    p.add_argument("-o", "--output", metavar="FIGURE", help="save the map of the (one) chosen surface: svg, pdf or png")
    p.add_argument("--force", action="store_true", help="overwrite an existing figure")
    p.add_argument("--json", action="store_true", help="print the tables as JSON")
    p.set_defaults(func=run)


def _transitions(states, surface, pmap) -> list[tuple[float, str, str]]:
    """(potential, from, to) along the potential axis at the map's (single) pH, from the kernel's onsets."""
    from ecatlab.pourbaix import transition_potential

    row = pmap.stable[0]
    out = []
    for j in range(1, len(row)):
        if row[j] != row[j - 1]:
            a, b = pmap.states[row[j - 1]], pmap.states[row[j]]
            u = transition_potential(states, surface, a, b, pH=float(pmap.pH[0]), scale=pmap.scale, temperature=pmap.temperature)
            out.append((u, a, b))
    return out


def run(args: argparse.Namespace) -> int:
    import numpy as np

    from ecatlab.safe_io import atomic_path, check_output
    from ecatlab.errors import SurfaceStateError
    from ecatlab.pourbaix import demo_surface_states, flag_surface_states, limiting_potential_vs_pH, pourbaix_map, read_surface_states, stable_states

    low, high = args.range
    if not low < high:
        raise SurfaceStateError("<command line>", f"--range {low:g} {high:g}: UMIN must be below UMAX, e.g. --range -1 2")
    if high - low > MAX_RANGE_V:
        raise SurfaceStateError("<command line>", f"--range {low:g} {high:g} spans {high - low:g} V; give at most "
                                f"{MAX_RANGE_V:g} V (the map is drawn every 2 mV), e.g. --range -1 2")
    if args.tolerance < 0:
        raise SurfaceStateError("<command line>", f"--tolerance {args.tolerance:g}: give a number of eV >= 0")
    if bool(args.states) == bool(args.demo):
        raise SurfaceStateError("<command line>", "give a surface-state CSV file or --demo (one of them)")
    inputs = [i for i in (args.states, args.energies) if i]
    target = check_output(args.output, force=args.force, inputs=inputs, what="figure") if args.output else None
    states = demo_surface_states(args.temperature) if args.demo else read_surface_states(args.states, temperature=args.temperature)
    names = args.surface or states.surfaces
    if target is not None and len(names) != 1:
        raise SurfaceStateError(states.source, f"-o draws one surface; choose it with --surface (surfaces: {', '.join(names[:8])}...)")
    energies = None
    if args.pathway:
        from ecatlab.energies import read_energies

        if args.energies:
            energies = read_energies(args.energies, temperature=args.temperature)
        elif args.demo:
            from ecatlab.demo import demo_energies

            energies = demo_energies(args.temperature)
        else:
            raise SurfaceStateError(states.source, "--pathway needs --energies FILE (the adsorption energies of the pathway)")
    tables = [stable_states(states, u, args.pH, args.scale, args.temperature, names) for u in args.potential]
    grid = np.linspace(args.range[0], args.range[1], int(round((args.range[1] - args.range[0]) / 0.002)) + 1)
    transitions = {s: _transitions(states, s, pourbaix_map(states, s, grid, [args.pH], args.scale, args.temperature)) for s in names}
    flagged = None
    if energies is not None:
        from ecatlab.che.engine import limiting_potentials

        lp = limiting_potentials(energies, args.pathway, pH=args.pH, scale=args.scale, temperature=args.temperature,
                                 surfaces=[s for s in names if s in set(energies.surfaces)])
        flagged = flag_surface_states(lp, states, tolerance=args.tolerance)
    if args.json:
        import pandas as pd

        out = {"conditions": {"pH": args.pH, "scale": args.scale, "temperature": args.temperature}, "references": states.scheme.describe(),
               "source": states.source,
               "stable_states": json.loads(pd.concat(tables).to_json(orient="records")),
               "transitions": {s: [{"potential": u, "from": a, "to": b} for u, a, b in t] for s, t in transitions.items()}}
        if flagged is not None:
            cols = ["surface", "pathway", "limiting_potential", "surface_state_at_U_L", "surface_state_coverage", "assumed_state_margin",
                    "assumed_state_stable", "surface_state_flag"]
            out["limiting_potentials"] = json.loads(flagged[cols].to_json(orient="records"))
        print(json.dumps(out, indent=2, default=str))
    else:
        print(f"# Surface states from {states.source}; pH {args.pH:g}, {args.temperature:g} K, potentials in V vs {args.scale}")
        print(f"# {states.scheme.describe()}. Formation free energies in eV per cell. Theoretical estimates (CHE, thermodynamics only).")
        for t in tables:
            print(f"stable state at U = {float(t['potential'].iloc[0]):g} V:")
            print(t[["surface", "stable_state", "coverage", "formation_dG", "clean_margin"]].to_string(index=False, float_format=lambda v: f"{v:.3f}"))
        print(f"state changes with potential ({args.range[0]:g} to {args.range[1]:g} V):")
        for s, t in transitions.items():
            text = "; ".join(f"{a} -> {b} at {u:.3f} V" for u, a, b in t) or "none"
            print(f"  {s}: {text}")
        if flagged is not None:
            print("surface state at each pathway's own limiting potential:")
            cols = ["surface", "pathway", "limiting_potential", "surface_state_at_U_L", "surface_state_coverage", "assumed_state_margin", "surface_state_flag"]
            print(flagged[cols].to_string(index=False, float_format=lambda v: f"{v:.3f}"))
    if target is not None:
        import matplotlib

        matplotlib.use("Agg")
        import matplotlib.pyplot as plt

        from ecatlab.plotting.pourbaix import plot_pourbaix

        surface = names[0]
        pmap = pourbaix_map(states, surface, np.linspace(args.range[0], args.range[1], 401), np.linspace(0, 14, 141), args.scale, args.temperature)
        lines = limiting_potential_vs_pH(energies, args.pathway, surface, scale=args.scale, temperature=args.temperature) if energies is not None and surface in energies.surfaces else None
        drawn = plot_pourbaix(pmap, limiting=lines)
        with atomic_path(target, force=args.force, inputs=inputs, what="figure") as tmp:
            drawn.figure.savefig(tmp, bbox_inches="tight", format=target.suffix.lstrip(".").lower() or "png")
        plt.close(drawn.figure)
        print(f"figure written to {args.output}")
    return 0
