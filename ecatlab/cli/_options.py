"""Options shared by the subcommands, so the same thing has the same name, type and range everywhere.

=======================  ==========================================================================
option                   meaning
=======================  ==========================================================================
``-T/--temperature``     temperature in K (finite, > 0; the engine checks the supported range)
``--pH``                 pH (finite; the engine checks the range)
``--scale``              ``RHE`` or ``SHE``, case-insensitive
``--surface``            only these surfaces (names checked against the table, with "did you mean")
``-p/--pathway``         built-in pathway key(s) (with "did you mean")
``--pathway-file``       your own pathway(s), one step per line
``-o/--output``          the file to write; checked before anything is computed
``--force``              replace an existing output file
=======================  ==========================================================================
"""

from __future__ import annotations

import argparse
import math
import os
from typing import Iterable, Sequence

from ecatlab.errors import clip, clip_path

STANDARD_T = 298.15  # K; the same value as ecatlab.constants.STANDARD_TEMPERATURE (not imported: startup time)


# ------------------------------------------------------------------------------------------------
# argparse types (a bad value gives "argument --X: ..." on one line, exit 2)
# ------------------------------------------------------------------------------------------------
def finite_float(text: str) -> float:
    """A finite number (``nan``/``inf`` refused)."""
    try:
        value = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"{clip(text)!r} is not a number") from None
    if not math.isfinite(value):
        raise argparse.ArgumentTypeError(f"{clip(text)!r} is not a finite number; give a plain value")
    return value


def number_pairs(items: Iterable[str], option: str, example: str, error=None, form: str = "KEY=NUMBER") -> dict[str, float]:
    """``KEY=NUMBER`` items of an option as a dict; a one-line error (``error`` class, default
    OptionError) naming the option, the item and an example when one is malformed or not finite."""
    from ecatlab.errors import OptionError

    error = error or OptionError
    out: dict[str, float] = {}
    for item in items:
        key, sep, value = item.partition("=")
        try:
            number = float(value)
        except ValueError:
            number = float("nan") if sep and key.strip() else None
        if not sep or not key.strip() or number is None:
            raise error(f"{option} {clip(item)!r}: write {form}, e.g. {example}")
        if not math.isfinite(number):
            raise error(f"{option} {clip(item)!r}: the number must be finite, e.g. {example}")
        out[key.strip()] = number
    return out


def positive_float(text: str) -> float:
    value = finite_float(text)
    if value <= 0:
        raise argparse.ArgumentTypeError(f"{clip(text)!r} must be above 0")
    return value


def temperature(text: str) -> float:
    """A temperature in K: finite and above 0 (the engine checks its supported range)."""
    value = finite_float(text)
    if value <= 0:
        raise argparse.ArgumentTypeError(f"{clip(text)!r} K is not a temperature above absolute zero; give kelvin, e.g. 298.15")
    return value


def int_range(low: int, high: int):
    """An int type accepting ``low`` to ``high`` inclusive."""

    def parse(text: str) -> int:
        try:
            value = int(text)
        except ValueError:
            raise argparse.ArgumentTypeError(f"{clip(text)!r} is not a whole number (allowed {low} to {high})") from None
        if not low <= value <= high:
            raise argparse.ArgumentTypeError(f"{value} is outside the allowed range {low} to {high}")
        return value

    parse.__name__ = f"int {low}..{high}"
    return parse


def scale(text: str) -> str:
    """Potential scale, case-insensitive (``rhe`` -> ``RHE``)."""
    return str(text).strip().upper()


# ------------------------------------------------------------------------------------------------
# option groups
# ------------------------------------------------------------------------------------------------
def add_conditions(p: argparse.ArgumentParser, *, pH: bool = True, scale_: bool = True, temperature_: bool = True,
                   multi_temperature: bool = False) -> None:
    """``--pH``, ``--scale`` and ``-T/--temperature`` with the same defaults and checks everywhere."""
    if pH:
        p.add_argument("--pH", type=finite_float, default=0.0, help="pH of the electrolyte (default 0)")
    if scale_:
        p.add_argument("--scale", type=scale, choices=("RHE", "SHE"), default="RHE",
                       help="potential scale of the results, RHE or SHE, any case (default RHE)")
    if temperature_:
        if multi_temperature:
            p.add_argument("-T", "--temperature", type=temperature, nargs="+", default=[STANDARD_T], metavar="K",
                           help="temperature(s) in K (default 298.15)")
        else:
            p.add_argument("-T", "--temperature", type=temperature, default=STANDARD_T, metavar="K",
                           help="temperature in K (default 298.15)")


def add_surface(p: argparse.ArgumentParser) -> None:
    p.add_argument("--surface", nargs="+", metavar="NAME", default=None, help="only these surfaces (default all)")


