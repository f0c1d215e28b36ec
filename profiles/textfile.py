"""Delimited text files (CSV, TSV, semicolon, pipe or whitespace separated) into a table of
text cells, one row per file line below the header.

Rules (``docs/input-handling.md`` states them for users):

* Encoding: a byte-order mark decides (UTF-8, UTF-16, UTF-32); UTF-16 without one is
  recognised by its zero bytes; otherwise UTF-8, and failing that Latin-1 with a warning.
* Files that are not text (GeoPackage/SQLite, zip or Excel workbook, Parquet, gzip, PDF, or any
  content with zero bytes) are refused with what they look like.
* Leading blank lines, comment lines (``#``) and an Excel ``sep=;`` line are skipped; the
  first other line is the header, which must hold names, not numbers (a comment line just
  above a first line of numbers that reads as a header of as many columns is the header).
  A row equal to the header is dropped ("repeated header").
* The delimiter is the one of ``, TAB ; |`` or runs of whitespace that splits the header into
  the most columns while splitting at least half of the next 50 rows into as many. A file
  whose header and rows disagree is refused. A row with another number of fields than the
  header is dropped ("wrong number of fields"), never shifted into the wrong columns.
* Fields may be quoted (``"12.5"``). Blank rows (or rows of empty fields) are kept as rows and
  dropped later as "blank line", so the row accounting counts them.
* Repeated column names: later copies are renamed ``NAME (column N)``; whether that matters
  is decided when the columns are chosen.
* With a delimiter other than the comma, a column whose numbers all use decimal commas
  (``12,5``) is read with decimal points; a column that mixes ``12,5`` and ``12.5`` is left
  alone (its comma cells are then not numbers).
"""

from __future__ import annotations

import codecs
import csv
import io
import re
import warnings
from functools import cached_property
from pathlib import Path

import numpy as np
import pandas as pd

from .columns import ALIASES, normalise
from .errors import InputError
from .stations import RawTable

_DELIMITERS = (",", "\t", ";", "|", " ")
_NEWLINE = re.compile(r"\r\n|\r|\n")
_DECIMAL_COMMA = r"[+-]?\d*,\d+(?:[eE][+-]?\d+)?"
_DECIMAL_POINT = r"[+-]?(?:\d+\.\d*|\.\d+)(?:[eE][+-]?\d+)?"
#: File signatures of formats that are not text, and what to tell the user.
_SIGNATURES = (
    (b"SQLite format 3\x00", "is an SQLite database (a GeoPackage?); give it the .gpkg suffix"),
    (b"PK\x03\x04", "is a zip archive (an Excel workbook?); export the sheet as CSV, or unzip it"),
    (b"PAR1", "is a Parquet file; give it the .parquet suffix"),
    (b"\x1f\x8b", "is gzip-compressed; decompress it first"),
    (b"%PDF", "is a PDF document; expected a delimited text file"),
)


def _decode(raw: bytes, source: str) -> tuple[str, list[str]]:
    """Decode text: a byte-order mark decides; else UTF-8, else Latin-1 (with a note)."""
    boms = (
        (codecs.BOM_UTF32_LE, "utf-32"),
        (codecs.BOM_UTF32_BE, "utf-32"),
        (codecs.BOM_UTF8, "utf-8"),
        (codecs.BOM_UTF16_LE, "utf-16"),
        (codecs.BOM_UTF16_BE, "utf-16"),
    )
    encoding = next((e for bom, e in boms if raw.startswith(bom)), None) or _utf16_without_bom(raw)
    if encoding == "utf-8":
        raw = raw[len(codecs.BOM_UTF8) :]
    elif encoding is not None:
        try:
            return raw.decode(encoding), []
        except UnicodeDecodeError as error:
            raise InputError(
                f"{source}: looks like {encoding.upper()} text but is not valid {encoding.upper()} "
                f"(byte {error.start}); save it again as UTF-8"
            ) from None
    try:
        return raw.decode("utf-8"), []
    except UnicodeDecodeError as error:
        line = raw.count(b"\n", 0, error.start) + 1
        note = (
            f"{source}: not UTF-8 (line {line} has byte 0x{raw[error.start]:02X}); read as "
            f"Latin-1 (ISO 8859-1): check names and line ids, or save the file as UTF-8"
        )
        return raw.decode("latin-1"), [note]


