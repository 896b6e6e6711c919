"""Safe file output: validated targets, atomic writes, no silent overwrite, neutralised cells.

Every file ecatlab writes (tables, reports, figures, energy tables, explorer exports) goes
through this module:

* :func:`check_output` validates a target *before* any computation: the name is not empty and
  holds no control characters, it is not an existing folder, its extension is one the writer
  knows, it is not one of the inputs (compared as resolved paths and with
  :func:`os.path.samefile`), it does not exist unless ``force`` is given, and the nearest
  existing parent is a writable folder. Missing parent folders are created when the file is
  written (the same rule for every command and API writer).
* :func:`atomic_write_text`, :func:`atomic_write_bytes` and :func:`atomic_path` write to a
  temporary file in the target folder and move it into place with :func:`os.replace`, so a write
  that fails midway (disk full, file-size limit, an exception while rendering) leaves the old
  file intact and no temporary file behind.
* :func:`neutralise_cell` / :func:`neutralise_frame` defuse spreadsheet formula injection in
  CSV/TSV output following the OWASP "CSV Injection" guidance: a text cell that starts with
  ``=``, ``+``, ``-``, ``@``, a tab or a carriage return gets a leading apostrophe (``'``),
  unless the cell is a number (``-0.25``, ``+1e-3``). Numeric cells are never touched.
* :func:`markdown_cell` escapes ``|`` (and line breaks) for pipe tables; :func:`html_text`
  escapes text for HTML.

Notes
-----
Formula injection: OWASP Foundation, "CSV Injection" (owasp.org/www-community/attacks/CSV_Injection),
which recommends prefixing cells that begin with ``=``, ``+``, ``-``, ``@``, tab (0x09) or
carriage return (0x0D) with a single quote. A neutralised surface name reads back with the
apostrophe (``'=cmd``); this is the documented price of a file that is safe to open in a
spreadsheet.
"""

from __future__ import annotations

import contextlib
import html
import os
import pathlib
import re
import tempfile
from typing import Iterable, Iterator, Sequence

from ecatlab.errors import OutputExistsError, OutputPathError, clip_path

__all__ = [
    "check_output",
    "same_file",
    "atomic_write_text",
    "atomic_write_bytes",
    "atomic_path",
    "write_csv",
    "comment_lines",
    "csv_text",
    "neutralise_cell",
    "neutralise_frame",
    "markdown_cell",
    "html_text",
    "FORMULA_TRIGGERS",
]

#: First characters that make a spreadsheet treat a cell as a formula (OWASP CSV Injection).
FORMULA_TRIGGERS = ("=", "+", "-", "@", "\t", "\r")

_NUMBER_RE = re.compile(r"^[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?$")
_CONTROL_RE = re.compile(r"[\x00-\x1f\x7f]")


# ------------------------------------------------------------------------------------------------
# target validation
# ------------------------------------------------------------------------------------------------
def same_file(a: str | os.PathLike, b: str | os.PathLike) -> bool:
    """True when ``a`` and ``b`` name the same file (resolved paths, or :func:`os.path.samefile`)."""
    try:
        if pathlib.Path(a).resolve() == pathlib.Path(b).resolve():
            return True
    except (OSError, RuntimeError, ValueError):
        pass
    try:
        return os.path.samefile(a, b)
    except (OSError, ValueError):
        return False


