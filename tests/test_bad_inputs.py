"""Every file of the bad-input corpus through every command that reads a survey.

Each case of ``tests/bad_inputs/MANIFEST.toml`` is run as a separate process,
``python -m profiles COMMAND FILE ...``, so that a traceback, a stray library warning or a
second error line is seen exactly as a user would see it. The contract (design notes,
"Interfaces"): exit 0 with the row accounting the manifest states, or exit 2 with one line
``profiles: error: FILE: ...``; never a traceback.

``spacing`` is the reference command: its ``--json`` accounting, warnings, segments and
lengths are checked against the manifest. Every other command found in ``profiles.cli`` that
takes survey files runs the same cases with the minimal options of :data:`EXTRA_ARGS`; a file
that is refused must be refused by every command with the same message, and a file that is
read must never produce a traceback or an accounting that does not add up. Commands that are
not written yet are simply not found, so the corpus covers them when they land.

Lengths are checked against pyproj.Geod (the reference geodesic library) on the file's own
coordinates, read here with the csv module rather than with the reader under test.
"""

from __future__ import annotations

import argparse
import concurrent.futures
import csv
import hashlib
import json
import os
import re
import subprocess
import sys
import tomllib
import zipfile
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pytest

HERE = Path(__file__).resolve().parent
REPO = HERE.parent
CORPUS = HERE / "bad_inputs"
CASES: dict[str, dict] = tomllib.loads((CORPUS / "MANIFEST.toml").read_text(encoding="utf-8"))["cases"]
REFERENCE = "spacing"

#: Minimal extra options each command needs to run on a survey with depth_m and gravity_mgal
#: columns. ``{out}`` becomes a fresh folder. A command missing here runs with none, unless it
#: has required options (then it is skipped with a note to add it here).
EXTRA_ARGS: dict[str, list[str]] = {
    "spacing": [],
    "spectrum": ["--field", "depth_m"],
    "map": ["--field", "depth_m"],
    "compare": ["--field", "depth_m"],
    "coherence": ["--input", "depth_m", "--output", "gravity_mgal"],
    "report": ["--out", "{out}"],
    "batch": ["--field", "depth_m", "--out", "{out}"],
}

#: Runs of commands other than the reference cost this many "units" of about a second each
#: (every run is a new Python process; batch starts a Dask cluster). Beyond BUDGET units in
#: all, each command gets an evenly spread share of the cases, different cases for different
#: commands, so that together they still cover the corpus. PROFILES_CORPUS_FULL=1 runs every
#: pair; PROFILES_CORPUS_BUDGET changes the budget.
COST = {"batch": 8, "report": 8, "map": 2}
BUDGET = int(os.environ.get("PROFILES_CORPUS_BUDGET", "40"))
FULL = os.environ.get("PROFILES_CORPUS_FULL") == "1"
PYTHON_WARNING = re.compile(r"\b\w*Warning: ")


def _survey_commands() -> dict[str, argparse.ArgumentParser]:
    """Commands of ``profiles.cli`` whose parser takes survey files."""
    from profiles.cli import build_parser

    parser = build_parser()
    sub = next(a for a in parser._actions if isinstance(a, argparse._SubParsersAction))
    return {
        name: command
        for name, command in sub.choices.items()
        if any(action.dest == "survey" for action in command._actions)
    }


COMMANDS = _survey_commands()


def _options(parser: argparse.ArgumentParser) -> set[str]:
    return {option for action in parser._actions for option in action.option_strings}


def _command_args(name: str) -> list[str] | str:
    """The extra options of a command, or the reason it cannot run the corpus."""
    parser = COMMANDS[name]
    known = _options(parser)
    extra = EXTRA_ARGS.get(name)
    if extra is None:
        required = [a.option_strings[0] for a in parser._actions if a.required and a.option_strings]
        if required:
            return f"command {name} requires {', '.join(required)}: add it to EXTRA_ARGS"
        extra = []
    unknown = [a for a in extra if a.startswith("--") and a not in known]
    if unknown:
        return f"command {name} has no option {', '.join(unknown)}: update EXTRA_ARGS"
    return extra + (["--json"] if "--json" in known else [])


def _case_args(name: str, case: dict) -> list[str]:
    """The case's options that the command knows (pairs of option and value)."""
    known = _options(COMMANDS[name])
    args = case.get("args", [])
    kept = []
    for option, value in zip(args[::2], args[1::2], strict=True):
        if option in known:
            kept += [option, value]
    return kept


