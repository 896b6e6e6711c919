"""Command-line interface: ``ecatlab <command> ...``.

Each module in this package that defines ``register(subparsers)`` contributes one or more
subcommands; ``register`` adds an argparse parser and sets ``func=run`` where ``run(args)``
returns the exit code. Errors derived from :class:`~ecatlab.errors.EcatlabError` (and OSError)
are printed as one short line and give exit code 2; ``--traceback`` shows the full traceback.
"""

from __future__ import annotations

import argparse
import importlib
import pkgutil
import sys
import warnings
from typing import Sequence

from ecatlab import __version__

__all__ = ["main", "build_parser"]

SAFETY_NOTE = (
    "Results are theoretical estimates (CHE model, thermodynamics only). Any experiment they inform "
    "follows local safety codes and licensed practice (CO is toxic, H2 flammable, electrolytes corrosive)."
)


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="ecatlab",
        description="Free-energy pathways, limiting potentials and overpotentials with the computational hydrogen electrode.",
        epilog=SAFETY_NOTE,
    )
    parser.add_argument("--version", action="version", version=f"ecatlab {__version__}")
    parser.add_argument("--traceback", action="store_true", help="show the full traceback on errors")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")
    for info in sorted(pkgutil.iter_modules(__path__), key=lambda m: m.name):
        if info.name.startswith("_"):
            continue
        module = importlib.import_module(f"{__name__}.{info.name}")
        register = getattr(module, "register", None)
        if register is not None:
            register(sub)
    return parser


def main(argv: Sequence[str] | None = None) -> int:
    """Entry point of the ``ecatlab`` console script; returns the exit code."""
    parser = build_parser()
    args = parser.parse_args(argv)
    if not getattr(args, "command", None):
        parser.print_help()
        return 2
    from ecatlab.errors import EcatlabError, EcatlabWarning

    def show_warning(message, category, filename, lineno, file=None, line=None):
        print(f"warning: {message}", file=sys.stderr)

    try:
        with warnings.catch_warnings():
            warnings.simplefilter("always", EcatlabWarning)
            warnings.showwarning = show_warning
            return int(args.func(args) or 0)
    except BrokenPipeError:  # output piped into e.g. `head`
        sys.stderr.close()
        return 0
    except (EcatlabError, OSError) as exc:
        if args.traceback:
            raise
        print(f"ecatlab {args.command}: error: {exc}", file=sys.stderr)
        return 2


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
