"""``ecatlab robustness``: how sure are limiting potentials, determining steps and the ranking under energy errors."""

from __future__ import annotations

from ecatlab.cli import _options as opt

import argparse
import os

from ecatlab.errors import UncertaintyError

_FORMULA_START = ("=", "+", "-", "@", "\t", "\r")


def register(sub: argparse._SubParsersAction) -> None:
    p = sub.add_parser(
        "robustness",
        help="propagate energy errors (Gaussian model or an ensemble) to U_L, eta, G_max, determining steps and rankings",
        description=(
            "Sample the adsorption free energies of FILE with an error model (per-species Gaussian errors correlated by "
            "binding atom, scaling-relation residuals, or an ensemble of deviations such as BEEF-vdW members), push every "
            "sample through the CHE kernel, and print how often each surface ranks best (unblocked first, then lower "
            "G_max), the spread of U_L and G_max, and the probability of each potential-determining step."
        ),
        epilog="Results are theoretical estimates; any experiment follows local safety codes and licensed practice.",
    )
    p.add_argument("file", help="energy table (CSV: surface, species, G or E + ZPE/CpdT/TS[/solvation], eV)")
    p.add_argument("--pathway", "-p", nargs="+", required=True, metavar="KEY", help="built-in pathway key(s), e.g. orr-4e")
    model = p.add_argument_group("error model (default: --sigma 0.1)")
    model.add_argument("--sigma", type=opt.finite_float, default=None, help="standard deviation of every adsorbate, eV (default 0.1)")
    model.add_argument("--sigma-of", nargs="+", default=[], metavar="X*=SIGMA", help="per-adsorbate standard deviations, eV, e.g. OOH*=0.2")
    model.add_argument("--correlation", type=opt.finite_float, default=0.0, help="correlation between adsorbates bound through the same atom (0..1)")
    model.add_argument("--independent", action="store_true", help="no grouping by binding atom (all adsorbates independent)")
    model.add_argument("--surface-correlation", type=opt.finite_float, default=0.0, help="correlation of the same error between surfaces (0..1)")
    model.add_argument("--scaling-residuals", metavar="DESCRIPTOR", help="use the residuals of scaling relations fitted against DESCRIPTOR (e.g. OH*) as the errors")
    model.add_argument("--descriptor-sigma", type=opt.finite_float, default=0.0, help="with --scaling-residuals: error of the descriptor itself, eV")
    model.add_argument("--ensemble", metavar="DEVIATIONS", help="ensemble deviations file (.csv, .parquet, .npz; see docs/uncertainty.md)")
    model.add_argument("--beef-tree", metavar="DIR", help="VASP folder tree with OUTCARs holding BEEF ensembles (same layout as 'ecatlab ingest')")
    p.add_argument("--samples", "-n", type=int, default=None, help="number of samples (default 1000; ensembles: every member)")
    p.add_argument("--bootstrap", action="store_true", help="ensembles: draw --samples members with replacement")
    p.add_argument("--seed", type=int, default=0, help="random seed (default 0); the same seed gives the same numbers")
    p.add_argument("--top", type=int, default=3, help="report P(in the top K) (default 3)")
    p.add_argument("--interval", type=opt.finite_float, default=0.9, help="central interval probability (default 0.9: 5th-95th percentile)")
    p.add_argument("--surface", action="append", default=None, metavar="NAME", help="restrict to these surfaces (repeat)")
    p.add_argument("--pH", type=opt.finite_float, default=0.0, help="pH (default 0)")
    p.add_argument("--scale", choices=("RHE", "SHE"), default="RHE", type=str.upper, help="potential scale (default RHE)")
    p.add_argument("-T", "--temperature", type=opt.temperature, default=298.15, help="temperature in K (default 298.15)")
    p.add_argument("-o", "--output", metavar="TABLE.csv", help="write the summary table (CSV) here")
    p.add_argument("--figure", metavar="FIGURE", help="save the ranking-probability figure of the first pathway (svg, pdf, png)")
    p.add_argument("--force", action="store_true", help="overwrite existing output files")
    p.set_defaults(func=run)


def build_model(args, table):
    """The error model the options ask for (one source only)."""
    from ecatlab.uncertainty import DescriptorErrors, GaussianErrors

    chosen = [name for name, on in (("--ensemble", args.ensemble), ("--beef-tree", args.beef_tree), ("--scaling-residuals", args.scaling_residuals)) if on]
    if len(chosen) > 1:
        raise UncertaintyError(f"choose one error source, got {' and '.join(chosen)}")
    if args.ensemble:
        from ecatlab.ingest.ensembles import read_deviations

        return read_deviations(args.ensemble)
    if args.beef_tree:
        from ecatlab.ingest.ensembles import ensemble_from_vasp_tree

        return ensemble_from_vasp_tree(args.beef_tree, table.scheme)
    if args.scaling_residuals:
        from ecatlab.pathways import resolve
        from ecatlab.scaling import fit_scaling

        desc = args.scaling_residuals
        targets = {a.key for k in args.pathway for a in resolve(k).adsorbates} - {desc.strip()}
        relations = [fit_scaling(table, t, desc) for t in sorted(targets)]
        return DescriptorErrors.from_relations(relations, args.descriptor_sigma, args.surface_correlation)
    per = opt.number_pairs(args.sigma_of, "--sigma-of", "OOH*=0.2", UncertaintyError, form="ADSORBATE=NUMBER")
    from ecatlab.errors import EcatlabError
    from ecatlab.notation import Species

    for key in per:
        try:
            Species.parse(key)
        except EcatlabError as exc:  # name the option and the item, then what is wrong with the species
            raise UncertaintyError(f"--sigma-of {opt.clip(key)!r}: {exc}; write ADSORBATE=NUMBER, e.g. OOH*=0.2") from None
    if per and args.sigma is None:
        from ecatlab.pathways import resolve

        given = {Species.parse(k).key for k in per}
        lacking = sorted({a.key for k in args.pathway for a in resolve(k).adsorbates} - given)
        if lacking:
            raise UncertaintyError(f"--sigma-of gives no standard deviation for {', '.join(lacking)}; add them "
                                   f"(e.g. {lacking[0]}=0.15) or give --sigma for every adsorbate not listed")
    sigma = per if per else (0.1 if args.sigma is None else args.sigma)
    default = (args.sigma if args.sigma is not None else None) if per else None
    return GaussianErrors(sigma, args.correlation, "none" if args.independent else "binding_atom", default, args.surface_correlation)


