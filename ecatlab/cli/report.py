"""``ecatlab report FILE --pathway KEY [KEY ...] -o report.html``: the one-file HTML report."""

from __future__ import annotations

import argparse
import shlex

from ecatlab.constants import STANDARD_TEMPERATURE


def register(subparsers) -> None:
    parser = subparsers.add_parser(
        "report",
        help="write a self-contained HTML report (tables, diagrams, ranking, warnings) for an energy table",
        description=(
            "Analyse an energy table with the CHE model for one or more pathways and write a single HTML file "
            "(figures inline as SVG, no network needed to view it). Results are theoretical estimates."
        ),
    )
    parser.add_argument("file", help="energy table (CSV with surface, species and G, or E plus corrections)")
    parser.add_argument("--pathway", "-p", nargs="+", required=True, metavar="KEY",
                        help="built-in pathway key(s), e.g. orr-4e oer-4e (see the pathway list in the docs)")
    parser.add_argument("--pH", type=float, default=0.0, help="pH of the electrolyte (default 0)")
    parser.add_argument("--scale", choices=("RHE", "SHE"), default="RHE", type=str.upper,
                        help="potential scale of the results (default RHE)")
    parser.add_argument("--temperature", "-T", type=float, default=STANDARD_TEMPERATURE, help="temperature in K (default 298.15)")
    parser.add_argument("--surface", nargs="+", metavar="NAME", default=None, help="only these surfaces (default all)")
    parser.add_argument("--top", type=int, default=4, help="number of best surfaces overlaid per diagram (default 4)")
    parser.add_argument("--title", default=None, help="report title")
    parser.add_argument("-o", "--output", default="report.html", help="HTML file to write (default report.html)")
    parser.set_defaults(func=run)


def _command_line(args: argparse.Namespace) -> str:
    """The command with every parameter spelled out (defaults included), as it can be re-run."""
    argv = ["report", args.file, "--pathway", *args.pathway, "--pH", f"{args.pH:g}", "--scale", args.scale,
            "--temperature", f"{args.temperature:g}"]
    if args.surface:
        argv += ["--surface", *args.surface]
    argv += ["--top", str(args.top)]
    if args.title:
        argv += ["--title", args.title]
    argv += ["-o", str(args.output)]
    return "ecatlab " + " ".join(shlex.quote(a) for a in argv)


def run(args: argparse.Namespace) -> int:
    from ecatlab.report import write_report

    path = write_report(
        args.output,
        args.file,
        args.pathway,
        pH=args.pH,
        scale=args.scale,
        temperature=args.temperature,
        surfaces=args.surface,
        top=args.top,
        title=args.title,
        command=_command_line(args),
    )
    print(f"wrote {path}")
    return 0
