"""``ecatlab table`` and ``ecatlab pathways``: limiting-potential tables and the pathway list."""

from __future__ import annotations

import argparse
import json
import sys

from ecatlab.errors import PathwayError

FORMATS = ("csv", "markdown", "json")


def register(sub: argparse._SubParsersAction) -> None:
    p = sub.add_parser(
        "table",
        help="print the limiting-potential table of an energy file",
        description="Limiting potential, theoretical overpotential and potential-determining step per surface and pathway.",
    )
    p.add_argument("file", help="energy table (CSV: surface, species, G or E + ZPE/CpdT/TS[/solvation], eV)")
    p.add_argument("--pathway", "-p", nargs="+", default=[], metavar="KEY", help="built-in pathway key(s); see 'ecatlab pathways'")
    p.add_argument(
        "--pathway-file", nargs="+", default=[], metavar="FILE",
        help="your own pathway(s): text files with one step per line, e.g. 'OOH* + H+ + e- -> O* + H2O(l)' ('#' starts a comment)",
    )
    p.add_argument("--pH", type=float, default=0.0, help="pH (default 0)")
    p.add_argument("--scale", choices=("RHE", "SHE"), default="RHE", type=str.upper, help="potential scale (default RHE)")
    p.add_argument("--temperature", type=float, default=298.15, help="temperature in K (default 298.15)")
    p.add_argument("--format", choices=FORMATS, default="csv", help="output format (default csv)")
    p.add_argument("--decimals", type=int, default=3, help="decimals of potentials in csv/markdown (default 3)")
    p.set_defaults(func=run_table)

    q = sub.add_parser("pathways", help="list the built-in pathways", description="Built-in pathways with their overall reactions.")
    q.add_argument("--steps", metavar="KEY", help="print the steps of one pathway")
    q.set_defaults(func=run_pathways)


def run_table(args: argparse.Namespace) -> int:
    from ecatlab.che import limiting_potentials
    from ecatlab.energies import read_energies

    pathways = list(args.pathway) + [_read_pathway_file(f) for f in args.pathway_file]
    if not pathways:
        raise PathwayError("give at least one --pathway KEY or --pathway-file FILE (see 'ecatlab pathways')")
    table = read_energies(args.file, temperature=args.temperature)
    result = limiting_potentials(table, pathways, pH=args.pH, scale=args.scale, temperature=args.temperature)
    cols = [
        "surface", "pathway", "limiting_potential", "equilibrium_potential", "overpotential",
        "determining_step", "max_chemical_dG", "uphill_chemical_steps", "missing_species",
    ]
    out = result[cols]
    caption = (
        f"# Limiting potentials [V vs {args.scale}] at pH {args.pH:g}, T {args.temperature:g} K; overpotential [V]; "
        f"max_chemical_dG [eV]. {table.scheme.describe()}. Source: {table.source}. "
        "Theoretical estimates (CHE, thermodynamics only)."
    )
    if args.format == "json":
        payload = {"conditions": {k: v for k, v in result.attrs.items() if k != "columns"}, "columns": result.attrs["columns"], "rows": json.loads(out.to_json(orient="records"))}
        json.dump(payload, sys.stdout, indent=2, default=str)
        sys.stdout.write("\n")
    elif args.format == "markdown":
        print(caption.lstrip("# "))
        print()
        print(_markdown(out.round(args.decimals)))
    else:
        print(caption)
        sys.stdout.write(out.round(args.decimals).to_csv(index=False))
    return 0


def _read_pathway_file(path: str):
    import os

    from ecatlab.errors import NotationError
    from ecatlab.notation import Pathway

    if not os.path.isfile(path):
        raise PathwayError(f"{path}: pathway file not found")
    with open(path, encoding="utf-8") as fh:
        text = fh.read()
    name = os.path.splitext(os.path.basename(path))[0]
    try:
        return Pathway.parse(text, name=name)
    except (NotationError, PathwayError) as exc:
        raise PathwayError(f"{path}: {exc}") from None


def _markdown(frame) -> str:
    header = "| " + " | ".join(frame.columns) + " |"
    rule = "|" + "|".join("---" for _ in frame.columns) + "|"
    rows = ["| " + " | ".join("" if (isinstance(v, float) and v != v) else str(v) for v in row) + " |" for row in frame.itertuples(index=False)]
    return "\n".join([header, rule] + rows)


def run_pathways(args: argparse.Namespace) -> int:
    from ecatlab.pathways import list_pathways, pathway

    if args.steps:
        p = pathway(args.steps)
        print(f"{p.name}: {p.description}")
        for i, step in enumerate(p.steps, start=1):
            kind = "electrochemical" if step.is_electrochemical else "chemical"
            print(f"  {i}. {step.equation}    [{kind}]")
        return 0
    frame = list_pathways()
    width = max(len(k) for k in frame["key"])
    for row in frame.itertuples(index=False):
        print(f"{row.key:<{width}}  {row.reaction:<5}  {row.overall}")
        print(f"{'':<{width}}  {'':<5}  {row.description}")
    return 0