def _plan() -> list[tuple[str, str]]:
    pairs = [(case, REFERENCE) for case in CASES if REFERENCE in COMMANDS]
    others = [c for c in COMMANDS if c != REFERENCE and isinstance(_command_args(c), list)]
    names = list(CASES)
    if FULL or len(names) * sum(COST.get(c, 1) for c in others) <= BUDGET:
        return pairs + [(case, command) for command in others for case in names]
    for j, command in enumerate(others):
        share = min(len(names), max(3, BUDGET // len(others) // COST.get(command, 1)))
        step = len(names) / share
        offset = j / len(others)  # commands interleave: together they cover more cases
        picked = {names[int((i + offset) * step) % len(names)] for i in range(share)}
        pairs += [(case, command) for case in names if case in picked]
    return pairs


PLAN = _plan()


# --- generated (binary) fixtures ---------------------------------------------------------------

STATION_LON = -30.0 + 0.005 * np.arange(8)
STATION_LAT = np.full(8, -40.0)


def _points_frame():
    import geopandas
    import shapely

    return geopandas.GeoDataFrame(
        {
            "line": ["A"] * 8,
            "depth_m": 4000.0 + 7 * np.arange(8),
            "gravity_mgal": 12.5 + 0.8 * np.arange(8),
        },
        geometry=shapely.points(STATION_LON, STATION_LAT),
        crs="EPSG:4326",
    )


def _write_gpkg(frame, path: Path, layer: str = "stations") -> None:
    # pyogrio picks the driver from the suffix; write under .gpkg, then rename if needed.
    target = path if path.suffix == ".gpkg" else path.with_suffix(".tmp.gpkg")
    frame.to_file(target, layer=layer, driver="GPKG")
    if target != path:
        target.rename(path)


def _generate(kind: str, path: Path) -> None:
    rng = np.random.default_rng(20240301)
    if kind == "utf16_without_bom":
        text = (CORPUS / "semicolons.csv").read_text(encoding="utf-8").replace(";", ",")
        path.write_bytes(text.encode("utf-16-le"))
    elif kind == "binary_bytes":
        data = bytearray(rng.bytes(3000))
        data[:4] = b"\x07\x00\x13\x00"  # zero bytes, and no known signature
        path.write_bytes(bytes(data))
    elif kind == "zip_archive":
        with zipfile.ZipFile(path, "w") as archive:
            archive.writestr("sheet1.xml", "<sheet/>")
    elif kind == "geopackage_points":
        _write_gpkg(_points_frame(), path)
    elif kind == "geopackage_projected":
        _write_gpkg(_points_frame().to_crs("EPSG:32725"), path)
    elif kind == "geopackage_two_layers":
        _write_gpkg(_points_frame(), path, "stations")
        _points_frame().to_file(path, layer="copy", driver="GPKG")
    elif kind == "geopackage_polygons":
        import geopandas
        import shapely

        half = 0.001
        squares = shapely.box(STATION_LON - half, STATION_LAT - half, STATION_LON + half, STATION_LAT + half)
        frame = _points_frame().set_geometry(geopandas.GeoSeries(squares, crs="EPSG:4326"))
        _write_gpkg(frame, path)
    elif kind == "geopackage_truncated":
        _write_gpkg(_points_frame(), path)
        data = path.read_bytes()
        path.write_bytes(data[: len(data) // 3])
    elif kind == "folder":
        path.mkdir()
        (path / "inside.csv").write_text("line,lon,lat\n", encoding="utf-8")
    elif kind == "nothing":
        pass
    else:  # pragma: no cover - a manifest typo
        raise AssertionError(f"unknown generator {kind!r}")


# --- running -----------------------------------------------------------------------------------


@dataclass(frozen=True)
class Run:
    args: tuple[str, ...]
    returncode: int
    stdout: str
    stderr: str

    @property
    def errors(self) -> list[str]:
        return [line for line in self.stderr.splitlines() if line.startswith("profiles: error:")]

    def document(self) -> dict:
        return json.loads(self.stdout)


def _run(args: list[str]) -> Run:
    env = dict(os.environ)
    env["PYTHONPATH"] = str(REPO) + os.pathsep + env.get("PYTHONPATH", "")
    env.update(PYTHONIOENCODING="utf-8", MPLBACKEND="Agg", PYTHONWARNINGS="default")
    result = subprocess.run(
        [sys.executable, "-m", "profiles", *args],
        capture_output=True,
        text=True,
        encoding="utf-8",
        errors="replace",
        timeout=600,
        cwd=REPO,
        env=env,
    )
    return Run(tuple(args), result.returncode, result.stdout, result.stderr)


def _hashes(paths) -> dict[str, str]:
    return {
        str(p): hashlib.sha256(p.read_bytes()).hexdigest() for p in sorted(paths) if Path(p).is_file()
    }


@dataclass(frozen=True)
class Results:
    paths: dict[str, Path]
    runs: dict[tuple[str, str], Run]
    hashes_before: dict[str, str]
    hashes_after: dict[str, str]


def _selected(session) -> set[tuple[str, str]]:
    """The (case, command) pairs that the selected tests of this module need."""
    wanted = set()
    for item in session.items:
        params = getattr(getattr(item, "callspec", None), "params", {})
        if item.module.__name__ != __name__ or "name" not in params:
            continue
        pair = (params["name"], params.get("command", REFERENCE))
        wanted.add(pair)
        other = CASES[pair[0]].get("same_length_as")
        if other and pair[1] == REFERENCE:
            wanted.add((other, REFERENCE))
    return wanted


@pytest.fixture(scope="module")
def results(request, tmp_path_factory) -> Results:
    """Run the planned (case, command) pairs of the selected tests, in parallel."""
    generated = tmp_path_factory.mktemp("generated")
    outputs = tmp_path_factory.mktemp("outputs")
    paths: dict[str, Path] = {}
    for name, case in CASES.items():
        if "generate" in case:
            path = generated / case["file"]
            if not path.exists() and case["generate"] != "nothing":
                _generate(case["generate"], path)
            paths[name] = path
        else:
            paths[name] = CORPUS / case["file"]
    inputs = [p for p in CORPUS.iterdir()] + [p for p in generated.iterdir()]
    before = _hashes(inputs)

    jobs = {}
    wanted = _selected(request.session)
    for number, (case_name, command) in enumerate(PLAN):
        if (case_name, command) not in wanted:
            continue
        extra = _command_args(command)
        if not isinstance(extra, list):
            continue
        out = outputs / f"run{number}"
        extra = [a.replace("{out}", str(out)) for a in extra]
        case = CASES[case_name]
        if command == REFERENCE:
            args = [command, str(paths[case_name]), *case.get("args", []), "--json"]
        else:
            args = [command, str(paths[case_name]), *_case_args(command, case), *extra]
        jobs[(case_name, command)] = args
    workers = 2 * (os.cpu_count() or 2)  # the processes also wait (cluster start, disk)
    with concurrent.futures.ThreadPoolExecutor(max_workers=workers) as pool:
        futures = {key: pool.submit(_run, args) for key, args in jobs.items()}
        runs = {key: future.result() for key, future in futures.items()}
    return Results(paths, runs, before, _hashes(inputs))


def _common_checks(run: Run, path: Path, *, refused: bool) -> None:
    """Never a traceback or a stray library warning; exit 2 means one error line, which names
    the file when the file itself is refused."""
    where = f"profiles {' '.join(run.args)}"
    assert "Traceback" not in run.stderr, f"{where}: traceback\n{run.stderr}"
    assert not PYTHON_WARNING.search(run.stderr.replace("profiles: warning:", "")), (
        f"{where}: a library warning reached the user\n{run.stderr}"
    )
    if run.returncode == 2:
        assert len(run.errors) == 1, f"{where}: expected one error line\n{run.stderr}"
        if refused:
            assert path.name in run.errors[0], f"{where}: the error line does not name the file\n{run.stderr}"
        if "--json" in run.args and run.stdout.strip():
            run.document()  # a summary on stdout must still be one JSON document
    else:
        assert run.returncode == 0, f"{where}: exit {run.returncode}\n{run.stderr}"
        assert not run.errors, f"{where}: error lines with exit 0\n{run.stderr}"


# --- the reference command: exact expectations -----------------------------------------------


def _total_length_km(document: dict) -> float:
    return sum(segment["length_km"] for segment in document["segments"])


def _geodesic_length_km(path: Path, crs: str | None) -> float:
    """pyproj.Geod line length of the file's coordinates (csv module, file order)."""
    from pyproj import Geod, Transformer

    with path.open(encoding="utf-8", newline="") as stream:
        rows = list(csv.DictReader(stream))
    x_name = "lon" if "lon" in rows[0] else "easting"
    y_name = "lat" if "lat" in rows[0] else "northing"
    x = np.array([float(r[x_name]) for r in rows])
    y = np.array([float(r[y_name]) for r in rows])
    if crs is not None:
        x, y = Transformer.from_crs(crs, "EPSG:4326", always_xy=True).transform(x, y)
    return Geod(ellps="WGS84").line_length(x, y) / 1e3


reference_cases = [case for case, command in PLAN if command == REFERENCE]


@pytest.mark.parametrize("name", reference_cases)
def test_reference_command(results, name):
    case = CASES[name]
    run = results.runs[(name, REFERENCE)]
    path = results.paths[name]
    _common_checks(run, path, refused=case["exit"] == 2)
    assert run.returncode == case["exit"], f"exit {run.returncode}, expected {case['exit']}\n{run.stderr}"
    if case["exit"] == 2:
        assert case["error"] in run.errors[0], f"expected {case['error']!r} in\n{run.errors[0]}"
        return
    document = run.document()
    rows = document["rows"]
    expected = {
        "read": case["read"],
        "used": case["used"],
        "merged": case["merged"],
        "dropped": case.get("dropped", {}),
    }
    assert rows == expected
    assert rows["read"] == rows["used"] + rows["merged"] + sum(rows["dropped"].values())
    for fragment in case.get("warnings", []):
        assert any(fragment in w for w in document["warnings"]), (
            f"no warning with {fragment!r}: {document['warnings']}"
        )
    if "segments" in case:
        assert len(document["segments"]) == case["segments"]
    if "lines" in case:
        assert list(dict.fromkeys(s["line"] for s in document["segments"])) == case["lines"]
    length = _total_length_km(document)
    if "length_km" in case:
        low, high = case["length_km"]
        assert low <= length <= high, f"total length {length} km outside [{low}, {high}]"
    if case.get("geodesic"):
        # Reference: pyproj.Geod(ellps="WGS84").line_length on the file's coordinates.
        reference = _geodesic_length_km(path, case.get("crs"))
        assert length == pytest.approx(reference, rel=1e-9)
    if "same_length_as" in case:
        other = results.runs[(case["same_length_as"], REFERENCE)].document()
        assert length == pytest.approx(_total_length_km(other), rel=1e-9)


# --- every other command: the same refusals, never a traceback ---------------------------------

other_pairs = [(case, command) for case, command in PLAN if command != REFERENCE]
skipped_commands = {c: r for c in COMMANDS if not isinstance(r := _command_args(c), list)}


@pytest.mark.parametrize(("name", "command"), other_pairs)
def test_every_command(results, name, command):
    case = CASES[name]
    run = results.runs[(name, command)]
    refused_by_file = (
        case["exit"] == 2 and case.get("every_command", True) and command not in case.get("except", [])
    )
    _common_checks(run, results.paths[name], refused=refused_by_file)
    if refused_by_file:
        assert run.returncode == 2, f"{command} accepted a file the reference refuses\n{run.stderr}"
        assert case["error"] in run.errors[0]
    elif run.returncode == 0 and run.stdout.strip().startswith("{"):
        document = run.document()
        rows = document.get("rows")
        if isinstance(rows, dict) and {"read", "used", "merged", "dropped"} <= set(rows):
            if "read" in case:
                assert rows["read"] == case["read"]
            assert rows["read"] == rows["used"] + rows["merged"] + sum(rows["dropped"].values())


def test_every_survey_command_runs_the_corpus():
    planned = {command for _, command in PLAN}
    for command in COMMANDS:
        assert command in planned or command in skipped_commands, f"{command} is never run"
    if skipped_commands:
        pytest.skip("; ".join(skipped_commands.values()))


# --- the corpus itself -------------------------------------------------------------------------


def test_inputs_are_never_modified(results):
    assert results.hashes_after == results.hashes_before


def test_every_corpus_file_has_a_case():
    files = {p.name for p in CORPUS.iterdir() if p.name not in {"MANIFEST.toml", ".gitattributes"}}
    used = {case["file"] for case in CASES.values() if "generate" not in case}
    assert files == used, f"files without a case: {sorted(files - used)}; missing: {sorted(used - files)}"
    assert len({case["file"] for case in CASES.values()}) >= 25


def test_every_case_is_documented():
    text = (REPO / "docs" / "input-handling.md").read_text(encoding="utf-8")
    missing = [case["file"] for case in CASES.values() if f"`{case['file']}`" not in text]
    assert not missing, f"docs/input-handling.md does not mention: {missing}"


def test_manifest_is_consistent():
    for name, case in CASES.items():
        assert case["exit"] in (0, 2), name
        assert "doc" in case, name
        if case["exit"] == 2:
            assert case.get("error"), name
        else:
            accounted = case["used"] + case["merged"] + sum(case.get("dropped", {}).values())
            assert accounted == case["read"], f"{name}: the manifest's accounting does not add up"
        for other in ("same_length_as",):
            if other in case:
                assert CASES[case[other]]["exit"] == 0, name


def test_reference_command_is_available():
    assert REFERENCE in COMMANDS, "the reference command is missing from profiles.cli"


def test_a_python_warning_would_be_caught():
    # The check above must be able to fail: a warning line as Python prints it.
    sample = "/x/y.py:3: RuntimeWarning: invalid value encountered in divide\n"
    assert PYTHON_WARNING.search(sample)
    assert not PYTHON_WARNING.search("profiles: warning: something".replace("profiles: warning:", ""))
