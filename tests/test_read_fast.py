"""The text reader's fast path against its careful path and against outside parsers.

``read_text(path)`` finds the row layout with array operations and parses the cells with the
pandas C parser (numbers straight to float64); ``read_text(path, fast=False)`` splits every line
with the csv module and keeps every cell as text. Both must give the same survey: values,
statuses, reasons, row accounting, warnings and errors. Where a check needs the truth rather
than agreement, it comes from outside the reader: the csv module splits the lines, Python's
``float`` (correctly rounded, IEEE 754) reads the numbers and ``datetime.fromisoformat`` the
ISO 8601 times.
"""

from __future__ import annotations

import csv
import datetime
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from profiles.columns import ColumnNames
from profiles.errors import InputError
from profiles.stations import table_to_survey
from profiles.textfile import read_text

REPO = Path(__file__).resolve().parents[1]
CORPUS = REPO / "tests" / "bad_inputs"
TEXT_FILES = sorted(p for p in CORPUS.iterdir() if p.suffix not in {".toml", ".geojson"})
HEADER = "line,time,lon,lat,depth_m"


def _survey(path: Path, *, fast: bool, fields=("depth_m",), crs=None):
    """The survey of a text file, or the error line, by one path of the reader."""
    try:
        raw = read_text(path, fast=fast)
        survey = table_to_survey(raw, source=str(path), columns=ColumnNames(), fields=fields, crs=crs)
    except InputError as error:
        return ("error", str(error))
    return ("survey", survey)


def _assert_same(path: Path, **options) -> None:
    fast, careful = _survey(path, fast=True, **options), _survey(path, fast=False, **options)
    assert fast[0] == careful[0], (fast, careful)
    if fast[0] == "error":
        assert fast[1] == careful[1]
        return
    pd.testing.assert_frame_equal(fast[1].stations, careful[1].stations, check_exact=True)
    assert fast[1].fields == careful[1].fields
    assert fast[1].warnings == careful[1].warnings
    assert fast[1].accounting == careful[1].accounting


def _rows(count: int = 40) -> list[str]:
    """Rows of an invented line: 50 s apart, about 200 m apart, depths near 3000 m."""
    start = datetime.datetime(2026, 3, 4, 5, 6, 7, tzinfo=datetime.UTC)
    rows = []
    for i in range(count):
        stamp = (start + datetime.timedelta(seconds=50 * i)).strftime("%Y-%m-%dT%H:%M:%SZ")
        rows.append(f"A,{stamp},{-30 + 0.002 * i:.6f},{-20 + 0.001 * i:.6f},{3000 + 0.37 * i:.3f}")
    return rows


def _write(tmp_path: Path, name: str, lines: list[str]) -> Path:
    path = tmp_path / name
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return path


# --- agreement on the demo and the bad-input corpus ---------------------------------------------


@pytest.mark.parametrize("fields", [None, ("depth_m",)])
def test_demo_survey_same_by_both_paths(fields):
    _assert_same(REPO / "demo_data" / "survey.csv", fields=fields)


@pytest.mark.parametrize("path", TEXT_FILES, ids=[p.name for p in TEXT_FILES])
@pytest.mark.parametrize("crs", [None, "EPSG:32735"])
def test_corpus_same_by_both_paths(path, crs):
    # The careful path (csv module, text cells) is the reference; the corpus and its manifest
    # (tests/bad_inputs/MANIFEST.toml) hold the behaviour both must give.
    _assert_same(path, fields=None, crs=crs)
    _assert_same(path, fields=("depth_m",), crs=crs)


# --- inputs that make the fast path fall back, for a column or for the file -----------------


def test_fast_path_reads_a_clean_file_as_numbers(tmp_path):
    # Guards the tests below: on a clean file the fast path does run (numbers as float64, the
    # cells as written available), so agreement is not the careful path compared with itself.
    raw = read_text(_write(tmp_path, "clean.csv", [HEADER, *_rows()]))
    assert raw.cells is not None
    assert raw.table["depth_m"].dtype == np.float64
    assert read_text(tmp_path / "clean.csv", fast=False).cells is None