def _utf16_without_bom(raw: bytes) -> str | None:
    """UTF-16 text without a byte-order mark: mostly ASCII characters with a zero byte each."""
    sample = raw[:4096]
    if len(sample) < 8 or b"\x00" not in sample:
        return None
    even, odd = sample[0::2], sample[1::2]
    if odd.count(0) > 0.9 * len(odd) and even.count(0) < 0.1 * len(even):
        return "utf-16-le"
    if even.count(0) > 0.9 * len(even) and odd.count(0) < 0.1 * len(odd):
        return "utf-16-be"
    return None


def read_text(path: Path, *, line_column: str | None = None, fast: bool = True) -> RawTable:
    """Read a delimited text file into a :class:`~profiles.stations.RawTable` of text cells.

    Rows with another number of fields than the header, and blank rows, get their reason here.
    With a delimiter other than the comma, decimal commas are read as points in every column
    that uses them throughout, except the line column (``line_column`` or a line alias).

    Parameters
    ----------
    fast : bool
        True (the default): the row layout (fields per row, blank rows, repeated headers) is
        found with array operations on the bytes of the file and the cells are parsed by the
        pandas C parser, numbers straight to float64; a file whose layout or quoting that
        parser would read differently falls back to the careful path. False: the careful path
        only, one row per line split by the :mod:`csv` module, every cell as text; slow, and
        the reference the fast path is tested against. Both give the same survey.
    """
    source = str(path)
    try:
        raw = path.read_bytes()
    except OSError as error:
        raise InputError(f"{source}: cannot be read ({error.strerror or error})") from None
    if not raw or raw.isspace():  # as not raw.strip(), without copying the file
        raise InputError(f"{source}: file is empty; expected a header row and data rows")
    for signature, message in _SIGNATURES:
        if raw.startswith(signature):
            raise InputError(f"{source}: {message}")
    if raw.isascii() and _utf16_without_bom(raw) is None:
        # ASCII (no byte-order mark is ASCII): the bytes are the UTF-8 text, decoded line by
        # line only where a line is needed as text.
        data, notes = raw, []
        binary = b"\x00" in raw[:65536]
        file_bytes = True
    else:
        text, notes = _decode(raw, source)
        binary = "\x00" in text[:65536]
        data = text.encode("utf-8")
        file_bytes = False
    if binary:
        raise InputError(f"{source}: binary content; expected a delimited text file with a header row")
    if b"\r" in data:
        # The line ends of _NEWLINE (CR LF, CR, LF) as LF: the same lines, split by one character
        # (in UTF-8 a byte 13 or 10 is always that character).
        data = data.replace(b"\r\n", b"\n").replace(b"\r", b"\n")
        file_bytes = False
    lines = _Lines(data)

    # Preamble: blank lines, comment lines, an Excel "sep=;" line.
    delimiter = None
    first = 0
    while first < len(lines):
        stripped = lines[first].strip()
        match = re.fullmatch(r"sep=(.)", stripped) if delimiter is None else None
        if match:
            delimiter = match.group(1)
        elif stripped and not stripped.startswith("#"):
            break
        first += 1
    if first == len(lines):
        raise InputError(f"{source}: holds only comments; expected a header row and data rows")
    header = lines[first]
    if delimiter is None:
        delimiter = _detect_delimiter(header, lines.after(first, 200), source=source, line=first + 1)
    names = [name.strip() for name in _split(header, delimiter)]
    commented = _commented_header(lines, first, delimiter, len(names))
    if commented is not None and any(_is_number(name) for name in names):
        # "# lon lat depth" above the first row of numbers: the comment is the header.
        first -= 1
        header, names = lines[first], commented
        notes.append(f"{source}: line {first + 1} is a commented header; its names are the columns")
    if not any(names):
        raise InputError(f"{source}: line {first + 1} holds no column names; expected a header row")
    if all(_is_number(name) for name in names if name):
        raise InputError(
            f"{source}: line {first + 1} holds numbers, not column names; "
            f"expected a header row such as 'line,lon,lat,depth_m'"
        )
    start, end = lines.body_span(first)
    if _blank_text(data, start, end, lambda: lines.body(first)):
        raise InputError(
            f"{source}: has a header row ({len(names)} columns) but no data rows; "
            f"expected one row per station below the header"
        )
    names = [name or f"column_{i + 1}" for i, name in enumerate(names)]
    names, duplicates = _unique_names(names)
    line_names = {normalise(n) for n in (*ALIASES["line"], line_column or "")}
    text_names = line_names | {normalise(n) for n in ALIASES["time"]}
    as_text = [normalise(n) in text_names for n in names]

    parsed = None
    if fast and delimiter != " " and len(delimiter.encode("utf-8")) == 1 and delimiter not in '\n"':
        for detailed in (False, True):
            # The C parser may read the file itself, skipping the lines before the body, when the
            # data are the file's bytes and none of those lines holds a quote (which could make
            # the parser count them otherwise).
            file = (source, first + 1) if file_bytes and data.find(b'"', 0, start) < 0 else None
            layout = _Layout(data, start, end, delimiter, header.strip(), width=len(names),
                             detailed=detailed, n_lines=len(lines) - first - 1, file=file)
            blank, repeated = layout.blank, layout.repeated
            ragged = ~blank & ~repeated & (layout.counts != len(names))
            parsed = _fast_table(layout, ~ragged & ~blank & ~repeated, names, as_text)
            if parsed is not None or layout.detailed:
                break
    if parsed is not None:
        table, cell = parsed
    else:
        cell = None
        body = lines.body(first).split("\n")
        blank = np.array([not line.strip() for line in body], dtype=bool)
        stripped_header = header.strip()
        repeated = np.array([line.strip() == stripped_header for line in body], dtype=bool)
        counts = _field_counts(body, delimiter)
        ragged = ~blank & ~repeated & (counts != len(names))
        table = _parse_cells(body, ~ragged & ~blank & ~repeated, names, delimiter)
    reasons = None  # no row has a reason (the usual clean file)
    if blank.any() or repeated.any() or ragged.any():
        reasons = np.full(len(blank), "", dtype=object)
        reasons[blank] = "blank line"
        reasons[repeated] = "repeated header"
        reasons[ragged] = "wrong number of fields"
    if repeated.any():
        notes.append(
            f"{source}: the header is repeated at {rows_text(np.flatnonzero(repeated) + first + 2)} "
            f"(files joined together?); dropped"
        )
    if ragged.any():
        rows = np.flatnonzero(ragged) + first + 2
        verb = "does" if len(rows) == 1 else "do"
        notes.append(
            f"{source}: {rows_text(rows)} {verb} not have {len(names)} fields separated by "
            f"{delimiter_name(delimiter)} like the header; dropped"
        )
    if delimiter != ",":
        numeric = [n for n in names if normalise(n) not in line_names]
        converted = _decimal_commas(table, numeric)
        if converted:
            notes.append(
                f"{source}: decimal commas read as decimal points in {', '.join(converted)} "
                f"(the file is separated by {delimiter_name(delimiter)})"
            )
    rows = np.arange(len(blank)) + first + 2  # file line numbers; the header is line first + 1
    return RawTable(table, rows, reasons, notes, duplicates, cells=cell)