def _write_csv(frame, path: str, force: bool) -> None:
    """The summary with its conditions as a ``#`` line, via :func:`ecatlab.safe_io.write_csv`."""
    from ecatlab.safe_io import write_csv

    c = frame.attrs
    header = (f"uncertainty summary; {c.get('samples')} samples; {c.get('model')}; scale {c.get('scale')}, pH {c.get('pH')}, "
              f"T {c.get('temperature')} K; {c.get('interval')}; theoretical estimates")
    write_csv(frame, path, header_lines=[header], force=force, index=False, float_format="%.6g")


def run(args: argparse.Namespace) -> int:
    from ecatlab.energies import read_energies
    from ecatlab.uncertainty import propagate

    from ecatlab.safe_io import check_output

    for option, out in (("-o", args.output), ("--figure", args.figure)):
        if out:  # validated before the sampling runs
            check_output(out, force=args.force, inputs=[i for i in (args.file, args.ensemble) if i], option=option)
    table = read_energies(args.file, temperature=args.temperature)
    model = build_model(args, table)
    res = propagate(table, args.pathway, model, n_samples=args.samples, pH=args.pH, scale=args.scale, temperature=args.temperature,
                    surfaces=args.surface, seed=args.seed, members="bootstrap" if args.bootstrap else "all")
    summary = res.summary(interval=args.interval)
    c = res.conditions
    print(f"# {res.n_samples} samples; {c['model']}; seed {c['seed']}")
    print(f"# pH {args.pH:g}, {args.temperature:g} K, potentials vs {args.scale}; {table.scheme.describe()}. Source: {table.source}.")
    print(f"# Theoretical estimates (CHE with the stated error model). Probabilities carry a Monte-Carlo standard error of at most {0.5 / res.n_samples ** 0.5:.3f}.")
    for key in res.pathways:
        rank = res.ranking(key, top=args.top)
        ul = summary[(summary["pathway"] == key) & (summary["quantity"] == "limiting_potential")].set_index("surface")
        gm = summary[(summary["pathway"] == key) & (summary["quantity"] == "G_max")].set_index("surface")
        steps = res.determining_steps()
        steps = steps[steps["pathway"] == key]
        top_step = steps.loc[steps.groupby("surface", sort=False)["probability"].idxmax()].set_index("surface")
        print(f"\n{key}: surfaces by P(best) (ranking per sample: unblocked first, then lower G_max)")
        lines = []
        for s in rank.index:
            lines.append(
                f"  {s:<12} P(best) {rank.loc[s, 'p_best']:.3f}  P(top{args.top}) {rank.loc[s, f'p_top{args.top}']:.3f}  "
                f"rank w/o errors {int(rank.loc[s, 'deterministic_rank'])}  "
                f"U_L {ul.loc[s, 'mean']:+.3f} ± {ul.loc[s, 'std']:.3f} V [{ul.loc[s, 'low']:+.3f}, {ul.loc[s, 'high']:+.3f}]  "
                f"G_max {gm.loc[s, 'mean']:.3f} ± {gm.loc[s, 'std']:.3f} eV  "
                f"P(blocked) {rank.loc[s, 'p_blocked']:.2f}  most likely determining step {top_step.loc[s, 'step']} "
                f"({top_step.loc[s, 'probability']:.2f})"
            )
        print("\n".join(lines))
    if args.output:
        _write_csv(summary, args.output, args.force)
        print(f"summary table written to {args.output}")
    if args.figure:
        import matplotlib

        matplotlib.use("Agg")
        from ecatlab.plotting.uncertainty import plot_ranking_probabilities

        drawn = plot_ranking_probabilities(res, res.pathways[0], top=args.top)
        from ecatlab.safe_io import atomic_path

        import matplotlib.pyplot as plt

        try:
            with atomic_path(args.figure, force=args.force, inputs=[args.file, args.ensemble], option="--figure", what="figure") as tmp:
                drawn.figure.savefig(tmp, bbox_inches="tight", format=os.path.splitext(args.figure)[1].lstrip(".").lower() or "png")
        finally:
            plt.close(drawn.figure)
        print(f"figure written to {args.figure}")
    return 0