def test_numbers_are_those_of_python_float(tmp_path):
    # Outside reference: Python's float() of each cell as split by the csv module, which is
    # the correctly rounded double (IEEE 754); digits from 3 to 17, as survey exports vary.
    rng = np.random.default_rng(7)
    values = (rng.uniform(-1, 1, 300) * 10.0 ** rng.integers(-3, 4, 300)).tolist()
    formats = ("{:.3f}", "{:.6f}", "{!r}", "{:.17g}", "{:.4e}")
    rows = [
        f"A,2026-03-04T05:{i // 60:02d}:{i % 60:02d}Z,{-30 + i * 1e-3:.6f},-20,{formats[i % 5].format(v)}"
        for i, v in enumerate(values)
    ]
    path = _write(tmp_path, "digits.csv", [HEADER, *rows])
    survey = _survey(path, fast=True, fields=None)[1]
    with open(path, newline="", encoding="utf-8") as stream:
        cells = [row[4] for row in list(csv.reader(stream))[1:]]
    expected = np.array([float(c) for c in cells])
    got = survey.stations.sort_values("row")["depth_m"].to_numpy()
    np.testing.assert_array_equal(got, expected)
    _assert_same(path, fields=None)


def test_text_in_a_numeric_column(tmp_path):
    # A cell that Python's float() refuses ("deep", "0x10") is a non-numeric value; cells it
    # reads ("inf", "1e400" overflow to infinity per IEEE 754) are numbers, here not finite.
    rows = _rows()
    rows[3] = rows[3].rsplit(",", 1)[0] + ",deep"
    rows[5] = rows[5].rsplit(",", 1)[0] + ",0x10"
    rows[7] = rows[7].rsplit(",", 1)[0] + ",1e400"
    path = _write(tmp_path, "text_in_depth.csv", [HEADER, *rows])
    for cell in ("deep", "0x10"):
        with pytest.raises(ValueError):
            float(cell)
    assert float("1e400") == float("inf")
    survey = _survey(path, fast=True)[1]
    reasons = survey.stations.set_index("row")["reason"]
    assert reasons[5] == reasons[7] == "non-numeric value in depth_m"  # file lines 5 and 7
    assert reasons[9] == "non-finite value in depth_m"
    assert any("rows 5 (deep), 7 (0x10)" in w for w in survey.warnings)
    _assert_same(path)
    _assert_same(path, fields=None)


def test_bad_times(tmp_path):
    # Outside reference: datetime.fromisoformat (Python 3.11 reads ISO 8601 with "Z"); a time
    # it refuses is unreadable, the others are its seconds since 1970-01-01 UTC.
    rows = _rows()
    rows[2] = rows[2].replace("2026-03-04T05:07:47Z", "2026-13-45T99:00:00Z")
    rows[4] = rows[4].replace("2026-03-04T05:09:27Z", "yesterday")
    path = _write(tmp_path, "bad_times.csv", [HEADER, *rows])
    survey = _survey(path, fast=True)[1]
    stations = survey.stations.set_index("row")
    for number, row in enumerate(rows, start=2):
        cell = row.split(",")[1]
        try:
            seconds = datetime.datetime.fromisoformat(cell).timestamp()
        except ValueError:
            assert stations.loc[number, "reason"] == "unreadable time"
        else:
            assert stations.loc[number, "time"] == seconds
    assert (stations["reason"] == "unreadable time").sum() == 2
    _assert_same(path)


def test_times_as_seconds(tmp_path):
    # A time column of numbers is seconds; one cell that is not a number makes the column
    # ISO 8601 text, where the numbers are unreadable (checked by datetime.fromisoformat).
    rows = [f"A,{1_700_000_000 + 50 * i},{-30 + 0.002 * i:.6f},-20,3000" for i in range(30)]
    path = _write(tmp_path, "seconds.csv", [HEADER, *rows])
    stations = _survey(path, fast=True)[1].stations
    np.testing.assert_array_equal(stations["time"], [1_700_000_000.0 + 50 * i for i in range(30)])
    _assert_same(path)
    mixed = _write(tmp_path, "mixed.csv", [HEADER, *rows, "A,2026-03-04T05:06:07Z,-29.9,-20,3000"])
    with pytest.raises(ValueError):
        datetime.datetime.fromisoformat("1700000000")
    assert (_survey(mixed, fast=True)[1].stations["reason"] == "unreadable time").sum() == 30
    _assert_same(mixed)