def check_output(
    path: str | os.PathLike,
    *,
    force: bool = False,
    inputs: Iterable[str | os.PathLike | None] = (),
    suffixes: Sequence[str] | None = None,
    option: str = "-o",
    what: str = "output file",
) -> pathlib.Path:
    """Validate an output file before anything is computed; return it as a Path.

    Parameters
    ----------
    path : str or PathLike
        The file to be written.
    force : bool
        Allow replacing an existing file.
    inputs : iterable of path
        Files the command reads; the output may not be one of them (even with ``force``).
    suffixes : sequence of str, optional
        Allowed extensions without the dot, lower case (``("html", "htm")``); ``None``: any.
    option : str
        The option or argument that named the file, used in messages (``"-o"``, ``"--figure"``).
    what : str
        What the file is, used in messages.

    Raises
    ------
    OutputPathError
        Empty name, control characters, a folder, a wrong extension, the parent is not a folder
        or not writable, or the output is one of the inputs.
    OutputExistsError
        The file exists and ``force`` is false.
    """
    if path is None or str(path).strip() == "":
        raise OutputPathError(f"{option}: empty file name; give the {what} to write, e.g. {option} out.{(suffixes or ['csv'])[0]}")
    text = os.fspath(path)
    if _CONTROL_RE.search(str(text)):
        raise OutputPathError(f"{option} {clip_path(text)!r}: the file name holds control characters; choose a plain name")
    target = pathlib.Path(text)
    if target.is_dir() or str(text).endswith(("/", os.sep)):
        raise OutputPathError(f"{option} {clip_path(text)!r} is a folder; give a file name inside it, e.g. {option} {clip_path(os.path.join(text, 'out.' + (suffixes or ['csv'])[0]))}")
    for src in inputs:
        if src is None:
            continue
        if same_file(target, src):
            raise OutputPathError(
                f"{option} {clip_path(text)!r} is the input file {clip_path(os.fspath(src))!r}; writing there would destroy it. "
                "Choose another output name"
            )
    if suffixes is not None:
        suffix = target.suffix.lower().lstrip(".")
        if suffix not in suffixes:
            shown = ", ".join("." + s for s in suffixes)
            got = f"extension .{suffix}" if suffix else "no extension"
            raise OutputPathError(f"{option} {clip_path(text)!r}: {got}; the {what} needs one of {shown}")
    if target.exists() and not force:
        raise OutputExistsError(f"{option} {clip_path(text)!r} already exists; choose another name or pass --force (force=True) to replace it")
    if target.exists() and not target.is_file():
        raise OutputPathError(f"{option} {clip_path(text)!r} exists and is not a regular file; choose another name")
    parent = _existing_parent(target)
    if not parent.is_dir():
        raise OutputPathError(f"{option} {clip_path(text)!r}: {clip_path(str(parent))!r} is a file, not a folder; choose another location")
    if not os.access(parent, os.W_OK | os.X_OK):
        raise OutputPathError(f"{option} {clip_path(text)!r}: folder {clip_path(str(parent))!r} is not writable; choose another location")
    return target


def _existing_parent(target: pathlib.Path) -> pathlib.Path:
    parent = target.absolute().parent
    while not parent.exists() and parent != parent.parent:
        parent = parent.parent
    return parent


def _prepare_folder(target: pathlib.Path) -> pathlib.Path:
    folder = target.absolute().parent
    try:
        folder.mkdir(parents=True, exist_ok=True)
    except FileExistsError:
        raise OutputPathError(f"{clip_path(str(target))!r}: a parent of the output is a file, not a folder; choose another location") from None
    return folder


# ------------------------------------------------------------------------------------------------
# atomic writes
# ------------------------------------------------------------------------------------------------
def temp_file(folder, prefix: str = ".ecatlab-", suffix: str = ".part") -> tuple[int, str]:
    """A temporary file in ``folder`` (same file system as the target, so ``os.replace`` is atomic).

    ``tempfile.mkstemp`` creates it readable by its owner only; the mode is set to what an ordinary
    write would give (0666 minus the umask), so the file moved into place is not left private.
    Returns ``(fd, path)``.
    """
    fd, path = tempfile.mkstemp(prefix=prefix, suffix=suffix, dir=folder)
    umask = os.umask(0)
    os.umask(umask)
    os.fchmod(fd, 0o666 & ~umask)
    return fd, path


@contextlib.contextmanager
def atomic_path(
    path: str | os.PathLike,
    *,
    force: bool = False,
    inputs: Iterable[str | os.PathLike | None] = (),
    suffixes: Sequence[str] | None = None,
    option: str = "-o",
    what: str = "output file",
) -> Iterator[pathlib.Path]:
    """Context manager yielding a temporary path in the target folder; on success it replaces ``path``.

    The target is validated first (:func:`check_output`). If the body raises, or the final
    :func:`os.replace` fails, the temporary file is removed and any existing file at ``path`` is
    left as it was.

    Examples
    --------
    >>> with atomic_path("fig.svg", force=True) as tmp:   # doctest: +SKIP
    ...     figure.savefig(tmp, format="svg")
    """
    target = check_output(path, force=force, inputs=inputs, suffixes=suffixes, option=option, what=what)
    folder = _prepare_folder(target)
    fd, tmp_name = temp_file(folder, prefix=f".{target.name[:40]}.", suffix=".part")
    os.close(fd)
    tmp = pathlib.Path(tmp_name)
    try:
        yield tmp
        if target.exists() and not force:  # appeared while we were writing
            raise OutputExistsError(f"{clip_path(str(target))!r} appeared while writing; pass --force (force=True) to replace it")
        os.replace(tmp, target)
    except BaseException:
        with contextlib.suppress(OSError):
            tmp.unlink()
        raise


def atomic_write_bytes(path: str | os.PathLike, data: bytes, **kwargs) -> pathlib.Path:
    """Write ``data`` atomically (see :func:`atomic_path` for the keyword arguments); returns the path."""
    with atomic_path(path, **kwargs) as tmp:
        with open(tmp, "wb") as fh:
            fh.write(data)
            fh.flush()
            os.fsync(fh.fileno())
    return pathlib.Path(path)


