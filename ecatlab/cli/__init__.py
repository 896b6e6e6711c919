"""Command-line interface: ``ecatlab <command> ...``.

Each module in this package that defines ``register(subparsers)`` contributes one or more
subcommands; ``register`` adds an argparse parser and sets ``func=run`` where ``run(args)``
returns the exit code. Modules are imported lazily: :data:`COMMANDS` maps the built-in
subcommands to their modules, a command named like a module file ``ecatlab/cli/<name>.py`` imports
only that module, and anything else (``--help``, a mistyped command) imports every module, so a
new file with ``register(subparsers)`` is picked up without editing this table.

Every error a user can cause ends in one line on stderr and exit code 2: usage errors (unknown
or mistyped options with a "did you mean", values out of range), and errors derived from
:class:`~ecatlab.errors.EcatlabError` or ``OSError``. ``--traceback`` shows the full traceback.
An unexpected exception (a bug) is also one line, with exit code 1 and the advice to rerun with
``--traceback``.
"""

from __future__ import annotations

import argparse
import importlib
import pkgutil
import sys
import warnings
from typing import Iterable, Sequence

__all__ = ["main", "build_parser", "COMMANDS", "SAFETY_NOTE"]

SAFETY_NOTE = (
    "Results are theoretical estimates (CHE model, thermodynamics only). Any experiment they inform "
    "follows local safety codes and licensed practice (CO is toxic, H2 flammable, electrolytes corrosive)."
)

#: Built-in subcommand -> module of this package that registers it (imported only when used).
COMMANDS = {
    "demo": "demo",
    "ingest": "ingest",
    "pathways": "table",
    "report": "report",
    "routes": "routes",
    "table": "table",
    "thermo": "thermo",
    "volcano": "volcano",
}

_MESSAGE_LIMIT = 2000  # characters of one error line


class UsageError(Exception):
    """A command line argparse cannot accept; carries the parser's prog for the message."""

    def __init__(self, prog: str, message: str):
        self.prog = prog
        self.message = message
        super().__init__(message)


class _Parser(argparse.ArgumentParser):
    """ArgumentParser whose errors become one line (no usage block), raised instead of exiting."""

    def error(self, message: str):  # noqa: D401 - argparse API
        raise UsageError(self.prog, message)


def _module_names() -> list[str]:
    return sorted(info.name for info in pkgutil.iter_modules(__path__) if not info.name.startswith("_"))


def _command_of(argv: Sequence[str]) -> str | None:
    for token in argv:
        if token == "--":
            return None
        if not token.startswith("-"):
            return token
    return None


def _modules_for(command: str | None) -> list[str]:
    if command in COMMANDS:
        return [COMMANDS[command]]
    names = _module_names()
    if command in names:
        return [command]
    return sorted(set(names) | set(COMMANDS.values()))


def build_parser(argv: Sequence[str] | None = None) -> argparse.ArgumentParser:
    """The argument parser; with ``argv`` only the module of its subcommand is imported."""
    from ecatlab import __version__

    parser = _Parser(
        prog="ecatlab",
        description="Free-energy pathways, limiting potentials and overpotentials with the computational hydrogen electrode.",
        epilog=SAFETY_NOTE,
    )
    parser.add_argument("--version", action="version", version=f"ecatlab {__version__}")
    parser.add_argument("--traceback", action="store_true", help="show the full traceback on errors")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)
    wanted = _modules_for(_command_of(argv) if argv is not None else None)
    for name in wanted:
        module = importlib.import_module(f"{__name__}.{name}")
        register = getattr(module, "register", None)
        if register is not None:
            register(sub)
    parser._ecatlab_subparsers = sub  # type: ignore[attr-defined]
    return parser


def suggest(word: str, choices: Iterable[str], n: int = 1) -> str:
    """``"; did you mean 'X'?"`` for the closest of ``choices`` (empty when nothing is close)."""
    import difflib

    from ecatlab.errors import clip

    if len(str(word)) > 200:  # nothing known is that long; difflib would take seconds
        return ""
    close = difflib.get_close_matches(str(word), list(choices), n=n, cutoff=0.6)
    if not close:
        return ""
    return "; did you mean " + " or ".join(repr(clip(c)) for c in close) + "?"