def test_short_and_long_rows(tmp_path):
    # Outside reference: the csv module's field count of each line against the header's.
    rows = _rows()
    rows[3] = rows[3].rsplit(",", 1)[0]  # a field missing
    rows[6] = rows[6] + ",12"  # a field too many
    rows[9] = ""  # a blank line
    rows[12] = "  \t "  # a line of blanks
    rows[15] = HEADER  # files joined together
    rows[18] = '"A","2026-03-04T05:21:07Z","-29.964","-19.982","3006.66"'  # quoted cells
    path = _write(tmp_path, "ragged.csv", [HEADER, *rows])
    lines = path.read_text(encoding="utf-8").splitlines()
    wrong = [n for n, row in enumerate(csv.reader(lines), start=1) if n > 1 and row and len(row) != 5]
    wrong = [n for n in wrong if lines[n - 1].strip()]
    stations = _survey(path, fast=True)[1].stations.set_index("row")
    assert sorted(stations.index[stations["reason"] == "wrong number of fields"]) == wrong == [5, 8]
    assert stations.loc[11, "reason"] == stations.loc[14, "reason"] == "blank line"
    assert stations.loc[17, "reason"] == "repeated header"
    assert stations.loc[20, "status"] == "used" and stations.loc[20, "depth_m"] == float("3006.66")
    _assert_same(path)


def test_open_quote_falls_back_to_the_careful_path(tmp_path):
    # A quote left open in the last field makes the C parser join the following lines into
    # that field (RFC 4180 quoting); the csv module, given one line at a time, reads the line
    # as five fields, the last without its quote. The reader must notice and read the file
    # line by line; an open quote in an earlier field makes a row of too few fields, dropped.
    rows = _rows()
    rows[4] = 'A,2026-03-04T05:09:27Z,-29.992,-19.996,"3001.48'
    rows[8] = 'A,"2026-03-04T05:12:47Z,-29.984,-19.992,3002.96'
    assert next(csv.reader([rows[4]]))[4] == "3001.48"
    assert len(next(csv.reader([rows[8]]))) == 2
    path = _write(tmp_path, "open_quote.csv", [HEADER, *rows])
    assert read_text(path).cells is None  # the careful path was taken
    stations = _survey(path, fast=True)[1].stations.set_index("row")
    assert stations.loc[6, "depth_m"] == float("3001.48")
    assert stations.loc[10, "reason"] == "wrong number of fields"
    assert (stations["status"] == "used").sum() == len(rows) - 1
    _assert_same(path)


def test_other_delimiters_and_line_ends(tmp_path):
    # Semicolons with decimal commas, tabs, and CR / CR LF line ends (all line ends, as the
    # csv module and the careful path read them): both paths agree.
    rows = _rows(20)
    semicolons = [HEADER.replace(",", ";")] + [r.replace(",", ";").replace(".", ",") for r in rows]
    _assert_same(_write(tmp_path, "semicolons.csv", semicolons))
    tabs = [HEADER.replace(",", "\t")] + [r.replace(",", "\t") for r in rows[:10]] + ["\t\t\t\t"]
    _assert_same(_write(tmp_path, "tabs.tsv", tabs + [r.replace(",", "\t") for r in rows[10:]]))
    for end in ("\r", "\r\n"):
        path = tmp_path / "line_ends.csv"
        path.write_bytes(end.join([HEADER, *rows[:10], "", *rows[10:]]).encode() + end.encode())
        _assert_same(path)


def test_balanced_long_and_short_rows(tmp_path):
    # One row with a field too many and one with a field too few: the file's delimiters
    # number exactly (fields - 1) times its lines, so the reader first takes every line to
    # have five fields; the C parser refuses the long row and the layout is then found line
    # by line. Outside reference: the csv module's field count of each line.
    rows = _rows()
    rows[4] = rows[4] + ",12"
    rows[11] = rows[11].rsplit(",", 1)[0]
    path = _write(tmp_path, "balanced.csv", [HEADER, *rows])
    lines = path.read_text(encoding="utf-8").splitlines()
    assert sum(line.count(",") for line in lines[1:]) == 4 * len(rows)
    wrong = [n for n, row in enumerate(csv.reader(lines), start=1) if n > 1 and len(row) != 5]
    stations = _survey(path, fast=True)[1].stations.set_index("row")
    assert sorted(stations.index[stations["reason"] == "wrong number of fields"]) == wrong == [6, 13]
    assert read_text(path).cells is not None  # still the fast path, line by line
    _assert_same(path)


