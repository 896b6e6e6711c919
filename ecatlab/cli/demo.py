"""``ecatlab demo [-o DIR]``: the whole analysis on the bundled ILLUSTRATIVE demo data.

Writes, into an output folder it marks as its own (file ``.ecatlab-output``):

* ``limiting_potentials.csv`` / ``.md`` / ``.tex`` — limiting-potential table of every built-in
  pathway (ORR, OER, HER, CO2RR, NRR) for the twelve hypothetical surfaces;
* ``ranking.csv`` / ``.md`` — surfaces ranked per pathway (unblocked first, then lowest G_max; why a surface is blocked);
* ``diagrams/<pathway>.svg`` and ``.png`` — free-energy diagram of the best surfaces at U = 0;
* ``report.html`` — the one-file report, with a volcano section (orr-4e against OH*) and a
  best-route section (CO2 to CH4, HER as competitor).

It never overwrites files it did not make: a folder that exists, is not empty and lacks the
marker is refused with an error naming it.
"""

from __future__ import annotations

import argparse
import json
import pathlib
import time

from ecatlab.errors import OutputFolderError

MARKER = ".ecatlab-output"
DEMO_VOLCANO = ("orr-4e", "OH*")  # (pathway, descriptor) of the report's volcano section
DEMO_ROUTES = ("CO2", "CH4")  # (reactant, product) of the report's best-route section
DEFAULT_DIR = "ecatlab-demo-output"


def register(subparsers) -> None:
    parser = subparsers.add_parser(
        "demo",
        help="run the whole analysis on the bundled illustrative demo data and write tables, diagrams and a report",
        description=(
            "Run every built-in pathway on the bundled ILLUSTRATIVE demo table (invented numbers, hypothetical "
            "surfaces) and write limiting-potential tables (CSV, Markdown, LaTeX), diagrams (SVG, PNG) and report.html."
        ),
    )
    parser.add_argument("-o", "--output", default=DEFAULT_DIR, metavar="DIR",
                        help=f"output folder (default ./{DEFAULT_DIR}); refused if it holds files not made by ecatlab; "
                             "missing folders are created")
    parser.add_argument("--force", action="store_true",
                        help="replace the files of an earlier demo run in the folder (folders not made by ecatlab are never touched)")
    parser.set_defaults(func=run)


def prepare_output(folder: str | pathlib.Path) -> pathlib.Path:
    """Create (or reuse) an ecatlab output folder; refuse a non-empty folder ecatlab did not make."""
    from ecatlab import __version__

    out = pathlib.Path(folder)
    if out.exists() and not out.is_dir():
        raise OutputFolderError(f"{out} exists and is not a folder; choose another path with -o DIR")
    if out.is_dir() and not (out / MARKER).exists() and any(out.iterdir()):
        raise OutputFolderError(
            f"{out} already exists and was not made by ecatlab; it is left untouched. "
            "Choose a new or empty folder with -o DIR"
        )
    out.mkdir(parents=True, exist_ok=True)
    (out / MARKER).write_text(json.dumps({"made_by": "ecatlab", "version": __version__}) + "\n", encoding="utf-8")
    return out


def _check_folder(folder: str, force: bool) -> None:
    """Before any work: the folder is usable, and an earlier run's files are replaced only with --force."""
    from ecatlab.errors import OutputExistsError, OutputPathError, clip

    out = pathlib.Path(folder)
    if not str(folder).strip():
        raise OutputPathError("-o: empty folder name; give the folder to write, e.g. -o demo-output")
    if out.exists() and not out.is_dir():
        raise OutputFolderError(f"{clip(folder)} exists and is not a folder; choose another path with -o DIR")
    parent = out.absolute().parent
    while not parent.exists() and parent != parent.parent:
        parent = parent.parent
    if not parent.is_dir():
        raise OutputPathError(f"-o {clip(folder)!r}: {clip(str(parent))!r} is a file, not a folder; choose another location")
    if (out / MARKER).exists() and not force:
        earlier = [p.name for p in out.iterdir() if p.name != MARKER]
        if earlier:
            raise OutputExistsError(
                f"{clip(folder)} holds the files of an earlier demo run ({len(earlier)} entries); pass --force to replace "
                "them or choose a new folder with -o DIR"
            )


def run(args: argparse.Namespace) -> int:
    import matplotlib

    if matplotlib.get_backend().lower() not in ("agg", "module://matplotlib_inline.backend_inline"):
        matplotlib.use("Agg")
    from ecatlab.cli import SAFETY_NOTE
    from ecatlab.demo import DEMO_LABEL, demo_energies
    from ecatlab.pathways import BUILTIN_PATHWAYS
    from ecatlab.plotting.export import save_figure
    from ecatlab.report import analyse, render_html, routes_section, volcano_section
    from ecatlab.safe_io import atomic_write_text
    from ecatlab.tables import export_table, limiting_potential_table, rank_surfaces

    start = time.perf_counter()
    _check_folder(args.output, args.force)
    out = prepare_output(args.output)
    keys = list(BUILTIN_PATHWAYS)
    analysis = analyse(demo_energies(), keys, top=4, style="double")
    written: list[pathlib.Path] = []
    try:
        table = limiting_potential_table(analysis.limiting, sort=True)
        for suffix in ("csv", "md", "tex"):
            written.append(export_table(table, out / f"limiting_potentials.{suffix}", force=True))
        ranking = rank_surfaces(analysis.limiting)
        for suffix in ("csv", "md"):
            written.append(export_table(ranking, out / f"ranking.{suffix}", force=True))
        for fig in analysis.figures:
            name = fig.pathway if fig.kind == "surfaces" else f"{fig.pathway}_potentials"
            files = save_figure(fig.figure, out / "diagrams" / name, formats=("svg", "png"), dpi=200, force=True)
            fig.svg = files[0].read_text(encoding="utf-8")
            written += files
        sections = [volcano_section(analysis.table, *DEMO_VOLCANO), routes_section(analysis.table, *DEMO_ROUTES)]
        analysis.parameters.update(volcanoes=[DEMO_VOLCANO], routes=[DEMO_ROUTES])
        command = f"ecatlab demo -o {args.output}"
        html = render_html(analysis, command=command, sections=sections, banner=DEMO_LABEL + " — do not cite or compare with experiment.",
                           title="ecatlab demo: illustrative screening of twelve hypothetical surfaces")
        report = atomic_write_text(out / "report.html", html, force=True)
        written.append(report)
    finally:
        analysis.close()
    print(f"ecatlab demo ({DEMO_LABEL}) wrote {len(written)} files to {out.resolve()}:")
    for path in written:
        print(f"  {path.relative_to(out)}")
    print(f"done in {time.perf_counter() - start:.1f} s")
    print(SAFETY_NOTE)
    return 0
