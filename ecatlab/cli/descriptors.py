"""``ecatlab descriptors``: how many independent descriptors an energy table holds (PCA with
imputation of missing entries), which adsorption energies stand in for them, the automatic scaling
relations, and optionally the table with missing energies filled from them (flagged as estimated)."""

from __future__ import annotations

import argparse
import json

from ecatlab.cli import _options as opt


def register(sub: argparse._SubParsersAction) -> None:
    p = sub.add_parser(
        "descriptors",
        help="PCA of the surfaces x adsorbates energies, automatic scaling relations, fill missing energies (flagged)",
        description=(
            "Principal components of the adsorption-energy matrix of FILE (missing entries imputed by iterative low-rank SVD), "
            "the number of components that reproduce the energies within --target-error eV, the adsorption energies standing in "
            "for each component, and the best one- or two-descriptor scaling relation of every adsorbate with leave-one-out errors. "
            "With --fill -o OUT.csv, missing energies are estimated from those relations and written with status and error columns."
        ),
    )
    p.add_argument("file", help="energy table (CSV: surface, species, G or E + ZPE/CpdT/TS[/solvation], eV)")
    p.add_argument("--target-error", type=opt.finite_float, default=0.1, metavar="EV", help="target reconstruction RMSE in eV (default 0.1)")
    p.add_argument("--species", nargs="+", metavar="X*", help="adsorbates to analyse (default all)")
    p.add_argument("--surface", nargs="+", metavar="NAME", help="surfaces to analyse (default all)")
    p.add_argument("--imputation-rank", type=int, metavar="R", help="rank for imputing missing entries (default: chosen by cross-validation)")
    p.add_argument("--standardize", action="store_true", help="scale every adsorbate to unit variance before PCA (default: eV as given)")
    p.add_argument("-T", "--temperature", type=opt.temperature, default=298.15, help="temperature in K at which the table is read (default 298.15)")
    p.add_argument("--fill", action="store_true", help="estimate missing energies from the automatic scaling relations (needs -o)")
    p.add_argument("-o", "--output", metavar="CSV", help="with --fill: write the filled table (surface, species, G, status, estimate_error, estimate_model)")
    p.add_argument("--provenance", metavar="CSV", help="with --fill: write the provenance of every energy (computed / estimated / missing)")
    p.add_argument("--scree", metavar="FIGURE", help="save the scree plot (svg, pdf, png)")
    p.add_argument("--biplot", metavar="FIGURE", help="save the PC1/PC2 biplot (svg, pdf, png)")
    p.add_argument("--force", action="store_true", help="overwrite existing output files")
    p.add_argument("--json", action="store_true", help="print the tables as JSON instead of text")
    p.set_defaults(func=run)


def run(args: argparse.Namespace) -> int:
    from ecatlab.safe_io import atomic_path, check_output, write_csv
    from ecatlab.descriptors import analyse_descriptors
    from ecatlab.energies import read_energies
    from ecatlab.errors import DescriptorError
    from ecatlab.scaling import fill_missing_energies

    if args.fill and not args.output:
        raise DescriptorError("--fill needs -o OUT.csv (the filled energy table)")
    if (args.output or args.provenance) and not args.fill:
        raise DescriptorError("-o and --provenance write the filled table; add --fill")
    targets = {}
    for name in ("output", "provenance", "scree", "biplot"):
        path = getattr(args, name)
        if path:
            targets[name] = check_output(path, force=args.force, inputs=[args.file], option=f"--{name}" if name != "output" else "-o")
    table = read_energies(args.file, temperature=args.temperature)
    an = analyse_descriptors(table, species=args.species, surfaces=args.surface, imputation_rank=args.imputation_rank, standardize=args.standardize)
    ev, st, cmp_ = an.explained_variance(), an.stand_ins(min(4, an.n_components)), an.comparison()
    auto = an.scaling.table() if an.scaling is not None else None
    k = an.components_for_error(args.target_error)
    if args.json:
        out = {"summary": an.summary(args.target_error), "components_for_target": k, "target_error_eV": args.target_error,
               "explained_variance": json.loads(ev.to_json(orient="records")), "stand_ins": json.loads(st.to_json(orient="records")),
               "comparison": json.loads(cmp_.to_json(orient="records")),
               "scaling": None if auto is None else json.loads(auto.to_json(orient="records"))}
        print(json.dumps(out, indent=2, default=str))
    else:
        fmt = lambda v: f"{v:.3f}"  # noqa: E731
        print(f"# Descriptor analysis of {table.source}: {len(an.surfaces)} surfaces x {len(an.species)} adsorbates, energies in eV")
        print(f"# {table.scheme.describe()}. Theoretical estimates.")
        print(an.summary(args.target_error))
        print(f"components needed for {args.target_error:g} eV RMSE: {k}")
        print("explained variance (ratio; reconstruction and held-out RMSE in eV):")
        print(ev.head(8).to_string(index=False, float_format=fmt))
        print("stand-ins (adsorbate best correlated with each component's scores):")
        print(st.to_string(index=False, float_format=fmt))
        print("linear models of the matrix (RMSE in eV):")
        print(cmp_.to_string(index=False, float_format=fmt))
        if auto is not None:
            print("automatic scaling relations (selected model per adsorbate; LOO = leave-one-out):")
            print(auto[["target", "kind", "equation", "n_surfaces", "rmse", "loo_rmse"]].to_string(index=False, float_format=fmt))
    if args.fill:
        filled, prov = fill_missing_energies(table, an.scaling if args.species is None and args.surface is None else None)
        frame = filled.frame[["surface", "species", "G", "status", "estimate_error", "estimate_model"]]
        header = (f"{table.source} with missing energies ESTIMATED from automatic scaling relations (status column; estimate_error = "
                  "leave-one-out RMSE, eV). Estimates are not DFT values.")
        write_csv(frame, targets["output"], header_lines=[header], force=args.force, inputs=[args.file], index=False)
        n_est = int((prov["status"] == "estimated").sum())
        print(f"filled table written to {args.output} ({n_est} estimated, {int((prov['status'] == 'missing').sum())} still missing)")
        if "provenance" in targets:
            write_csv(prov, targets["provenance"], force=args.force, inputs=[args.file], option="--provenance", index=False)
            print(f"provenance written to {args.provenance}")
    if "scree" in targets or "biplot" in targets:
        import matplotlib

        matplotlib.use("Agg")
        import matplotlib.pyplot as plt

        from ecatlab.plotting.descriptors import plot_biplot, plot_scree

        for name, draw in (("scree", lambda: plot_scree(an, target_rmse=args.target_error)), ("biplot", lambda: plot_biplot(an))):
            if name in targets:
                drawn = draw()
                with atomic_path(targets[name], force=args.force, inputs=[args.file], option=f"--{name}", what="figure") as tmp:
                    drawn.figure.savefig(tmp, bbox_inches="tight", format=targets[name].suffix.lstrip(".").lower() or "png")
                plt.close(drawn.figure)
                print(f"{name} written to {getattr(args, name)}")
    return 0
