"""Safe outputs: every file is written to a temporary name and renamed into place.

An output directory is checked before anything is computed into it: an output that already
exists is refused unless ``overwrite`` is set, and an output path equal to an input path is
always refused. A run that is interrupted leaves no half-written file under its final name
(``os.replace`` is atomic on POSIX and Windows file systems).
"""

from __future__ import annotations

import json
import os
import tempfile
from collections.abc import Iterable
from pathlib import Path

import pandas as pd

from .errors import OutputError
from .tables import clean


def write_atomic(path: str | Path, data: bytes) -> Path:
    """Write ``data`` to ``path`` through a temporary file in the same folder and a rename."""
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    handle, temporary = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".part", dir=path.parent)
    try:
        with os.fdopen(handle, "wb") as stream:
            stream.write(data)
            stream.flush()
            os.fsync(stream.fileno())
        os.replace(temporary, path)
    except BaseException:
        Path(temporary).unlink(missing_ok=True)
        raise
    return path


def write_with(path: str | Path, writer) -> Path:
    """Call ``writer(temporary_path)`` and rename the result into place (for GIS writers that
    need a file name rather than bytes)."""
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    temporary = path.with_name(f".{path.stem}.part{path.suffix}")
    temporary.unlink(missing_ok=True)
    try:
        writer(temporary)
        os.replace(temporary, path)
    except BaseException:
        temporary.unlink(missing_ok=True)
        raise
    return path


def csv_bytes(frame: pd.DataFrame) -> bytes:
    """A table as CSV bytes, with floats written at full precision (reproducible)."""
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
        if self.folder.exists() and not self.folder.is_dir():
            raise OutputError(f"{self.folder}: exists and is not a folder; expected an output folder")
        protected = {Path(p).resolve() for p in inputs}
        for name in self.names:
            target = (self.folder / name).resolve()
            if target in protected:
                raise OutputError(f"{self.folder / name}: is an input file; choose another --out folder")
            if target.exists() and not overwrite:
                raise OutputError(f"{self.folder / name}: exists; use --overwrite to replace it")
        self.written: list[Path] = []

    def path(self, name: str) -> Path:
        """Final path of an output name (which must have been declared)."""
        if name not in self.names:
            raise AssertionError(f"output {name!r} was not declared")
        return self.folder / name

    def csv(self, name: str, frame: pd.DataFrame) -> Path:
        """Write a table."""
        return self._keep(write_atomic(self.path(name), csv_bytes(frame)))

    def json(self, name: str, document) -> Path:
        """Write a JSON document."""
        return self._keep(write_atomic(self.path(name), json_text(document).encode("utf-8")))

    def bytes(self, name: str, data: bytes) -> Path:
        """Write raw bytes (figures, HTML)."""
        return self._keep(write_atomic(self.path(name), data))

    def with_writer(self, name: str, writer) -> Path:
        """Write through a callable that takes a temporary path."""
        return self._keep(write_with(self.path(name), writer))

    def _keep(self, path: Path) -> Path:
        self.written.append(path)
        return path
