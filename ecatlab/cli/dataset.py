"""``ecatlab dataset``: Parquet energy datasets and screening them on a Dask cluster.

    ecatlab dataset convert energies.csv screen_ds --surfaces-per-file 50000
    ecatlab dataset info screen_ds
    ecatlab dataset screen screen_ds -p orr-4e oer-4e --top 10 -o results_ds --workers 2 --worker-memory 2GiB
    ecatlab dataset screen screen_ds -p orr-4e --scheduler tcp://10.0.0.5:8786
"""

from __future__ import annotations

import argparse
import json
import os

from ecatlab.cli import _options as opt
from ecatlab.errors import DatasetError, PathwayError


def register(sub: argparse._SubParsersAction) -> None:
    p = sub.add_parser(
        "dataset",
        help="Parquet energy datasets: convert, inspect, and screen them on a Dask cluster",
        description=(
            "Energy tables as Parquet (long: surface, species, G or E + corrections; wide: one column of G per adsorbate), "
            "single files or folders of files with every surface in one file. 'screen' runs the CHE engine file by file on a "
            "Dask cluster (a new LocalCluster, or an existing one given --scheduler) and prints per-pathway summaries and the "
            "best surfaces (unblocked first, then lower G_max). Theoretical estimates (CHE, thermodynamics only)."
        ),
    )
    actions = p.add_subparsers(dest="action", metavar="ACTION")
    p.set_defaults(func=lambda args: _usage(p))

    c = actions.add_parser("convert", help="write an energy table (CSV or Parquet) as a Parquet file or dataset folder")
    c.add_argument("source", help="energy table: CSV file, .parquet file or dataset folder")
    c.add_argument("target", help="output: NAME.parquet (one file) or a folder (dataset of part files)")
    c.add_argument("--layout", choices=("long", "wide"), default="long", type=str.lower, help="long (default; keeps E + corrections) or wide (G per adsorbate)")
    c.add_argument("--surfaces-per-file", type=int, default=50_000, metavar="N", help="surfaces per file of a dataset folder = per Dask partition (default 50000)")
    c.add_argument("--force", action="store_true", help="replace an existing output")
    c.set_defaults(func=run_convert)

    i = actions.add_parser("info", help="describe a Parquet file or dataset folder (footers only; values are checked when read)")
    i.add_argument("source", help=".parquet file or dataset folder")
    i.add_argument("--json", action="store_true", help="print JSON")
    i.set_defaults(func=run_info)

    s = actions.add_parser("screen", help="limiting potentials, G_max, summaries and top surfaces of a dataset on a Dask cluster")
    s.add_argument("source", help=".parquet file or dataset folder (long or wide layout, eV)")
    s.add_argument("--pathway", "-p", nargs="+", default=[], metavar="KEY", help="built-in pathway key(s) (default: all built-in pathways)")
    s.add_argument("--pH", type=opt.finite_float, default=0.0, help="pH (default 0)")
    s.add_argument("--scale", choices=("RHE", "SHE"), default="RHE", type=str.upper, help="potential scale (default RHE)")
    s.add_argument("-T", "--temperature", type=opt.temperature, default=298.15, help="temperature in K (default 298.15)")
    s.add_argument("--top", type=int, default=5, metavar="K", help="best K surfaces per pathway to print (default 5)")
    s.add_argument("-o", "--output", metavar="FOLDER", help="write the per-(surface, pathway) results as a partitioned Parquet folder")
    s.add_argument("--measure", choices=("full", "gmax"), default="full", help="columns written with -o: all limiting-potential columns (full) or the G_max measure only")
    s.add_argument("--force", action="store_true", help="replace an existing --output folder")
    s.add_argument("--json", action="store_true", help="print summary and top surfaces as JSON")
    cluster = s.add_argument_group("cluster", "a new LocalCluster (default) or an existing Dask cluster")
    cluster.add_argument("--scheduler", metavar="ADDRESS", help="address of a running Dask scheduler, e.g. tcp://10.0.0.5:8786 (the files must be readable by its workers)")
    cluster.add_argument("--workers", type=int, default=2, metavar="N", help="LocalCluster worker processes (default 2)")
    cluster.add_argument("--threads-per-worker", type=int, default=1, metavar="N", help="LocalCluster threads per worker (default 1)")
    cluster.add_argument("--worker-memory", default="2GiB", metavar="SIZE", help="LocalCluster memory limit per worker, e.g. 2GiB (default)")
    cluster.add_argument("--no-progress", action="store_true", help="do not show the progress bar")
    s.set_defaults(func=run_screen)


def _usage(parser: argparse.ArgumentParser) -> int:
    parser.print_help()
    return 2


