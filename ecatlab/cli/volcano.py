"""``ecatlab volcano``: a limiting-potential volcano from an energy file, with its apex and fit statistics."""

from __future__ import annotations

import argparse
import json

from ecatlab.cli import _options as opt
from ecatlab.errors import ScalingError, clip, clip_path


#: Narrowest and widest descriptor range of --span, eV (common practice, no source: adsorption free
#: energies of one descriptor across surfaces span a few eV; a range below 1 meV draws no volcano).
MIN_SPAN_EV, MAX_SPAN_EV = 1e-3, 50.0


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
    opt.add_pathways(p, single=True)
    p.add_argument("--descriptor", "-d", required=True, help="descriptor adsorbate or combination, e.g. 'OH*' or 'O* - OH*'")
    p.add_argument("--fix-slope", nargs="+", default=[], metavar="X*=SLOPE", help="fix fitted slopes, e.g. OOH*=1 (fit only the intercept)")
    p.add_argument("--fit-against", metavar="X*", help="adsorbate to fit the other adsorbates against (default: the first adsorbate of the descriptor), e.g. OH* for -d 'O* - OH*'")
    p.add_argument("--relations", metavar="JSON", help="given scaling relations (list of ScalingRelation.to_dict() records); they take precedence over fits")
    p.add_argument("--span", nargs=2, type=opt.finite_float, metavar=("LOW", "HIGH"), help="descriptor range in eV (default: surfaces ± 0.5 eV)")
    opt.add_conditions(p)
    opt.add_surface(p)
    p.add_argument("--style", choices=("single", "double", "notebook"), default="notebook", help="figure size preset (default notebook)")
    opt.add_output(p, "volcano figure to save (.svg, .pdf or .png)", metavar="FIGURE")
    p.add_argument("--json", action="store_true", help="print the summary and the fit table as JSON instead of text")
    p.set_defaults(func=run)


def _relations(path: str | None):
    from ecatlab.scaling import ScalingRelation

    if not path:
        return []
    shown = clip_path(path)
    try:
        with open(path, "rb") as fh:
            raw = fh.read()
    except FileNotFoundError:
        raise ScalingError(f"--relations {shown}: file not found; give a JSON file of ScalingRelation.to_dict() records") from None
    except IsADirectoryError:
        raise ScalingError(f"--relations {shown}: is a folder; give a JSON file") from None
    try:
        data = json.loads(raw.decode("utf-8-sig"))
    except UnicodeDecodeError as exc:
        raise ScalingError(f"--relations {shown}: not UTF-8 text (byte offset {exc.start}); give a JSON file") from None
    except json.JSONDecodeError as exc:
        raise ScalingError(f"{shown}: not valid JSON ({exc.msg}, line {exc.lineno})") from None
    if isinstance(data, dict):
        data = [data]
    if not isinstance(data, list):
        raise ScalingError(f"--relations {shown}: expected a list of relation records (objects), found {type(data).__name__}")
    out = []
    for i, record in enumerate(data, start=1):
        if not isinstance(record, dict):
            raise ScalingError(f"--relations {shown}, record {i}: expected an object from ScalingRelation.to_dict(), found {type(record).__name__}")
        try:
            out.append(ScalingRelation.from_dict(record))
        except ScalingError as exc:
            raise ScalingError(f"--relations {shown}, record {i}: {exc}") from None
        except (TypeError, ValueError, AttributeError, KeyError) as exc:
            raise ScalingError(f"--relations {shown}, record {i}: a field has the wrong type ({clip(exc)}); "
                               "write the records with ScalingRelation.to_dict()") from None
    return out


def run(args: argparse.Namespace) -> int:
    opt.check_input_file(args.file)
    inputs = [args.file, args.pathway_file, args.relations]
    opt.output_target(args, ("svg", "pdf", "png"), inputs, what="volcano figure")
    if bool(args.pathway) == bool(args.pathway_file):
        raise ScalingError("give one pathway: --pathway KEY or --pathway-file FILE (see 'ecatlab pathways')")
    (pathway,) = opt.pathway_list(args)
    if args.span and not args.span[0] < args.span[1]:
        raise ScalingError(f"--span {args.span[0]:g} {args.span[1]:g}: LOW must be below HIGH, e.g. --span -1 2")
    if args.span and not MIN_SPAN_EV <= args.span[1] - args.span[0] <= MAX_SPAN_EV:
        raise ScalingError(f"--span {args.span[0]:g} {args.span[1]:g}: the descriptor range must be {MIN_SPAN_EV:g} to "
                           f"{MAX_SPAN_EV:g} eV wide (adsorption free energies span a few eV), e.g. --span -1 2")
    relations = _relations(args.relations)
    fixed = opt.number_pairs(args.fix_slope, "--fix-slope", "OOH*=1", ScalingError, form="ADSORBATE=SLOPE")

    from ecatlab.energies import read_energies
    from ecatlab.scaling import scaling_table
    from ecatlab.volcano import volcano

    table = read_energies(args.file, temperature=args.temperature)
    surfaces = opt.check_surfaces(table, args.surface)
    opt.check_species(table, opt.descriptor_species(args.descriptor), "--descriptor")
    opt.check_species(table, [args.fit_against] if args.fit_against else [], "--fit-against")
    opt.check_species(table, list(fixed), "--fix-slope")
    if surfaces:
        table = table.subset(surfaces)
    curve = volcano(
        table, pathway, args.descriptor, relations=relations, fixed_slopes=fixed,
        pH=args.pH, scale=args.scale, temperature=args.temperature, span=tuple(args.span) if args.span else None, fit_against=args.fit_against,
    )
    summary = curve.summary()
    fits = scaling_table(curve.relations)
    if args.output:  # the figure is written before anything is printed: a failed write prints nothing
        import matplotlib

        matplotlib.use("Agg")
        from ecatlab.plotting.export import save_figure
        from ecatlab.plotting.volcano import plot_volcano

        drawn = plot_volcano(curve, style=args.style)
        try:
            save_figure(drawn.figure, args.output, force=args.force, inputs=[i for i in inputs if i])
        finally:
            import matplotlib.pyplot as plt

            plt.close(drawn.figure)
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
        print(f"figure written to {args.output}")
    return 0