def atomic_write_text(path: str | os.PathLike, text: str, encoding: str = "utf-8", **kwargs) -> pathlib.Path:
    """Write ``text`` atomically (UTF-8 by default; see :func:`atomic_path`); returns the path."""
    return atomic_write_bytes(path, text.encode(encoding), **kwargs)


# ------------------------------------------------------------------------------------------------
# cell escaping
# ------------------------------------------------------------------------------------------------
def neutralise_cell(value):
    """A text cell made safe for spreadsheets (OWASP CSV Injection); other values unchanged.

    >>> neutralise_cell("=cmd|' /C calc'!A0")
    "'=cmd|' /C calc'!A0"
    >>> neutralise_cell("-0.25"), neutralise_cell(-0.25), neutralise_cell("ALY-01")
    ('-0.25', -0.25, 'ALY-01')
    """
    if not isinstance(value, str) or not value:
        return value
    if value[0] in FORMULA_TRIGGERS and not _NUMBER_RE.match(value.strip()):
        return "'" + value
    return value


def neutralise_frame(frame):
    """Copy of a DataFrame whose text cells, column names and index labels are neutralised.

    Numeric, boolean and datetime columns are returned unchanged (never touched).
    """
    import pandas as pd

    out = frame.copy()
    for col in out.columns:
        series = out[col]
        if pd.api.types.is_numeric_dtype(series) or pd.api.types.is_bool_dtype(series) or pd.api.types.is_datetime64_any_dtype(series):
            continue
        values = series.astype(object)
        if any(isinstance(v, str) and v[:1] in FORMULA_TRIGGERS and v for v in values):
            out[col] = [neutralise_cell(v) for v in values]
    out.columns = [neutralise_cell(c) if isinstance(c, str) else c for c in out.columns]
    if not isinstance(out.index, pd.RangeIndex) and not isinstance(out.index, pd.MultiIndex):
        if out.index.dtype == object or pd.api.types.is_string_dtype(out.index):
            out.index = pd.Index([neutralise_cell(v) for v in out.index], name=neutralise_cell(out.index.name))
    out.attrs = dict(frame.attrs)
    return out


def csv_text(frame, **to_csv) -> str:
    """``frame.to_csv(**to_csv)`` after :func:`neutralise_frame` (for printing or writing).

    A text cell holding a carriage return is quoted (the csv module quotes only the characters
    of the line terminator, so a bare CR would otherwise split the row in many readers).
    """
    import csv

    safe = neutralise_frame(frame)
    if "quoting" not in to_csv:
        cells = [c for c in safe.columns if isinstance(c, str)]
        for col in safe.columns:
            if safe[col].dtype == object or str(safe[col].dtype) in ("string", "str", "category"):
                cells.extend(v for v in safe[col].astype(object) if isinstance(v, str))
        if any("\r" in c for c in cells):
            to_csv["quoting"] = csv.QUOTE_NONNUMERIC
    return safe.to_csv(**to_csv)


def write_csv(frame, path: str | os.PathLike, *, header_lines: Sequence[str] = (), force: bool = False,
              inputs: Iterable[str | os.PathLike | None] = (), option: str = "-o", **to_csv) -> pathlib.Path:
    """Write a DataFrame as CSV atomically, formula-injection neutralised.

    ``header_lines`` are written first, each prefixed with ``# `` unless it already starts with
    ``#`` (ecatlab's readers and ``pandas.read_csv(comment="#")`` skip them).
    """
    text = comment_lines(header_lines)
    suffix = pathlib.Path(path).suffix.lower().lstrip(".")
    sep = to_csv.pop("sep", "\t" if suffix == "tsv" else ",")
    text += csv_text(frame, sep=sep, **to_csv)
    return atomic_write_text(path, text, force=force, inputs=inputs, suffixes=("csv", "tsv", "txt"), option=option,
                             what="CSV file")


def comment_lines(lines: Iterable[str]) -> str:
    """``#`` comment lines for the top of a CSV file: each line prefixed with ``# `` (unless it
    already starts with ``#``), line breaks inside a line turned into spaces, one per line."""
    out = []
    for line in lines:
        text = str(line).replace("\r", " ").replace("\n", " ")
        out.append((text if text.startswith("#") else f"# {text}") + "\n")
    return "".join(out)


def markdown_cell(text) -> str:
    r"""Text for one cell of a Markdown pipe table: ``|`` -> ``\|``, line breaks -> spaces."""
    return str(text).replace("\\|", "|").replace("|", r"\|").replace("\r\n", " ").replace("\n", " ").replace("\r", " ")


def html_text(text, quote: bool = True) -> str:
    """HTML-escaped text (``&``, ``<``, ``>`` and, with ``quote``, both quote characters)."""
    return html.escape(str(text), quote=quote)