class _Lines:
    """The lines of a UTF-8 text whose line ends are LF, split only as far as they are asked
    for, each decoded when it is asked for.

    ``lines[i]`` and ``len(lines)`` are those of ``text.split("\\n")`` without the empty
    string after a final newline (that newline ends the last row, it is no blank row).
    """

    def __init__(self, data: bytes):
        self.data = data
        self._starts = [0]  # offset of each line found so far
        self._end = len(data) - 1 if data.endswith(b"\n") else len(data)
        newlines = _count_byte(np.frombuffer(data, dtype=np.uint8), 10)  # always a line end in UTF-8
        self._count = newlines - (self._end < len(data)) + 1 if data else 0

    def __len__(self) -> int:
        return self._count

    def _start(self, i: int) -> int:
        while len(self._starts) <= i:
            self._starts.append(self.data.index(b"\n", self._starts[-1]) + 1)
        return self._starts[i]

    def __getitem__(self, i: int) -> str:
        if not 0 <= i < self._count:
            raise IndexError(i)
        start = self._start(i)
        stop = self.data.find(b"\n", start, self._end)
        return self.data[start : self._end if stop < 0 else stop].decode("utf-8")

    def after(self, i: int, count: int) -> list[str]:
        """Up to ``count`` lines after line ``i``."""
        return [self[j] for j in range(i + 1, min(i + 1 + count, self._count))]

    def body(self, i: int) -> str:
        """The lines after line ``i`` as one text, joined by LF (no final newline)."""
        start, end = self.body_span(i)
        return self.data[start:end].decode("utf-8")

    def body_span(self, i: int) -> tuple[int, int]:
        """Where :meth:`body` lies in the bytes: ``data[start:end]``."""
        if i + 1 >= self._count:
            return self._end, self._end
        return self._start(i + 1), self._end