def _option_strings(parser: argparse.ArgumentParser) -> list[str]:
    """Option strings of a parser and of its nested subcommands (e.g. ``dataset convert``)."""
    out = []
    for action in parser._actions:
        out += action.option_strings
        if isinstance(action, argparse._SubParsersAction):
            for child in action.choices.values():
                out += _option_strings(child)
    return out


def _unknown_options(parser: argparse.ArgumentParser, argv: Sequence[str]) -> None:
    """Raise a UsageError with a "did you mean" for the first option no parser knows."""
    from ecatlab.errors import clip

    sub = getattr(parser, "_ecatlab_subparsers", None)
    command = _command_of(argv)
    target = sub.choices.get(command) if (sub is not None and command) else None
    known = _option_strings(parser) + (_option_strings(target) if target is not None else [])
    for token in argv:
        if token == "--":
            break
        if not token.startswith("-") or token == "-" or (len(token) > 1 and (token[1].isdigit() or token[1] == ".")):
            continue
        name = token.split("=", 1)[0]
        try:
            float(token)
            continue  # a negative number or -inf: a value, argparse decides
        except ValueError:
            pass
        if name in known:
            continue
        matches = sorted({k for k in known if k.startswith("--") and k.startswith(name)}) if name.startswith("--") else []
        if len(matches) == 1:
            continue  # an unambiguous abbreviation argparse accepts
        prog = target.prog if target is not None else parser.prog
        if len(matches) > 1:
            raise UsageError(prog, f"ambiguous option {clip(name)!r}: it could be {' or '.join(matches)}; write it out")
        if not name.startswith("--") and len(name) > 2 and name[:2] in known:
            continue  # -T300 style
        prog = target.prog if target is not None else parser.prog
        raise UsageError(prog, f"unknown option {clip(name)!r}{suggest(name, known)} (see '{prog} --help')")


def _one_line(text: str) -> str:
    from ecatlab.errors import clip

    line = " ".join(str(text).split())
    return clip(line, _MESSAGE_LIMIT) if len(line) > _MESSAGE_LIMIT else line


def main(argv: Sequence[str] | None = None) -> int:
    """Entry point of the ``ecatlab`` console script; returns the exit code."""
    argv = list(sys.argv[1:] if argv is None else argv)
    if argv[:1] == ["--version"]:
        from ecatlab import __version__

        print(f"ecatlab {__version__}")
        return 0
    parser = build_parser(argv)
    try:
        _unknown_options(parser, argv)
        args = parser.parse_args(argv)
    except UsageError as exc:
        message = exc.message
        if "invalid choice" in message and "argument COMMAND" in message:
            command = _command_of(argv) or ""
            message = f"unknown command {command!r}{suggest(command, parser._ecatlab_subparsers.choices)}; see 'ecatlab --help'"
        print(f"{exc.prog}: error: {_one_line(message)}", file=sys.stderr)
        return 2
    except SystemExit as exc:  # --help, --version
        return int(exc.code or 0)
    if not getattr(args, "command", None):
        parser.print_help()
        return 2
    from ecatlab.errors import EcatlabError, EcatlabWarning

    def show_warning(message, category, filename, lineno, file=None, line=None):
        print(f"warning: {_one_line(message)}", file=sys.stderr)

    try:
        with warnings.catch_warnings():
            warnings.simplefilter("always", EcatlabWarning)
            warnings.showwarning = show_warning
            return int(args.func(args) or 0)
    except BrokenPipeError:  # output piped into e.g. `head`
        sys.stderr.close()
        return 0
    except KeyboardInterrupt:
        if args.traceback:
            raise
        print(f"ecatlab {args.command}: interrupted; no output file was replaced", file=sys.stderr)
        return 130
    except UsageError as exc:
        print(f"{exc.prog}: error: {_one_line(exc.message)}", file=sys.stderr)
        return 2
    except (EcatlabError, OSError) as exc:
        if args.traceback:
            raise
        print(f"ecatlab {args.command}: error: {_one_line(exc)}", file=sys.stderr)
        return 2
    except Exception as exc:  # a bug: still one line, with the way to the details
        if args.traceback:
            raise
        print(f"ecatlab {args.command}: internal error ({type(exc).__name__}: {_one_line(exc)}); "
              "rerun with 'ecatlab --traceback ...' and report it", file=sys.stderr)
        return 1


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
