"""``ecatlab volcano``: a limiting-potential volcano from an energy file, with its apex and fit statistics."""

from __future__ import annotations

import argparse
import json
import os

from ecatlab.errors import ScalingError


def register(sub: argparse._SubParsersAction) -> None:
    p = sub.add_parser(
        "volcano",
        help="limiting-potential volcano of a pathway vs a descriptor (scaling relations fitted to the file)",
        description=(
            "Fit scaling relations of the pathway's adsorbates to the descriptor across the surfaces of FILE, "
            "print the fit statistics and the apex (optimal descriptor, best limiting potential, minimum overpotential), "
            "and draw the volcano with the surfaces at their exact limiting potentials."
        ),
    )
    p.add_argument("file", help="energy table (CSV: surface, species, G or E + ZPE/CpdT/TS[/solvation], eV)")
    p.add_argument("--pathway", "-p", required=True, metavar="KEY", help="built-in pathway key, e.g. orr-4e (see 'ecatlab pathways')")
    p.add_argument("--descriptor", "-d", required=True, help="descriptor adsorbate or combination, e.g. 'OH*' or 'O* - OH*'")
    p.add_argument("--fix-slope", nargs="+", default=[], metavar="X*=SLOPE", help="fix fitted slopes, e.g. OOH*=1 (fit only the intercept)")
    p.add_argument("--fit-against", metavar="X*", help="adsorbate to fit the other adsorbates against (default: the first adsorbate of the descriptor), e.g. OH* for -d 'O* - OH*'")
    p.add_argument("--relations", metavar="JSON", help="given scaling relations (list of ScalingRelation.to_dict() records); they take precedence over fits")
    p.add_argument("--span", nargs=2, type=float, metavar=("LOW", "HIGH"), help="descriptor range in eV (default: surfaces ± 0.5 eV)")
    p.add_argument("--pH", type=float, default=0.0, help="pH (default 0)")
    p.add_argument("--scale", choices=("RHE", "SHE"), default="RHE", type=str.upper, help="potential scale (default RHE)")
    p.add_argument("--temperature", type=float, default=298.15, help="temperature in K (default 298.15)")
    p.add_argument("--style", choices=("single", "double", "notebook"), default="notebook", help="figure size preset (default notebook)")
    p.add_argument("--output", "-o", metavar="FIGURE", help="save the volcano (format from the extension: svg, pdf, png)")
    p.add_argument("--json", action="store_true", help="print the summary and the fit table as JSON instead of text")
    p.set_defaults(func=run)


def _fixed(items) -> dict[str, float]:
    out = {}
    for item in items:
        key, sep, value = item.partition("=")
        try:
            out[key.strip()] = float(value)
        except ValueError:
            raise ScalingError(f"--fix-slope {item!r}: write ADSORBATE=SLOPE, e.g. OOH*=1") from None
        if not sep or not key.strip():
            raise ScalingError(f"--fix-slope {item!r}: write ADSORBATE=SLOPE, e.g. OOH*=1")
    return out


def _relations(path: str | None):
    from ecatlab.scaling import ScalingRelation

    if not path:
        return []
    try:
        with open(path, encoding="utf-8") as fh:
            data = json.load(fh)
    except json.JSONDecodeError as exc:
        raise ScalingError(f"{path}: not valid JSON ({exc.msg}, line {exc.lineno})") from None
    if isinstance(data, dict):
        data = [data]
    return [ScalingRelation.from_dict(d) for d in data]


def run(args: argparse.Namespace) -> int:
    from ecatlab.energies import read_energies
    from ecatlab.scaling import scaling_table
    from ecatlab.volcano import volcano

    table = read_energies(args.file, temperature=args.temperature)
    curve = volcano(
        table, args.pathway, args.descriptor, relations=_relations(args.relations), fixed_slopes=_fixed(args.fix_slope),
        pH=args.pH, scale=args.scale, temperature=args.temperature, span=tuple(args.span) if args.span else None, fit_against=args.fit_against,
    )
    summary = curve.summary()
    fits = scaling_table(curve.relations)
    if args.json:
        print(json.dumps({"summary": json.loads(summary.to_json(orient="records")), "scaling": json.loads(fits.to_json(orient="records")),
                          "surfaces": json.loads(curve.surfaces.to_json(orient="records")), "conditions": curve.conditions}, indent=2, default=str))
    else:
        a = curve.apex
        print(f"# Volcano of {curve.pathway.name} vs {curve.descriptor.text}; pH {args.pH:g}, {args.temperature:g} K, potentials vs {args.scale}")
        print(f"# {table.scheme.describe()}. Source: {table.source}. Theoretical estimates (CHE, thermodynamics only).")
        print(f"apex: descriptor {a.descriptor[0]:.3f} eV, best limiting potential {a.limiting_potential:.3f} V, "
              f"minimum overpotential {a.overpotential:.3f} V (U_eq {curve.equilibrium_potential:.3f} V)")
        print(f"steps meeting at the apex: {'; '.join(a.determining_steps)}")
        if a.at_boundary:
            print("note: the apex lies at the edge of the descriptor range; widen it with --span")
        print("scaling relations (eV; slope/intercept ± standard error):")
        for r in curve.relations:
            if r.is_fitted:
                slopes = ", ".join(f"{a_:.3f}" + (" (fixed)" if f else f" ± {se:.3f}") for a_, se, f in zip(r.slopes, r.slope_stderr, r.fixed))
                print(f"  {r.equation}  slope {slopes}; intercept ± {r.intercept_stderr:.3f}; R² {r.r_squared:.3f}; RMSE {r.rmse:.3f} eV; n {r.n_surfaces}")
            else:
                print(f"  {r.equation}  (given: {r.source})")
        surf = curve.surfaces[["surface", "descriptor", "limiting_potential", "scaling_limiting_potential", "determining_step"]]
        print("surfaces (descriptor eV; exact and scaling-predicted limiting potential V):")
        print(surf.to_string(index=False, float_format=lambda v: f"{v:.3f}"))
    if args.output:
        import matplotlib

        matplotlib.use("Agg")
        from ecatlab.plotting.volcano import plot_volcano

        ax = plot_volcano(curve, style=args.style)
        folder = os.path.dirname(os.path.abspath(args.output))
        if not os.path.isdir(folder):
            raise ScalingError(f"{args.output}: folder {folder} does not exist")
        ax.figure.savefig(args.output, bbox_inches="tight")
        print(f"figure written to {args.output}")
    return 0
