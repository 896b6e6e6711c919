"""``ecatlab report FILE --pathway KEY [KEY ...] [--volcano KEY=DESCRIPTOR ...] [--routes REACTANT:PRODUCT ...]
-o report.html``: the one-file HTML report."""

from __future__ import annotations

import argparse
import shlex

from ecatlab.cli import _options as opt


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
    opt.add_pathways(parser)
    opt.add_conditions(parser)
    opt.add_surface(parser)
    parser.add_argument("--top", type=opt.int_range(1, 50), default=4, help="number of best-ranked surfaces (unblocked, then lowest G_max) overlaid per diagram (1 to 50, default 4)")
    parser.add_argument("--volcano", nargs="+", metavar="KEY=DESCRIPTOR", default=[],
                        help="add a volcano section per item, e.g. orr-4e=OH* or 'oer-4e=O* - OH*' "
                             "(scaling relations fitted to the table's surfaces)")
    parser.add_argument("--routes", nargs="+", metavar="REACTANT:PRODUCT", default=[],
                        help="add a best-route section per item, e.g. CO2:CH4 (network search, HER as competitor)")
    parser.add_argument("--title", default=None, help="report title")
    opt.add_output(parser, "HTML file to write (.html)", default="report.html")
    parser.set_defaults(func=run)


def _command_line(args: argparse.Namespace) -> str:
    """The command with every parameter spelled out (defaults included), as it can be re-run."""
    argv = ["report", args.file]
    if args.pathway:
        argv += ["--pathway", *args.pathway]
    if args.pathway_file:
        argv += ["--pathway-file", *args.pathway_file]
    argv += ["--pH", f"{args.pH:g}", "--scale", args.scale, "--temperature", f"{args.temperature:g}"]
    if args.surface:
        argv += ["--surface", *args.surface]
    argv += ["--top", str(args.top)]
    if args.volcano:
        argv += ["--volcano", *args.volcano]
    if args.routes:
        argv += ["--routes", *args.routes]
    if args.title:
        argv += ["--title", args.title]
    argv += ["-o", str(args.output)]
    if args.force:
        argv += ["--force"]
    return "ecatlab " + " ".join(shlex.quote(a) for a in argv)


def parse_volcano(text: str) -> tuple[str, str]:
    """``"orr-4e=OH*"`` -> ``("orr-4e", "OH*")``; a clear error otherwise."""
    from ecatlab.errors import ScalingError

    key, sep, descriptor = text.partition("=")
    if not sep or not key.strip() or not descriptor.strip():
        raise ScalingError(f"--volcano {text!r}: expected KEY=DESCRIPTOR, e.g. orr-4e=OH* or 'oer-4e=O* - OH*'")
    return key.strip(), descriptor.strip()


def parse_route(text: str) -> tuple[str, str]:
    """``"CO2:CH4"`` -> ``("CO2", "CH4")``; a clear error otherwise."""
    from ecatlab.errors import PathwayError

    reactant, sep, product = text.partition(":")
    if not sep or not reactant.strip() or not product.strip():
        raise PathwayError(f"--routes {text!r}: expected REACTANT:PRODUCT, e.g. CO2:CH4 or N2:NH3")
    return reactant.strip(), product.strip()


def run(args: argparse.Namespace) -> int:
    opt.check_input_file(args.file)
    inputs = [args.file, *args.pathway_file]
    target = opt.output_target(args, ("html", "htm"), inputs, what="HTML report")
    volcanoes = [parse_volcano(v) for v in args.volcano]
    routes = [parse_route(r) for r in args.routes]
    pathways = opt.pathway_list(args)

    from ecatlab.energies import read_energies
    from ecatlab.report import write_report

    table = read_energies(args.file, temperature=args.temperature)
    surfaces = opt.check_surfaces(table, args.surface)
    path = write_report(
        target,
        table,
        pathways,
        force=args.force,
        inputs=inputs,
        pH=args.pH,
        scale=args.scale,
        temperature=args.temperature,
        surfaces=surfaces,
        top=args.top,
        volcanoes=volcanoes,
        routes=routes,
        title=args.title,
        command=_command_line(args),
    )
    print(f"wrote {path}")
    return 0
