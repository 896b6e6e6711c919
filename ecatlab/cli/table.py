"""``ecatlab table`` and ``ecatlab pathways``: limiting-potential tables and the pathway list."""

from __future__ import annotations

import argparse
import sys

from ecatlab.cli import _options as opt

FORMATS = ("csv", "markdown", "latex", "html", "json")
_SUFFIXES = ("csv", "tsv", "md", "markdown", "tex", "latex", "html", "htm", "json")


def register(sub: argparse._SubParsersAction) -> None:
    p = sub.add_parser(
        "table",
        help="print or write the limiting-potential table of an energy file",
        description=(
            "Limiting potential, theoretical overpotential and potential-determining step per surface and pathway. "
            "Printed to the screen, or written with -o FILE (format from --format or the extension: .csv .tsv .md .tex .html .json)."
        ),
    )
    p.add_argument("file", help="energy table (CSV: surface, species, G or E + ZPE/CpdT/TS[/solvation], eV)")
    opt.add_pathways(p)
    opt.add_conditions(p)
    opt.add_surface(p)
    p.add_argument("--format", type=str.lower, choices=FORMATS, default=None,
                   help="output format (default: from the -o extension, else csv)")
    p.add_argument("--decimals", type=opt.int_range(0, 12), default=None,
                   help="decimals of potentials and energies (0 to 12; default 3 in md/tex/html, 6 in csv; json keeps all)")
    opt.add_output(p, "table file to write instead of printing (.csv, .tsv, .md, .tex, .html, .json)")
    p.set_defaults(func=run_table)

    q = sub.add_parser("pathways", help="list the built-in pathways", description="Built-in pathways with their overall reactions.")
    q.add_argument("--steps", metavar="KEY", help="print the steps of one pathway")
    q.set_defaults(func=run_pathways)


def run_table(args: argparse.Namespace) -> int:
    from ecatlab import safe_io
    from ecatlab.tables import ILLUSTRATIVE_NOTE, is_illustrative, render_table, table_format

    opt.check_input_file(args.file)
    inputs = [args.file, *args.pathway_file]
    target = opt.output_target(args, _SUFFIXES, inputs, what="table")
    kind = table_format(args.output, args.format) if args.output else (args.format or "csv")
    pathways = opt.pathway_list(args)

    from ecatlab.che import limiting_potentials
    from ecatlab.energies import read_energies

    table = read_energies(args.file, temperature=args.temperature)
    surfaces = opt.check_surfaces(table, args.surface)
    result = limiting_potentials(table, pathways, pH=args.pH, scale=args.scale, temperature=args.temperature, surfaces=surfaces)
    cols = [
        "surface", "pathway", "limiting_potential", "equilibrium_potential", "overpotential",
        "determining_step", "max_chemical_dG", "uphill_chemical_steps", "missing_species",
    ]
    out = result[cols].copy()
    illustrative = is_illustrative(table)
    out.attrs = {
        "caption": (
            (ILLUSTRATIVE_NOTE + " " if illustrative else "")
            + f"Limiting potentials [V vs {args.scale}] at pH {args.pH:g}, T {args.temperature:g} K; overpotential [V]; "
            f"max_chemical_dG [eV]. {table.scheme.describe()}. Source: {table.source}. "
            "Theoretical estimates (CHE, thermodynamics only)."
        ),
        "illustrative": illustrative,
        "conditions": {k: v for k, v in result.attrs.items() if k != "columns"},
        "columns": {k: v for k, v in result.attrs.get("columns", {}).items() if k in cols},
    }
    sep = "\t" if target is not None and target.suffix.lower() == ".tsv" else ","
    text = render_table(out, kind, decimals=args.decimals, csv_comment=True, sep=sep)
    if target is None:
        sys.stdout.write(text)
    else:
        safe_io.atomic_write_text(target, text, force=args.force, inputs=inputs, what="table")
        print(f"wrote {len(out)} rows ({kind}) to {target}")
    return 0


def _read_pathway_file(path: str):
    """Kept for callers of the old name: see :func:`ecatlab.notation.read_pathway_file`."""
    from ecatlab.notation import read_pathway_file

    return read_pathway_file(path)


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
