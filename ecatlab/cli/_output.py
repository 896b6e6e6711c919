"""Safe file output for CLI commands: never overwrite without --force, never write onto an input,
write to a temporary file in the target folder and move it into place (a failed write leaves the
old file intact)."""

from __future__ import annotations

from ecatlab.safe_io import temp_file

import os
import pathlib
from typing import Callable, Iterable

from ecatlab.errors import OutputFolderError


def check_target(path: str, force: bool, inputs: Iterable[str] = ()) -> pathlib.Path:
    """Resolve ``path``; raise when it exists without ``force``, is an input, or its folder is missing."""
    target = pathlib.Path(path)
    folder = target.resolve().parent
    if not folder.is_dir():
        raise OutputFolderError(f"{path}: folder {folder} does not exist; create it or choose another path")
    for inp in inputs:
        if inp and os.path.exists(inp) and target.exists() and os.path.samefile(inp, target):
            raise OutputFolderError(f"{path} is an input file of this command; choose another output path")
        if inp and pathlib.Path(inp).resolve() == target.resolve():
            raise OutputFolderError(f"{path} is an input file of this command; choose another output path")
    if target.exists() and not force:
        raise OutputFolderError(f"{path} exists; pass --force to overwrite it")
    return target


def write_atomic(target: pathlib.Path, write: Callable[[str], None]) -> None:
    """Call ``write(temp_path)`` for a temporary file beside ``target`` and move it into place."""
    folder = target.resolve().parent
    fd, tmp = temp_file(folder, prefix=f".{target.name}.", suffix=target.suffix)
    os.close(fd)
    try:
        write(tmp)
        os.replace(tmp, target)
    except BaseException:
        if os.path.exists(tmp):
            os.remove(tmp)
        raise