def add_pathways(p: argparse.ArgumentParser, *, required: bool = False, single: bool = False) -> None:
    """``-p/--pathway`` (built-in keys) and ``--pathway-file`` (your own, one step per line)."""
    if single:
        p.add_argument("--pathway", "-p", metavar="KEY", default=None,
                       help="built-in pathway key, e.g. orr-4e (see 'ecatlab pathways'); or give --pathway-file")
        p.add_argument("--pathway-file", metavar="FILE", default=None,
                       help="your own pathway: a text file with one step per line ('#' starts a comment)")
    else:
        p.add_argument("--pathway", "-p", nargs="+", default=[], metavar="KEY",
                       help="built-in pathway key(s), e.g. orr-4e oer-4e (see 'ecatlab pathways')")
        p.add_argument("--pathway-file", nargs="+", default=[], metavar="FILE",
                       help="your own pathway(s): text files with one step per line, e.g. "
                            "'OOH* + H+ + e- -> O* + H2O(l)' ('#' starts a comment)")


def add_output(p: argparse.ArgumentParser, what: str, default: str | None = None, metavar: str = "FILE") -> None:
    """``-o/--output`` and ``--force``."""
    extra = f" (default {default})" if default else ""
    p.add_argument("-o", "--output", default=default, metavar=metavar,
                   help=f"{what}{extra}; an existing file is kept unless --force is given; missing folders are created")
    p.add_argument("--force", action="store_true", help="replace the output file if it exists (never an input file)")


# ------------------------------------------------------------------------------------------------
# checks used by several commands
# ------------------------------------------------------------------------------------------------
def pathway_list(args: argparse.Namespace, *, required: bool = True) -> list:
    """Built-in keys (checked, with "did you mean") and parsed pathway files, in the order given."""
    from ecatlab.errors import PathwayError
    from ecatlab.notation import read_pathway_file
    from ecatlab.pathways import pathway as builtin

    keys = args.pathway if isinstance(args.pathway, list) else ([args.pathway] if args.pathway else [])
    files = args.pathway_file if isinstance(args.pathway_file, list) else ([args.pathway_file] if args.pathway_file else [])
    out: list = []
    for key in keys:
        builtin(key)  # UnknownPathwayError with "did you mean"
        out.append(key)
    out += [read_pathway_file(f) for f in files]
    if required and not out:
        raise PathwayError("give at least one --pathway KEY or --pathway-file FILE (see 'ecatlab pathways')")
    return out


def check_input_file(path: str, what: str = "energy table") -> None:
    """A readable file (not a folder), else one clear line."""
    from ecatlab.errors import InputFileError

    if not os.path.exists(path):
        raise InputFileError(f"{clip_path(path)}: {what} file not found; check the path")
    if os.path.isdir(path):
        raise InputFileError(f"{clip_path(path)}: is a folder; give the {what} file")


def check_surfaces(table, wanted: Sequence[str] | None) -> list[str] | None:
    """The requested surfaces, each known to the table (else a "did you mean" naming the file)."""
    from ecatlab.cli import suggest
    from ecatlab.errors import OptionError

    if not wanted:
        return None
    known = list(table.surfaces)
    for name in wanted:
        if name not in known:
            raise OptionError(
                f"--surface {clip(name)!r}: no such surface in {clip_path(table.source)}{suggest(name, known)} "
                f"(it has {len(known)}: {clip(', '.join(known))})"
            )
    return list(wanted)


def output_target(args: argparse.Namespace, suffixes: Sequence[str] | None, inputs: Iterable[str | None],
                  what: str, option: str = "-o", attr: str = "output"):
    """Validate ``args.<attr>`` (if given) before any computation; returns the Path or None."""
    from ecatlab.safe_io import check_output

    value = getattr(args, attr, None)
    if value is None:
        return None
    return check_output(value, force=getattr(args, "force", False), inputs=[i for i in inputs if i], suffixes=suffixes,
                        option=option, what=what)


def check_species(table, names: Iterable[str], option: str) -> None:
    """Each adsorbate of ``names`` has energies in the table, else a "did you mean" naming the option."""
    from ecatlab.cli import suggest
    from ecatlab.errors import NotationError, OptionError
    from ecatlab.notation import Species

    known = list(table.species)
    for name in names:
        try:
            key = Species.parse(name).key
        except NotationError:
            continue  # the module's own parser gives the notation message
        if Species.parse(key).is_adsorbate and key not in known:
            raise OptionError(
                f"{option} {clip(name)!r}: no energies of {clip(key)} in {clip_path(table.source)}{suggest(key, known)} "
                f"(species in the table: {clip(', '.join(known), 300)})"
            )


def descriptor_species(text: str) -> list[str]:
    """The adsorbate tokens of a descriptor such as ``'O* - OH*'`` or ``'2 OH* - O*'``."""
    import re

    return re.findall(r"[A-Za-z][A-Za-z0-9()]*\*", str(text))


def suggest_known(exc: Exception, word: str) -> Exception:
    """The same error with "did you mean" appended when its message lists the known names."""
    import re

    from ecatlab.cli import suggest

    text = str(exc)
    m = re.search(r"known(?: here)?: ([^.;]+)", text)
    if not m or "did you mean" in text or m.end() < len(text.rstrip()):
        return exc  # no list of names, or the message already goes on with a more specific hint
    known = [k.strip() for k in m.group(1).split(",") if k.strip()]
    bare = {k.split("(")[0]: k for k in known}
    hint = suggest(str(word).split("(")[0].strip(), list(bare))
    if not hint:
        return exc
    close = hint.split("'")[1]
    new = type(exc).__new__(type(exc))
    Exception.__init__(new, f"{text}; did you mean {bare.get(close, close)!r}?")
    return new
