"""Safe outputs: atomic writes, no overwriting without --overwrite, interrupted runs, reruns.

The contract (design notes, "Interfaces"; profiles/outputs.py): every output is written to a
temporary name in its folder and renamed into place; an existing output is replaced only with
--overwrite; an output that would be an input is refused; an interrupted run leaves neither a
half-written file nor a temporary file; the same input gives the same bytes on every run; the
inputs are never modified.
"""

from __future__ import annotations

import argparse
import hashlib
import json
import os
import re
import subprocess
import sys
from pathlib import Path

import pandas as pd
import pytest
from conftest import walk, write_csv

import profiles.outputs as outputs
from profiles.cli import build_parser, main
from profiles.errors import OutputError
from profiles.outputs import OutputFolder, write_atomic, write_with

REPO = Path(__file__).resolve().parent.parent
SPACING_OUTPUTS = ("segments.csv", "risky_stretches.csv", "breaks.csv", "stations.csv", "spacing.json")


def _digest(path: Path) -> str:
    return hashlib.sha256(Path(path).read_bytes()).hexdigest()


def _files(folder: Path) -> dict[str, bytes]:
    """Every file under ``folder`` (relative name -> bytes), hidden files included."""
    return {str(p.relative_to(folder)): p.read_bytes() for p in sorted(folder.rglob("*")) if p.is_file()}


def _run(*args: str) -> subprocess.CompletedProcess:
    env = dict(os.environ)
    env["PYTHONPATH"] = str(REPO) + os.pathsep + env.get("PYTHONPATH", "")
    env.update(PYTHONIOENCODING="utf-8", MPLBACKEND="Agg")
    return subprocess.run(
        [sys.executable, "-m", "profiles", *args],
        capture_output=True,
        text=True,
        encoding="utf-8",
        timeout=600,
        cwd=REPO,
        env=env,
    )


def _one_error_line(result: subprocess.CompletedProcess, fragment: str) -> None:
    assert result.returncode == 2, result.stderr
    assert "Traceback" not in result.stderr
    errors = [line for line in result.stderr.splitlines() if line.startswith("profiles: error:")]
    assert len(errors) == 1, result.stderr
    assert fragment in errors[0], errors[0]


@pytest.fixture(scope="module")
def survey(tmp_path_factory) -> Path:
    """A small survey like a real one: two lines (a gap, a turn), a blank row, a bad cell."""
    lon1, lat1 = walk(-31.0, -41.0, [(80.0, 30, 250.0), (80.0, 1, 3000.0), (80.0, 15, 250.0)])
    lon2, lat2 = walk(-31.0, -41.2, [(100.0, 20, 400.0), (10.0, 20, 400.0)])
    n1, n2 = lon1.size, lon2.size
    folder = tmp_path_factory.mktemp("survey")
    path = Path(
        write_csv(
            folder / "survey.csv",
            {
                "line": ["N1"] * n1 + ["N2"] * n2,
                "lon": [*lon1, *lon2],
                "lat": [*lat1, *lat2],
                "depth_m": [4000.0 + 3.5 * i for i in range(n1 + n2)],
                "gravity_mgal": [10.0 + 0.25 * (i % 17) for i in range(n1 + n2)],
            },
        )
    )
    with path.open("a", encoding="utf-8") as stream:
        stream.write("\nN2,-30.5,-41.3,deep,12.0\n")
    return path


# --- the writers --------------------------------------------------------------------------------