def _count_byte(codes: np.ndarray, value: int, chunk: int = 1 << 18) -> int:
    """Occurrences of a byte value in an array of bytes, counted a quarter megabyte at a time
    (no temporary array as large as the file: a fresh one costs more in page faults than the
    count itself)."""
    return sum(int(np.count_nonzero(codes[i : i + chunk] == value)) for i in range(0, codes.size, chunk))


#: The first byte that is not ASCII white space as :meth:`str.isspace` sees it.
_NOT_BLANK = re.compile(rb"[^\t\n\x0b\x0c\r\x1c-\x1f ]")


def _blank_text(data: bytes, start: int, end: int, text) -> bool:
    """Whether the UTF-8 bytes ``data[start:end]`` are empty or white space only
    (``not text().strip()``), looking at the bytes up to the first that is not ASCII white
    space; ``text()`` (the decoded text) is asked for only when that byte begins a multibyte
    character, which may be white space."""
    found = _NOT_BLANK.search(data, start, end)
    if found is None:
        return True
    return data[found.start()] >= 128 and not text().strip()


#: Bytes that may begin a line of blanks: ASCII white space (as :meth:`str.strip` sees it) and
#: the lead bytes of UTF-8 sequences (U+0085, U+00A0, U+2000 ... are white space too).
_MAY_BE_BLANK = np.zeros(256, dtype=bool)
_MAY_BE_BLANK[[9, 10, 11, 12, 13, 28, 29, 30, 31, 32]] = True
_MAY_BE_BLANK[128:] = True