def test_uniform_file_takes_the_whole_file_layout(tmp_path):
    # Guards the shortcut: a clean file, and one with the header repeated inside (a line with
    # as many delimiters as any), are read without splitting every line; the repeated header
    # is still found and dropped, as the careful path does.
    from profiles.textfile import _Layout

    rows = _rows()
    clean = _write(tmp_path, "clean.csv", [HEADER, *rows])
    joined = _write(tmp_path, "joined.csv", [HEADER, *rows[:20], HEADER, *rows[20:]])
    for path, repeated in ((clean, []), (joined, [22])):
        data = path.read_bytes()
        layout = _Layout(data, len(HEADER) + 1, len(data) - 1, ",", HEADER, width=5)
        assert not layout.detailed
        assert (np.flatnonzero(layout.repeated) + 2).tolist() == repeated
        stations = _survey(path, fast=True)[1].stations.set_index("row")
        assert stations.index[stations["reason"] == "repeated header"].tolist() == repeated
        _assert_same(path)


def test_text_far_down_a_column_of_numbers(tmp_path):
    # The C parser types each column in pieces of rows; text in a later piece of a column of
    # numbers (and ids that are numbers in one piece, text in another) makes pandas warn of
    # mixed types, and the reader then reads the file as one piece. Outside reference: the
    # careful path (csv module) gives the same survey; "deep" is no number (Python's float).
    count = 150_000
    rows = [f"{7 if i < 100_000 else 'L8'},{1_700_000_000 + 50 * i},{-30 + 1e-5 * i:.6f},-20,{3000 + i % 7}"
            for i in range(count)]
    rows[140_000] = rows[140_000].rsplit(",", 1)[0] + ",deep"
    path = _write(tmp_path, "long.csv", [HEADER, *rows])
    with pytest.warns(pd.errors.DtypeWarning):  # guard: the pieces do disagree
        pd.read_csv(path, low_memory=True)
    raw = read_text(path)
    assert raw.cells is not None  # the fast path, read again as one piece
    for name in ("line", "depth_m"):  # one type from all cells: text, not numbers and text
        assert all(isinstance(v, str) for v in raw.table[name].dropna())
    stations = _survey(path, fast=True)[1].stations.set_index("row")
    assert stations.loc[140_002, "reason"] == "non-numeric value in depth_m"
    assert set(stations["line"]) == {"7", "L8"}
    _assert_same(path)




def _spy_on_read_csv(monkeypatch) -> list:
    """What the reader gives ``pandas.read_csv`` as its source, call by call."""
    sources = []
    parse = pd.read_csv

    def spy(source, **options):
        sources.append(source)
        return parse(source, **options)

    monkeypatch.setattr("profiles.textfile.pd.read_csv", spy)
    return sources

@pytest.mark.parametrize(
    "preamble",
    [[], [""], ["# survey KR-03", ""], ["", "  ", "# a comment, with commas, and: colons", "sep=,"],
     ["\t", "# 'single' quotes", "#"]],
)
def test_preamble_lines_are_skipped_when_the_parser_reads_the_file(tmp_path, preamble, monkeypatch):
    # A clean ASCII file is parsed by the C parser straight from the file, skipping the lines
    # before the body: blank lines, comments and a "sep=" line count as lines. Outside
    # reference: the csv module's rows below the header.
    rows = _rows(30)
    path = _write(tmp_path, "preamble.csv", [*preamble, HEADER, *rows])
    sources = _spy_on_read_csv(monkeypatch)
    raw = read_text(path)
    monkeypatch.undo()
    assert raw.cells is not None and sources == [str(path)]  # the fast path, from the file
    with open(path, newline="", encoding="utf-8") as stream:
        expected = list(csv.reader(stream))[len(preamble) + 1 :]
    assert raw.table["line"].tolist() == [row[0] for row in expected]
    np.testing.assert_array_equal(raw.table["depth_m"], [float(row[4]) for row in expected])
    np.testing.assert_array_equal(raw.rows, np.arange(len(rows)) + len(preamble) + 2)
    _assert_same(path)


def test_a_quote_before_the_header_keeps_the_parser_off_the_file(tmp_path, monkeypatch):
    # A double quote in a comment above the header could make the C parser count the lines it
    # skips otherwise than the reader: the body is then given to it from memory. Outside
    # reference: the careful path gives the same survey.
    path = _write(tmp_path, "quoted_comment.csv", ['# the "KR" survey', HEADER, *_rows(20)])
    sources = _spy_on_read_csv(monkeypatch)
    assert read_text(path).cells is not None
    monkeypatch.undo()
    assert len(sources) == 1 and not isinstance(sources[0], str)
    _assert_same(path)