def run_convert(args: argparse.Namespace) -> int:
    from ecatlab.datasets import dataset_kind, read_energies_parquet, write_energies_parquet

    if args.surfaces_per_file < 1:
        raise DatasetError(args.target, f"--surfaces-per-file must be >= 1, got {args.surfaces_per_file}")
    source = read_energies_parquet(args.source) if dataset_kind(args.source) in ("parquet-file", "parquet-folder") else args.source
    if dataset_kind(args.source) is not None and os.path.exists(args.target) and os.path.samefile(args.source, args.target):
        raise DatasetError(args.target, "is the input; write the output elsewhere")
    out = write_energies_parquet(source, args.target, layout=args.layout, surfaces_per_file=args.surfaces_per_file, force=args.force)
    print(f"written {out} ({args.layout} layout)")
    return 0


def run_info(args: argparse.Namespace) -> int:
    from ecatlab.datasets import open_energy_dataset

    ds = open_energy_dataset(args.source)
    info = {
        "source": ds.source, "layout": ds.layout, "files": len(ds.files), "rows": ds.rows,
        "columns": [c for c, _ in ds.columns], "grouped_by_surface": ds.grouped, "references": list(ds.references or []),
    }
    if args.json:
        print(json.dumps(info, indent=2))
    else:
        print(f"{ds.source}: {ds.describe()}")
        print(f"columns: {', '.join(info['columns'])}")
        if ds.references:
            print(f"references recorded in the files: {', '.join(ds.references)}")
    return 0


def run_screen(args: argparse.Namespace) -> int:
    from ecatlab import scaleout
    from ecatlab.datasets import ParquetFolderOutput, open_energy_dataset
    from ecatlab.pathways import BUILTIN_PATHWAYS

    if args.top < 1:
        raise DatasetError(args.source, f"--top must be >= 1, got {args.top}")
    pathways = list(args.pathway) or list(BUILTIN_PATHWAYS)
    unknown = [k for k in pathways if k not in BUILTIN_PATHWAYS]
    if unknown:
        raise PathwayError(f"unknown pathway key(s) {unknown}; see 'ecatlab pathways'")
    ds = open_energy_dataset(args.source)
    output = None
    if not args.output:  # one fused pass per partition: flat worker memory
        jobs = list(scaleout.screen(ds, pathways, k=args.top, pH=args.pH, scale=args.scale, temperature=args.temperature))
    else:
        lp = scaleout.limiting_potentials(ds, pathways, pH=args.pH, scale=args.scale, temperature=args.temperature)
        jobs = [scaleout.summary(lp, pathways, pH=args.pH, scale=args.scale, temperature=args.temperature), scaleout.top_k(lp, pathways, k=args.top)]
        written = lp[list(scaleout.GMAX_COLUMNS)] if args.measure == "gmax" else lp
        output = ParquetFolderOutput(written, args.output, force=args.force, inputs=[args.source])
        jobs.append(output.job)
    with scaleout.dask_client(args.scheduler, n_workers=args.workers, threads_per_worker=args.threads_per_worker, memory_limit=args.worker_memory) as client:
        try:
            results = scaleout.compute(*jobs, progress=not args.no_progress)
        except BaseException:
            if output is not None:
                output.abort()
            raise
        where = args.scheduler or f"LocalCluster ({args.workers} workers x {args.threads_per_worker} threads, {args.worker_memory} each)"
    summary, top = results[0], results[1]
    if output is not None:
        output.commit()
    caption = (
        f"# {ds.source}: {ds.describe()}; pH {args.pH:g}, T {args.temperature:g} K, potentials in V vs {args.scale}, G_max in eV; "
        f"computed on {where}. Theoretical estimates (CHE, thermodynamics only)."
    )
    if args.json:
        print(json.dumps({"conditions": {"pH": args.pH, "scale": args.scale, "temperature": args.temperature, "source": ds.source},
                          "summary": json.loads(summary.to_json(orient="records", double_precision=15)),
                          "top": json.loads(top[["pathway", "rank", "surface", "G_max", "blocked", "overpotential", "limiting_potential", "G_max_step"]].to_json(orient="records", double_precision=15))}, indent=2))
    else:
        print(caption)
        cols = ["pathway", "surfaces", "evaluated", "blocked", "G_max_min", "G_max_mean", "overpotential_min", "best_surface", "best_G_max"]
        print(summary[cols].to_string(index=False, float_format=lambda v: f"{v:.3f}"))
        print(f"# best {args.top} per pathway (unblocked first, then lower G_max):")
        show = top[["pathway", "rank", "surface", "G_max", "blocked", "overpotential", "limiting_potential", "G_max_step"]]
        print(show.to_string(index=False, float_format=lambda v: f"{v:.3f}"))
    if output is not None:
        import sys

        print(f"results written to {output.target} ({args.measure} columns, partitioned Parquet)", file=sys.stderr if args.json else sys.stdout)
    return 0