class _Layout:
    """The rows of a body of text (its UTF-8 bytes) found by array operations.

    ``blank``, ``repeated`` and ``counts`` (fields per row) are those of the careful path, one
    entry per line.

    A text without quotes whose delimiters number exactly ``width - 1`` times its lines is
    taken as uniform (``detailed`` False): every line is then assumed to hold ``width`` fields,
    and so to be neither blank nor ragged, which the C parser confirms (it refuses a line with
    more fields than ``width``, and with equal totals no line can then have fewer); when it
    refuses, the layout is found line by line (``detailed=True``). Line by line, a line is blank
    only if its first character is white space, so only such lines are tested with
    :meth:`str.strip`; only lines holding a quote are split by the :mod:`csv` module
    (``quoted``). In both, only lines holding the header text are compared with it.
    """

    def __init__(
        self, data: bytes, start: int, end: int, delimiter: str, header: str, *, width: int,
        detailed: bool = False, n_lines: int | None = None, file: tuple[str, int] | None = None,
    ):
        self.delimiter = delimiter
        self.file = file  # (path, lines before the body) when the data are the file's bytes
        self.data, self.start, self.end = data, start, end  # the body is data[start:end]
        codes = np.frombuffer(data, dtype=np.uint8)[start:end]
        if n_lines is None:  # else counted already: line ends + 1
            n_lines = _count_byte(codes, 10) + 1
        self.n_lines = n_lines
        self.detailed = detailed or not (
            width >= 2
            and data.find(b'"', start, end) < 0
            and _count_byte(codes, ord(delimiter)) == n_lines * (width - 1)
        )
        if self.detailed:
            starts, ends = self.starts, self.ends
            # Delimiters before the end of each line; those of line i lie between ends i-1 and i.
            before_end = np.searchsorted(np.flatnonzero(codes == ord(delimiter)), ends)
            self.counts = np.diff(before_end, prepend=0) + 1
            quotes = np.flatnonzero(codes == ord('"'))
            self.quoted = np.unique(np.searchsorted(starts, quotes, side="right") - 1)
            for i in self.quoted:
                self.counts[i] = len(self.fields(i))
            self.blank = np.zeros(n_lines, dtype=bool)
            maybe = (starts == ends) | _MAY_BE_BLANK[codes[np.minimum(starts, max(codes.size - 1, 0))]]
            for i in np.flatnonzero(maybe):
                self.blank[i] = not self.line(i).strip()
        else:
            self.counts = np.full(n_lines, width)
            self.quoted = np.zeros(0, dtype=np.intp)
            self.blank = np.zeros(n_lines, dtype=bool)
        self.repeated = np.zeros(n_lines, dtype=bool)
        target = header.encode("utf-8")
        at = data.find(target, start, end)
        while at >= 0:
            i = int(np.searchsorted(self.starts, at - start, side="right") - 1)
            self.repeated[i] = self.line(i).strip() == header
            at = data.find(target, start + int(self.ends[i]), end)

    @cached_property
    def starts(self) -> np.ndarray:
        """Offset of the first byte of each line, from the start of the body."""
        codes = np.frombuffer(self.data, dtype=np.uint8)[self.start : self.end]
        return np.concatenate([[0], np.flatnonzero(codes == 10) + 1])

    @cached_property
    def ends(self) -> np.ndarray:
        """Offset of the line end (or the end of the body) of each line."""
        return np.append(self.starts[1:] - 1, self.end - self.start)

    def line(self, i: int) -> str:
        return self.data[self.start + self.starts[i] : self.start + self.ends[i]].decode("utf-8")

    def fields(self, i: int) -> list[str]:
        return _split(self.line(i), self.delimiter)

    def holds(self, text: bytes) -> bool:
        """Whether the body holds these bytes."""
        return self.data.find(text, self.start, self.end) >= 0

    def begins_with(self, text: bytes) -> bool:
        """Whether the body begins with these bytes."""
        return self.data.startswith(text, self.start)

    def without(self, bad: np.ndarray) -> tuple[object, int]:
        """The body with the lines flagged ``bad`` emptied (their line ends kept), to read: a
        file or buffer for :func:`pandas.read_csv` and the number of lines to skip in it.

        With no such line the body is read in place: from the file itself when it is the data
        (``file``: the C parser then reads it in pieces, as it reads a path), else from the
        data without copying it. What follows the body is at most the final line end, which
        ends the last line (none is blank here).
        """
        bad = np.flatnonzero(bad)
        if not bad.size:
            if self.file is not None:
                return self.file
            stream = io.BytesIO(self.data)  # shares the bytes until written to
            stream.seek(self.start)
            return stream, 0
        keep_from = (np.concatenate([[0], self.ends[bad]]) + self.start).tolist()
        keep_to = (np.append(self.starts[bad], self.end - self.start) + self.start).tolist()
        return io.BytesIO(b"".join(self.data[a:b] for a, b in zip(keep_from, keep_to, strict=True))), 0