class _BrokenStream:
    """A file object that writes half of what it is given, then is interrupted."""

    def __init__(self, stream, interruption):
        self.stream = stream
        self.interruption = interruption

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self.stream.close()
        return False

    def write(self, data):
        self.stream.write(data[: len(data) // 2])
        self.stream.flush()
        raise self.interruption

    def __getattr__(self, name):
        return getattr(self.stream, name)


@pytest.mark.parametrize("interruption", [KeyboardInterrupt(), RuntimeError("disk gone")])
def test_an_interrupted_write_leaves_no_file(tmp_path, monkeypatch, interruption):
    real_fdopen = os.fdopen
    monkeypatch.setattr(
        outputs.os, "fdopen", lambda *a, **k: _BrokenStream(real_fdopen(*a, **k), interruption)
    )
    with pytest.raises(type(interruption)):
        write_atomic(tmp_path / "table.csv", b"a,b\n" * 1000)
    assert list(tmp_path.iterdir()) == []  # no final file, no temporary file


def test_an_interrupted_write_keeps_the_old_file(tmp_path, monkeypatch):
    target = tmp_path / "table.csv"
    target.write_bytes(b"old,content\n")
    real_fdopen = os.fdopen
    monkeypatch.setattr(
        outputs.os, "fdopen", lambda *a, **k: _BrokenStream(real_fdopen(*a, **k), KeyboardInterrupt())
    )
    with pytest.raises(KeyboardInterrupt):
        write_atomic(target, b"new,content\n" * 100)
    assert target.read_bytes() == b"old,content\n"
    assert [p.name for p in tmp_path.iterdir()] == ["table.csv"]


def test_a_writer_that_fails_half_way_leaves_no_file(tmp_path):
    def writer(temporary: Path) -> None:
        temporary.write_bytes(b"half a GeoPackage")
        raise RuntimeError("GDAL failed")

    with pytest.raises(RuntimeError):
        write_with(tmp_path / "profiles.gpkg", writer)
    assert list(tmp_path.iterdir()) == []


def test_a_finished_write_is_complete_and_has_the_usual_permissions(tmp_path):
    data = b"x" * 100_000
    path = write_atomic(tmp_path / "deep" / "folder" / "table.csv", data)
    assert path.read_bytes() == data
    mask = os.umask(0o022)
    os.umask(mask)
    assert path.stat().st_mode & 0o777 == 0o666 & ~mask
    assert [p.name for p in path.parent.iterdir()] == ["table.csv"]


def test_a_file_system_error_is_an_output_error(tmp_path, monkeypatch):
    blocker = tmp_path / "not_a_folder"
    blocker.write_text("a file", encoding="utf-8")
    with pytest.raises(OSError):
        write_atomic(blocker / "table.csv", b"data")  # the bare writer raises what it meets
    with pytest.raises(OutputError, match="not a folder"):
        OutputFolder(blocker / "sub", ["table.csv"])
    folder = OutputFolder(tmp_path / "out", ["table.csv", "layer.gpkg"])

    def full(*args, **kwargs):
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(outputs.os, "replace", full)
    message = re.escape("table.csv: cannot be written (No space left on device)")
    with pytest.raises(OutputError, match=message):
        folder.csv("table.csv", pd.DataFrame({"a": [1.0]}))
    with pytest.raises(OutputError, match=re.escape("layer.gpkg: cannot be written")):
        folder.with_writer("layer.gpkg", lambda temporary: temporary.write_bytes(b"x"))
    assert list((tmp_path / "out").iterdir()) == []


def test_output_folder_checks_before_any_work(tmp_path):
    (tmp_path / "segments.csv").write_text("old", encoding="utf-8")
    with pytest.raises(OutputError, match="exists; use --overwrite"):
        OutputFolder(tmp_path, ["segments.csv"])
    OutputFolder(tmp_path, ["segments.csv"], overwrite=True)
    (tmp_path / "figure.png").mkdir()
    with pytest.raises(OutputError, match="is a folder"):
        OutputFolder(tmp_path, ["figure.png"], overwrite=True)
    with pytest.raises(AssertionError, match="not declared"):
        OutputFolder(tmp_path, ["a.csv"]).path("b.csv")


def test_an_output_that_is_an_input_is_refused_even_through_a_link(tmp_path):
    data = tmp_path / "data"
    data.mkdir()
    survey = data / "survey.csv"
    survey.write_text("line,lon,lat\n", encoding="utf-8")
    out = tmp_path / "out"
    out.mkdir()
    os.link(survey, out / "stations.csv")  # a hard link: another name, the same file
    with pytest.raises(OutputError, match="is an input file"):
        OutputFolder(out, ["stations.csv"], inputs=[survey], overwrite=True)
    (out / "segments.csv").symlink_to(survey)
    with pytest.raises(OutputError, match="is an input file"):
        OutputFolder(out, ["segments.csv"], inputs=[survey], overwrite=True)
    with pytest.raises(OutputError, match="is an input file"):
        OutputFolder(data, ["survey.csv"], inputs=[survey], overwrite=True)


# --- through the command line ------------------------------------------------------------------


def test_a_rerun_gives_the_same_bytes(survey, tmp_path):
    before = _digest(survey)
    first, second = tmp_path / "d1", tmp_path / "d2"
    for folder in (first, second):
        result = _run("spacing", str(survey), "--out", str(folder), "--shortest-wavelength", "1km")
        assert result.returncode == 0, result.stderr
    files = _files(first)
    assert set(files) == set(SPACING_OUTPUTS)  # no temporary file left behind
    assert files == _files(second)
    result = _run("spacing", str(survey), "--out", str(first), "--shortest-wavelength", "1km", "--overwrite")
    assert result.returncode == 0, result.stderr
    assert _files(first) == files
    assert _digest(survey) == before  # the input is never modified
    # The tables say what they should (the run is not trivially empty).
    stations = pd.read_csv(first / "stations.csv")
    assert len(stations) == 2 + 47 + 41  # every input row: 2 added rows and both lines
    assert json.loads((first / "spacing.json").read_text(encoding="utf-8"))["rows"]["read"] == len(stations)


def test_an_existing_output_is_not_overwritten(survey, tmp_path):
    out = tmp_path / "out"
    assert _run("spacing", str(survey), "--out", str(out)).returncode == 0
    files = _files(out)
    result = _run("spacing", str(survey), "--out", str(out), "--shortest-wavelength", "500m")
    _one_error_line(result, "exists; use --overwrite to replace it")
    assert _files(out) == files


def test_an_output_equal_to_an_input_is_refused(survey, tmp_path):
    before = _digest(survey)
    _one_error_line(_run("spacing", str(survey), "--out", str(survey)), "exists and is not a folder")
    inside = tmp_path / "inside"
    inside.mkdir()
    copy = inside / "stations.csv"
    copy.write_bytes(survey.read_bytes())
    result = _run("spacing", str(copy), "--out", str(inside), "--overwrite")
    _one_error_line(result, "is an input file; choose another --out folder")
    assert copy.read_bytes() == survey.read_bytes()
    _one_error_line(_run("spacing", str(survey), "--out", str(survey / "sub")), "is not a folder")
    assert _digest(survey) == before


def test_an_interrupted_run_leaves_no_half_written_file(survey, tmp_path, monkeypatch, capsys):
    calls = []
    real_fdopen = os.fdopen

    def fdopen(*args, **kwargs):
        calls.append(args)
        stream = real_fdopen(*args, **kwargs)
        return _BrokenStream(stream, KeyboardInterrupt()) if len(calls) == 3 else stream

    monkeypatch.setattr(outputs.os, "fdopen", fdopen)
    out = tmp_path / "out"
    status = main(["spacing", str(survey), "--out", str(out)])
    assert status == 130
    assert "interrupted" in capsys.readouterr().err
    files = _files(out)
    assert len(files) == 2 and not any(name.startswith(".") for name in files)
    for name in files:  # the files written before the interruption are whole
        assert pd.read_csv(out / name) is not None
    assert set(files) < set(SPACING_OUTPUTS)


def _commands_with_out() -> dict[str, argparse.ArgumentParser]:
    parser = build_parser()
    sub = next(a for a in parser._actions if isinstance(a, argparse._SubParsersAction))
    found = {}
    for name, command in sub.choices.items():
        options = {o for a in command._actions for o in a.option_strings}
        takes_survey = any(a.dest == "survey" for a in command._actions)
        if takes_survey and "--out" in options and name not in ("batch", "report", "spacing"):
            found[name] = command
    return found


#: Minimal options of the other commands (see tests/test_bad_inputs.py).
EXTRA_ARGS = {
    "spectrum": ["--field", "depth_m"],
    "map": ["--field", "depth_m"],
    "compare": ["--field", "depth_m"],
    "coherence": ["--input", "depth_m", "--output", "gravity_mgal"],
}


@pytest.mark.parametrize("command", sorted(_commands_with_out()))
def test_other_commands_rerun_to_the_same_tables(survey, tmp_path, command):
    if command not in EXTRA_ARGS:
        pytest.skip(f"no minimal options known for {command}; add them to EXTRA_ARGS")
    results = []
    for folder in ("d1", "d2"):
        result = _run(command, str(survey), *EXTRA_ARGS[command], "--out", str(tmp_path / folder))
        assert "Traceback" not in result.stderr
        results.append(result)
    if results[0].returncode != 0:
        pytest.skip(f"{command} does not analyse this small survey: {results[0].stderr.strip()}")
    first, second = _files(tmp_path / "d1"), _files(tmp_path / "d2")
    assert set(first) == set(second)
    assert not [name for name in first if Path(name).name.startswith(".")], "a temporary file was left"
    tables = [name for name in first if name.endswith(".csv")]
    for name in tables:
        assert first[name] == second[name], f"{command}: {name} differs between two runs"
