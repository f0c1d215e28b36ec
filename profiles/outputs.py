"""Safe outputs: every file is written to a temporary name and renamed into place.

An output directory is checked before anything is computed into it: an output that already
exists is refused unless ``overwrite`` is set, and an output path equal to an input path (the
same file, through a symbolic or a hard link too) is always refused. A run that is interrupted
leaves no half-written file under its final name and no temporary file behind (``os.replace``
is atomic on POSIX and Windows file systems; the temporary file is removed on any exception,
``KeyboardInterrupt`` included). Files get the permissions the user's umask gives new files.
Tables are written with a fixed float format and line ending, so the same input gives the same
bytes on every run. In :class:`OutputFolder` a file system error (disk full, no permission)
becomes an :class:`~profiles.errors.OutputError` naming the file.
"""

from __future__ import annotations

import functools
import json
import os
import tempfile
from collections.abc import Iterable
from pathlib import Path

import pandas as pd

from .errors import OutputError
from .tables import clean


@functools.lru_cache(maxsize=1)
def _umask() -> int:
    """The process umask (read once: reading it means setting it for an instant)."""
    mask = os.umask(0o022)
    os.umask(mask)
    return mask


def write_atomic(path: str | Path, data: bytes) -> Path:
    """Write ``data`` to ``path`` through a temporary file in the same folder and a rename.

    The temporary file (``.NAME.XXXXXXXX.part``) is removed on any exception; ``path`` is either
    its old content or the whole of ``data``, never a part of it. File system errors are raised
    as they come (``OSError``); :class:`OutputFolder` turns them into one line for the user.
    """
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    handle, temporary = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".part", dir=path.parent)
    try:
        with os.fdopen(handle, "wb") as stream:
            stream.write(data)
            stream.flush()
            os.fsync(stream.fileno())
        os.chmod(temporary, 0o666 & ~_umask())  # mkstemp makes files readable by the owner only
        os.replace(temporary, path)
    except BaseException:
        Path(temporary).unlink(missing_ok=True)
        raise
    return path


def temporary_name(final: str | Path) -> Path:
    """The temporary path :func:`write_with` writes ``final`` to first: ``.STEM.partSUFFIX``
    in the same folder (the suffix is kept, since GIS writers choose the format from it)."""
    final = Path(final)
    return final.with_name(f".{final.stem}.part{final.suffix}")


def write_with(path: str | Path, writer) -> Path:
    """Call ``writer(temporary_path)`` and rename the result into place (for GIS writers that
    need a file name rather than bytes).

    The temporary path is :func:`temporary_name`; it is removed on any exception.
    """
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    temporary = temporary_name(path)
    try:
        temporary.unlink(missing_ok=True)
        writer(temporary)
        os.replace(temporary, path)
    except BaseException:
        temporary.unlink(missing_ok=True)
        raise
    return path


def csv_bytes(frame: pd.DataFrame) -> bytes:
    """A table as CSV bytes: floats with 10 significant digits, ``\\n`` line ends, UTF-8, so the
    same table gives the same bytes on every run."""
    return frame.to_csv(index=False, lineterminator="\n", float_format="%.10g").encode("utf-8")


def json_text(document) -> str:
    """A JSON document with NaN as null, keys in insertion order, two-space indent."""
    return json.dumps(clean(document), indent=2, allow_nan=False) + "\n"


class OutputFolder:
    """A folder that a command writes its named outputs into, safely.

    Parameters
    ----------
    folder : path
        The output folder (created when needed).
    names : iterable of str
        File names the command will write; checked before any work is done.
    inputs : iterable of path
        Input files, which are never overwritten.
    overwrite : bool
        Allow replacing existing outputs.
    """

    def __init__(self, folder, names: Iterable[str], *, inputs: Iterable = (), overwrite: bool = False):
        self.folder = Path(folder)
        self.names = tuple(names)
        existing = next((p for p in (self.folder, *self.folder.parents) if p.exists()), None)
        if existing is not None and not existing.is_dir():
            where = "exists" if existing == self.folder else f"is inside {existing}, which exists"
            raise OutputError(f"{self.folder}: {where} and is not a folder; expected an output folder")
        inputs = [Path(p) for p in inputs]
        protected = {p.resolve() for p in inputs}
        for name in self.names:
            target = self.folder / name
            if target.resolve() in protected or any(_same_file(target, p) for p in inputs):
                raise OutputError(f"{target}: is an input file; choose another --out folder")
            if target.is_dir():
                raise OutputError(f"{target}: is a folder; expected to write a file there")
            if target.exists() and not overwrite:
                raise OutputError(f"{target}: exists; use --overwrite to replace it")
        self.written: list[Path] = []

    def path(self, name: str) -> Path:
        """Final path of an output name (which must have been declared)."""
        if name not in self.names:
            raise AssertionError(f"output {name!r} was not declared")
        return self.folder / name

    def csv(self, name: str, frame: pd.DataFrame) -> Path:
        """Write a table."""
        return self._write(name, lambda path: write_atomic(path, csv_bytes(frame)))

    def json(self, name: str, document) -> Path:
        """Write a JSON document."""
        return self._write(name, lambda path: write_atomic(path, json_text(document).encode("utf-8")))

    def bytes(self, name: str, data: bytes) -> Path:
        """Write raw bytes (figures, HTML)."""
        return self._write(name, lambda path: write_atomic(path, data))

    def with_writer(self, name: str, writer) -> Path:
        """Write through a callable that takes a temporary path."""
        return self._write(name, lambda path: write_with(path, writer))

    def _write(self, name: str, write) -> Path:
        path = self.path(name)
        try:
            write(path)
        except OSError as error:
            raise OutputError(f"{path}: cannot be written ({error.strerror or error})") from None
        self.written.append(path)
        return path


def _same_file(a: Path, b: Path) -> bool:
    """Whether two paths name one file (hard links included); False when either is missing."""
    try:
        return os.path.samefile(a, b)
    except OSError:
        return False