def _fast_table(layout: _Layout, good: np.ndarray, names: list[str], as_text: list[bool]):
    """The cells of the good rows by the pandas C parser, and the cells as written.

    A column of numbers comes as float64 (``inf`` included), any other column as text, empty
    cells as NaN; columns flagged ``as_text`` (line ids, times) are always text, so that
    ``007`` stays ``007``. Other rows get empty cells (their reason is set).

    Returns ``(table, cell)``, ``cell(position, name)`` being the text of a cell as the careful
    path reads it (see :class:`~profiles.stations.RawTable`), or None when the parser may read
    the text otherwise than the :mod:`csv` module: NUL characters, a byte-order mark, a row
    count other than one per line (a quote left open swallows later lines), or a line with
    quotes whose cells differ from the module's.
    """
    if layout.holds(b"\x00") or layout.begins_with(codecs.BOM_UTF8):
        return None
    options = dict(
        sep=layout.delimiter,
        header=None,
        names=list(range(len(names))),
        encoding="utf-8",
        keep_default_na=False,
        na_values=[""],
        skip_blank_lines=False,
        engine="c",
    )
    try:
        table = _parse(layout.without, ~good, options)
        for i in [i for i, text in enumerate(as_text) if text and not _is_text(table[i])]:
            # Line ids or times that read as numbers: again as text ("007" stays "007").
            table[i] = _parse(layout.without, ~good, {**options, "usecols": [i], "dtype": str})[i]
    except (pd.errors.ParserError, ValueError):
        return None
    if len(table) != len(good):
        return None
    table.columns = names
    quoted = layout.quoted[good[layout.quoted]]
    if quoted.size and not _same_cells(table, quoted, [layout.fields(i) for i in quoted]):
        return None

    def cell(position: int, name: str) -> str:
        column = table[name]
        if _is_text(column):
            value = column.iloc[position]
            return "" if pd.isna(value) else str(value).strip()
        if not good[position]:
            return ""
        return layout.fields(position)[names.index(name)].strip()

    return table, cell


def _parse(without, bad: np.ndarray, options: dict) -> pd.DataFrame:
    """``pandas.read_csv`` of the body without the ``bad`` lines (``without(bad)``: what to read
    and the lines to skip in it), with one type per column.

    The C parser reads a quarter megabyte of rows at a time (its default, ``low_memory``), which
    is quicker and needs less memory than the whole file at once; it then types each column
    within each piece. Where pieces of a column get types that do not join (text in one, numbers
    in another: pandas warns of mixed types), the file is read again whole, as one piece, so
    that each column gets one type from all its cells.
    """
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("error", pd.errors.DtypeWarning)
            source, skip = without(bad)
            return pd.read_csv(source, skiprows=skip, low_memory=True, **options)
    except pd.errors.DtypeWarning:
        source, skip = without(bad)
        return pd.read_csv(source, skiprows=skip, low_memory=False, **options)


def _is_text(column: pd.Series) -> bool:
    return isinstance(column.dtype, pd.StringDtype)


def _same_cells(table: pd.DataFrame, positions: np.ndarray, rows: list[list[str]]) -> bool:
    """Whether the cells of ``table`` at ``positions`` are those of ``rows`` (split text): the
    same text, or the same number as :func:`pandas.to_numeric` reads from the text."""
    for j, name in enumerate(table.columns):
        cells = pd.Series([row[j] for row in rows], dtype=object)
        column = table[name].iloc[positions]
        empty = (cells == "").to_numpy()
        if _is_text(column):
            same = np.where(empty, column.isna(), column.to_numpy(dtype=object) == cells.to_numpy())
        elif pd.api.types.is_numeric_dtype(column) and not pd.api.types.is_bool_dtype(column):
            values = column.to_numpy(dtype=float, na_value=np.nan)
            parsed = pd.to_numeric(cells.str.strip(), errors="coerce").to_numpy(dtype=float)
            same = np.where(empty, np.isnan(values), values == parsed)
        else:
            return False
        if not np.all(same):
            return False
    return True


def _commented_header(lines: list[str], first: int, delimiter: str, width: int) -> list[str] | None:
    """Names of a comment line just above line ``first`` that reads as a header of ``width``
    columns (``# lon lat depth_m``), else None."""
    if first == 0 or not lines[first - 1].lstrip().startswith("#"):
        return None
    names = [n.strip() for n in _split(lines[first - 1].lstrip().lstrip("#").strip(), delimiter)]
    if len(names) != width or not all(names) or any(_is_number(n) for n in names):
        return None
    return names


def _detect_delimiter(header: str, body: list[str], *, source: str, line: int) -> str:
    """The delimiter that splits the header into the most columns and most rows alike."""
    sample = [row for row in body[:200] if row.strip()][:50]
    best, best_score, header_only = None, 0.0, None
    for delimiter in _DELIMITERS:
        count = len(_split(header, delimiter))
        if count < 2:
            continue
        share = np.mean([len(_split(row, delimiter)) == count for row in sample]) if sample else 1.0
        if share < 0.5:
            header_only = header_only or (delimiter, count)
            continue
        score = count * share
        if score > best_score:
            best, best_score = delimiter, score
    if best is not None:
        return best
    if header_only is not None:
        delimiter, count = header_only
        rows_by = next(
            (d for d in _DELIMITERS if np.mean([len(_split(row, d)) == count for row in sample]) >= 0.5),
            None,
        )
        seen = f"; the rows look separated by {delimiter_name(rows_by)}" if rows_by else ""
        raise InputError(
            f"{source}: line {line}: the header has {count} columns separated by "
            f"{delimiter_name(delimiter)} but most rows do not{seen}; use one delimiter throughout"
        )
    return ","  # one column: the column search names what is missing


def _split(line: str, delimiter: str) -> list[str]:
    if delimiter == " ":
        return line.split()
    return next(csv.reader([line], delimiter=delimiter), [])


def _field_counts(lines: list[str], delimiter: str) -> np.ndarray:
    """Number of fields of each line (quoted fields through the csv module)."""
    if delimiter == " ":
        return np.array([len(line.split()) for line in lines], dtype=np.int64)
    counts = np.array([line.count(delimiter) + 1 for line in lines], dtype=np.int64)
    for i, line in enumerate(lines):
        if '"' in line:
            counts[i] = len(_split(line, delimiter))
    return counts


def _parse_cells(body: list[str], good: np.ndarray, names: list[str], delimiter: str) -> pd.DataFrame:
    """Cells of the good rows as text, one row per line, split by the :mod:`csv` module (or at
    runs of whitespace); other rows get empty cells (their reason is set)."""
    empty = [""] * len(names)
    cells = [_split(line, delimiter) if ok else empty for line, ok in zip(body, good, strict=True)]
    return pd.DataFrame(cells, columns=names, dtype=str)


def _unique_names(names: list[str]) -> tuple[list[str], dict[str, list[int]]]:
    """Rename later copies of a repeated column name; report the repeats (column numbers)."""
    seen: dict[str, list[int]] = {}
    for i, name in enumerate(names):
        seen.setdefault(normalise(name), []).append(i + 1)
    duplicates = {names[cols[0] - 1]: cols for cols in seen.values() if len(cols) > 1}
    unique = list(names)
    for cols in seen.values():
        for number in cols[1:]:
            unique[number - 1] = f"{names[number - 1]} (column {number})"
    return unique, duplicates


def _decimal_commas(table: pd.DataFrame, names) -> list[str]:
    """Read decimal commas as points in the named columns that use them throughout (in place)."""
    converted = []
    for name in names:
        column = table[name]
        if pd.api.types.is_numeric_dtype(column):
            continue
        text = column.fillna("").astype(str).str.strip()
        comma = text.str.fullmatch(_DECIMAL_COMMA).fillna(False).astype(bool)
        if not comma.any():
            continue
        if text.str.fullmatch(_DECIMAL_POINT).any():
            continue  # mixed styles: the comma cells stay unreadable numbers
        table[name] = text.where(~comma, text.str.replace(",", ".", regex=False))
        converted.append(str(name))
    return converted


def _is_number(text: str) -> bool:
    try:
        float(text)
    except ValueError:
        return False
    return True


def delimiter_name(delimiter: str) -> str:
    """The delimiter in words: ``"commas"``, ``"tabs"``, ..."""
    named = {",": "commas", "\t": "tabs", ";": "semicolons", "|": "pipes", " ": "spaces"}
    return named.get(delimiter, repr(delimiter))


def rows_text(rows, limit: int = 5) -> str:
    """``"row 7"``, ``"rows 4, 9"`` or ``"rows 4, 9, 12, 15, 20 and 3 more"``."""
    rows = [int(r) for r in rows]
    if len(rows) == 1:
        return f"row {rows[0]}"
    shown = ", ".join(map(str, rows[:limit]))
    more = f" and {len(rows) - limit} more" if len(rows) > limit else ""
    return f"rows {shown}{more}"
