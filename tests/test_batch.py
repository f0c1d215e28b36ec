"""``profiles batch``: an archive on a Dask cluster gives exactly what the single-file commands
and library calls give, reports bad files, resumes, and never leaves a half-written part.

References: the single-file commands ``profiles spacing`` and ``profiles spectrum`` and the
library's window table (the batch must reproduce them bit for bit); pyproj.Geod (the
geodesic length of every output line, and the tracks, built with Geod.fwd in conftest.walk);
geopandas (the output opens as GeoParquet in EPSG:4326, and each part reads back, with geopandas
and with pyarrow, exactly as ``geopandas.GeoDataFrame.to_parquet`` writes the same layer as a
GeoDataFrame). The cluster is one distributed.LocalCluster of two single-threaded worker
processes for the whole module.
"""

from __future__ import annotations

import json
import os
from pathlib import Path

import numpy as np
import pytest
from conftest import GEOD, walk, write_csv
from test_gis import assert_same_for_readers

import profiles.batch_task
from profiles.batch import file_id, find_survey_files, run_batch
from profiles.batch_task import BatchOptions, analyse_file, part_paths, read_part_attrs
from profiles.cli import main
from profiles.outputs import temporary_name

FIELD = "depth_m"
#: Options shared by every run here: an 8 km window holds 32 samples at 250 m.
ARGS = ("--field", FIELD, "--window", "8km", "--shortest-wavelength", "2km")
OPTIONS = BatchOptions(field=FIELD, window=8000.0, shortest_wavelength=2000.0)


def task_for(item, out, options: BatchOptions = OPTIONS) -> dict:
    """The task run_batch submits for one found file (``item``) with ``options``."""
    return {"path": str(item.path), "file": item.relative, "id": item.id, "size": item.size,
            "mtime_ns": item.mtime_ns, "out": str(out), "options": options.to_json(),
            "options_key": options.key()}


@pytest.fixture(scope="module")
def scheduler():
    import logging

    from distributed import LocalCluster

    cluster = LocalCluster(
        n_workers=2, threads_per_worker=1, processes=True, dashboard_address=":0", silence_logs=logging.ERROR
    )
    try:
        yield cluster.scheduler_address
    finally:
        cluster.close()


def _survey(path, seed: int, *, gap: bool = False) -> str:
    """Two lines of 250 m steps (one with an 8 km gap), depth a 5 km sinusoid plus noise."""
    rng = np.random.default_rng(seed)
    columns = {"line": [], "time": [], "lon": [], "lat": [], FIELD: []}
    for number, start in enumerate(((-20.0 + seed, -30.0), (-20.5 + seed, -30.2))):
        legs = [(35.0, 160, 250.0)]
        if gap and number:
            legs = [(35.0, 90, 250.0), (35.0, 1, 8000.0), (35.0, 60, 250.0)]
        lon, lat = walk(*start, legs)
        along = np.concatenate([[0.0], np.cumsum(GEOD.inv(lon[:-1], lat[:-1], lon[1:], lat[1:])[2])])
        columns["line"] += [f"S{seed}-{number + 1}"] * lon.size
        columns["time"] += list(1.7e9 + 60.0 * np.arange(lon.size))
        columns["lon"] += list(lon)
        columns["lat"] += list(lat)
        columns[FIELD] += list(3000 + 40 * np.sin(2 * np.pi * along / 5000) + rng.normal(0, 3, lon.size))
    return write_csv(path, columns)


@pytest.fixture(scope="module")
def archive(tmp_path_factory):
    """Three good files (one in a sub-folder, one with a gap) and a file that cannot be read."""
    root = tmp_path_factory.mktemp("archive")
    (root / "leg2").mkdir()
    good = [
        _survey(root / "north.csv", 1),
        _survey(root / "south.csv", 2, gap=True),
        _survey(root / "leg2" / "east.csv", 3),
    ]
    (root / "broken.csv").write_text("name,east_ish,depth\nA,1,2\nA,2,3\n")
    (root / "notes.json").write_text("{}")  # not picked up by a folder search
    return root, [Path(p) for p in good]


def run(capsys, *argv):
    status = main([str(a) for a in argv])
    out, err = capsys.readouterr()
    return status, out, err


@pytest.fixture(scope="module")
def first_run(archive, scheduler, tmp_path_factory):
    """One batch over the archive, as the command line runs it."""
    root, _ = archive
    out = tmp_path_factory.mktemp("batch") / "out"
    status = main(["batch", str(root), *ARGS, "--out", str(out), "--scheduler", scheduler, "--json"])
    return status, out


def _segments(out):
    import geopandas

    return geopandas.read_parquet(out / "segments")


def test_summary_counts_and_row_accounting(first_run):
    status, out = first_run
    assert status == 0
    summary = json.loads((out / "summary.json").read_text())
    assert summary["counts"] == {"files": 4, "done": 3, "failed": 1, "skipped": 0}
    assert summary["options"] == OPTIONS.to_json()
    assert summary["cluster"]["workers"] == 2
    by_file = {f["file"]: f for f in summary["files"]}
    assert set(by_file) == {"broken.csv", "north.csv", "south.csv", "leg2/east.csv"}
    for record in by_file.values():
        if record["status"] == "done":
            rows = record["rows"]
            assert rows["read"] == rows["used"] + rows["merged"] + sum(rows["dropped"].values())
            assert record["worker"]["peak_rss_mb"] > 0
            assert set(record["seconds"]) >= {"read", "segments", "spacing", "spectra", "windows", "write"}
    assert by_file["south.csv"]["segments"] == 3  # the gap splits the second line
    assert summary["rows"]["read"] == sum(f["rows"]["read"] for f in by_file.values() if f.get("rows"))


def test_bad_file_is_recorded_and_the_rest_complete(first_run):
    _, out = first_run
    summary = json.loads((out / "summary.json").read_text())
    (failure,) = summary["failures"]
    assert failure["file"] == "broken.csv"
    assert failure["error_type"] == "InputError"
    assert "no longitude column" in failure["reason"] and "\n" not in failure["reason"]
    assert not part_paths(out, file_id("broken.csv"))[0].exists()
    assert len(list((out / "segments").glob("part-*.parquet"))) == 3


def _values(frame, name):
    """A column as JSON would hold it: Python values, None where empty."""
    return frame[name].astype(object).where(frame[name].notna(), None).tolist()


def test_segments_equal_the_spacing_and_spectrum_commands(first_run, archive, capsys):
    _, out = first_run
    root, good = archive
    batch = _segments(out)
    for path in good:
        relative = path.relative_to(root).as_posix()
        part = batch[batch["file"] == relative].reset_index(drop=True)
        status, text, _ = run(
            capsys, "spacing", path, "--field", FIELD, "--shortest-wavelength", "2km", "--json", "--quiet"
        )
        assert status == 0
        spacing = json.loads(text)["segments"]
        assert len(part) == len(spacing) > 0
        for name in spacing[0]:
            expected = [row[name] for row in spacing]
            if name == "falloff":  # nested in JSON, falloff_* columns in the table
                for key in (
                    "model",
                    "beta",
                    "beta_err",
                    "depth_km",
                    "depth_err_km",
                    "noise_floor_per_cycle_per_km",
                ):
                    assert _values(part, f"falloff_{key}") == [(f or {}).get(key) for f in expected], key
                continue
            assert _values(part, name) == expected, name
        status, text, _ = run(capsys, "spectrum", path, "--field", FIELD, "--json")
        assert status == 0
        spectra = {(s["line"], s["segment"]): s for s in json.loads(text)["segments"]}
        for row in part.itertuples():
            entry = spectra[(row.line, row.segment)]
            assert row.resampled_n == entry["n"]
            assert row.dominant_wavelength_km == entry["fisher"]["dominant_wavelength_km"]
            assert row.fisher_p_value == entry["fisher"]["p_value"]
            assert row.red_noise_lag1 == entry["red_noise"]["lag1"]
            expected = entry["red_noise"]["dominant_wavelength_km"]
            assert row.red_noise_significant == (expected is not None)
            if expected is not None:
                assert row.red_noise_dominant_km == expected


def test_windows_equal_the_library_window_table(first_run, archive):
    import geopandas

    from profiles.analysis import resample_field
    from profiles.geometry import build_segments
    from profiles.read import read_survey
    from profiles.windows import along_track_windows

    _, out = first_run
    root, good = archive
    windows = geopandas.read_parquet(out / "windows")
    for path in good:
        segments = build_segments(read_survey(path, fields=(FIELD,)))
        pairs, _ = resample_field(segments, FIELD)
        expected = along_track_windows(
            [u for _, u in pairs], window=8000.0, shortest_wavelength=2000.0
        ).to_frame()
        got = windows[windows["file"] == path.relative_to(root).as_posix()].reset_index(drop=True)
        assert len(got) == len(expected) > 0
        for name in expected.columns:
            if name == "reasons":
                assert list(got[name]) == [",".join(r) for r in expected[name]]
            else:
                np.testing.assert_array_equal(got[name].to_numpy(), expected[name].to_numpy(), err_msg=name)


def test_output_is_geoparquet_in_wgs84_with_geodesic_lengths(first_run):
    import shapely

    _, out = first_run
    segments = _segments(out)
    assert segments.crs.to_epsg() == 4326
    assert set(segments.geometry.geom_type) == {"LineString"}
    # pyproj.Geod.geometry_length of each line is the segment's along-track length.
    lengths = np.array([GEOD.geometry_length(g) for g in segments.geometry]) / 1e3
    np.testing.assert_allclose(lengths, segments["length_km"], rtol=1e-9)
    assert (shapely.get_num_points(segments.geometry) == segments["n_stations"]).all()
    import geopandas

    windows = geopandas.read_parquet(out / "windows")
    assert windows.crs.to_epsg() == 4326 and set(windows.geometry.geom_type) == {"LineString"}
    # each window's line runs over its extent along the track (end - start, to 1e-6)
    lengths = np.array([GEOD.geometry_length(g) for g in windows.geometry]) / 1e3
    np.testing.assert_allclose(lengths, windows["end_km"] - windows["start_km"], rtol=1e-6)


def test_second_run_skips_what_is_done(first_run, archive, scheduler, capsys):
    _, out = first_run
    root, _ = archive
    before = {p.name: p.stat().st_mtime_ns for p in (out / "segments").glob("part-*")}
    status, text, _ = run(capsys, "batch", root, *ARGS, "--out", out, "--scheduler", scheduler, "--json")
    assert status == 0
    summary = json.loads(text)
    assert summary["counts"] == {"files": 4, "done": 0, "failed": 1, "skipped": 3}  # the bad file is retried
    assert {p.name: p.stat().st_mtime_ns for p in (out / "segments").glob("part-*")} == before
    skipped = [f for f in summary["files"] if f["status"] == "skipped"]
    assert all(f["rows"]["read"] > 0 and f["segments"] > 0 for f in skipped)
    assert summary["rows"] == json.loads((out / "summary.json").read_text())["rows"]


def test_other_options_are_refused_without_overwrite(first_run, archive, capsys):
    _, out = first_run
    root, _ = archive
    status, _, err = run(capsys, "batch", root, *ARGS, "--alpha", "0.01", "--out", out, "--workers", "1")
    assert status == 2
    assert "other options (alpha)" in err and "--overwrite" in err and len(err.strip().splitlines()) == 1


def test_changed_file_and_missing_windows_part_are_redone(archive, scheduler, tmp_path):
    _, good = archive
    out = tmp_path / "out"
    files = [str(p) for p in good[:2]]
    first = run_batch(files, out=out, options=OPTIONS, scheduler=scheduler)
    assert first.counts["done"] == 2
    changed, lost = find_survey_files(files).files
    os.utime(changed.path, ns=(changed.mtime_ns + 10**9, changed.mtime_ns + 10**9))
    part_paths(out, lost.id)[1].unlink()
    again = run_batch(files, out=out, options=OPTIONS, scheduler=scheduler)
    assert again.counts == {"files": 2, "done": 2, "failed": 0, "skipped": 0}
    os.utime(changed.path, ns=(changed.mtime_ns, changed.mtime_ns))


def test_failure_inside_the_writer_leaves_no_part(archive, tmp_path, monkeypatch):
    import pyarrow.parquet as pq

    _, good = archive
    out = tmp_path / "out"
    (item,) = find_survey_files([good[0]]).files
    task = task_for(item, out)
    written = []

    def fail_on_second_part(table, path, **kwargs):  # the disk fills up half-way through a part
        written.append(Path(path))
        Path(path).write_bytes(b"PAR1 half a file")
        if len(written) == 2:
            raise OSError(28, "No space left on device")
        return original(table, path, **kwargs)

    original = pq.write_table
    monkeypatch.setattr(pq, "write_table", fail_on_second_part)
    record = analyse_file(task)
    assert record["status"] == "failed"
    assert record["reason"] == "OSError: [Errno 28] No space left on device"
    segments, windows = part_paths(out, item.id)
    assert written == [temporary_name(windows), temporary_name(segments)]
    assert windows.exists() and not segments.exists()  # the file is not finished
    assert not temporary_name(segments).exists() and not temporary_name(windows).exists()


def test_temporaries_of_a_killed_run_are_removed_and_the_file_redone(archive, scheduler, tmp_path):
    _, good = archive
    out = tmp_path / "out"
    (item,) = find_survey_files([good[0]]).files
    segments, _ = part_paths(out, item.id)
    segments.parent.mkdir(parents=True)
    temporary_name(segments).write_bytes(b"PAR1 killed while writing")
    summary = run_batch([good[0]], out=out, options=OPTIONS, scheduler=scheduler)
    assert summary.counts["done"] == 1
    assert not temporary_name(segments).exists()
    assert sorted(p.name for p in segments.parent.iterdir()) == [segments.name]


def test_unexpected_error_is_recorded_with_its_type(archive, tmp_path, monkeypatch):
    import profiles.spacing

    _, good = archive
    (item,) = find_survey_files([good[0]]).files

    def broken(*args, **kwargs):
        raise ZeroDivisionError("float division by zero")

    monkeypatch.setattr(profiles.spacing, "audit_spacing", broken)
    record = analyse_file(
        {
            "path": str(item.path),
            "file": item.relative,
            "id": item.id,
            "size": item.size,
            "mtime_ns": item.mtime_ns,
            "out": str(tmp_path),
            "options": OPTIONS.to_json(),
            "options_key": OPTIONS.key(),
        }
    )
    assert record["status"] == "failed" and record["unexpected"] is True
    assert record["reason"] == "ZeroDivisionError: float division by zero"
    assert record["error_type"] == "ZeroDivisionError"


def test_local_cluster_text_output_and_no_progress_off_a_terminal(archive, tmp_path, capsys):
    _, good = archive
    out = tmp_path / "out"
    status, text, err = run(capsys, "batch", good[0], *ARGS, "--out", out, "--workers", "1")
    assert status == 0
    assert text.splitlines()[0].startswith("1 files: done 1, failed 0, skipped 0")
    assert "file/s" not in err and "%|" not in err  # stderr is not a terminal: no bar
    status, text, err = run(capsys, "batch", good[0], *ARGS, "--out", out, "--quiet")
    assert status == 0 and "skipped 1" in text and err == ""


def test_every_file_failing_is_an_error(archive, tmp_path, capsys):
    root, _ = archive
    status, _, err = run(
        capsys, "batch", root / "broken.csv", *ARGS, "--out", tmp_path / "out", "--workers", "1"
    )
    assert status == 2 and err.startswith(f"profiles: error: {root / 'broken.csv'}: no longitude column")
    assert json.loads((tmp_path / "out" / "summary.json").read_text())["counts"]["failed"] == 1


def test_folder_search(archive, first_run):
    root, good = archive
    _, out = first_run
    found = find_survey_files([root], exclude=[out])
    assert [f.relative for f in found.files] == ["broken.csv", "leg2/east.csv", "north.csv", "south.csv"]
    assert found.root == root.resolve()
    # the same file given twice counts once; a file and its folder share the root
    again = find_survey_files([good[0], good[0], root / "leg2"])
    assert [f.relative for f in again.files] == ["leg2/east.csv", "north.csv"]


def test_file_ids_are_stable_and_distinct():
    assert file_id("leg2/east.csv") == file_id("leg2/east.csv")
    assert file_id("a b.csv") != file_id("a_b.csv")
    assert file_id("leg2/east.csv").startswith("leg2__east.csv-")


def test_usage_errors(archive, tmp_path, capsys):
    root, _ = archive
    with pytest.raises(SystemExit) as stop:
        main(
            [
                "batch",
                str(root),
                "--field",
                FIELD,
                "--out",
                str(tmp_path),
                "--workers",
                "1",
                "--scheduler",
                "tcp://127.0.0.1:1",
            ]
        )
    assert stop.value.code == 2
    status, _, err = run(capsys, "batch", root, "--field", FIELD)
    assert status == 2 and "--out DIR is required" in err
    status, _, err = run(capsys, "batch", tmp_path / "nowhere", "--field", FIELD, "--out", tmp_path / "o")
    assert status == 2 and "no such file or folder" in err


def test_lines_asked_for_and_every_part_has_one_schema(archive, scheduler, tmp_path):
    import geopandas
    import pyarrow.parquet as pq

    root, _ = archive
    out = tmp_path / "out"
    options = BatchOptions(field=FIELD, window=8000.0, shortest_wavelength=2000.0, lines=("S1-1",))
    summary = run_batch([root], out=out, options=options, scheduler=scheduler)
    # files without the line are done, with empty parts and a warning
    assert summary.counts == {"files": 4, "done": 3, "failed": 1, "skipped": 0}
    assert set(geopandas.read_parquet(out / "segments")["line"]) == {"S1-1"}
    empty = next(f for f in summary.files if f["file"] == "south.csv")
    assert empty["segments"] == empty["windows"] == 0
    assert any("no segment of the lines asked for (S1-1)" in w for w in empty["warnings"])
    for folder in ("segments", "windows"):
        schemas = [pq.read_schema(p).remove_metadata() for p in sorted((out / folder).glob("part-*"))]
        assert len(schemas) == 3 and all(s.equals(schemas[0]) for s in schemas), folder


def test_empty_parts_read_back_as_geopandas_writes_them(archive, tmp_path, monkeypatch):
    # A file without the line asked for: both parts empty, and still what geopandas writes for
    # an empty layer of the same columns (schema, pandas dtypes and geo metadata), the same
    # schema as a part with rows.
    import pyarrow.parquet as pq

    root, _ = archive
    out = tmp_path / "out"
    layers = _recording(monkeypatch)
    options = BatchOptions(field=FIELD, window=8000.0, shortest_wavelength=2000.0, lines=("S1-1",))
    (empty,), (full,) = (find_survey_files([root / name]).files for name in ("south.csv", "north.csv"))
    record = analyse_file(task_for(empty, out, options))
    assert record["status"] == "done" and record["segments"] == record["windows"] == 0
    assert analyse_file(task_for(full, out, options))["segments"] > 0  # north.csv holds S1-1
    recorded = (layers["segments"][0], layers["windows"][0])  # the empty file's, built first
    for path, (layer, geometry) in zip(part_paths(out, empty.id), recorded, strict=True):
        assert pq.read_metadata(path).num_rows == 0 and len(geometry) == 0
        _assert_same_for_readers(path, _geopandas_part(layer, geometry, read_part_attrs(path),
                                                       tmp_path / f"ref-{path.parent.name}"))
    for path, other in zip(part_paths(out, empty.id), part_paths(out, full.id), strict=True):
        assert pq.read_schema(path).remove_metadata().equals(pq.read_schema(other).remove_metadata())


# --- the parts against geopandas' own writer ------------------------------------------------------


def _recording(monkeypatch) -> dict:
    """Record every layer the task builds, with its lines as profiles.gis's GeoPackage layers
    build them in shapely (segment_layer, window_layer), apart from the WKB written."""
    from profiles import gis

    layers = {"segments": [], "windows": []}
    build_segments, build_windows = profiles.batch_task._segment_part, profiles.batch_task._window_part

    def segment_part(file, segments, audit, *args):
        layers["segments"].append((build_segments(file, segments, audit, *args),
                                   gis.segment_layer(segments, audit).geometry.to_numpy()))
        return layers["segments"][-1][0]

    def window_part(file, table):
        empty = table is None or len(table) == 0
        geometry = np.array([], dtype=object) if empty else gis.window_layer(table).geometry.to_numpy()
        layers["windows"].append((build_windows(file, table), geometry))
        return layers["windows"][-1][0]

    monkeypatch.setattr(profiles.batch_task, "_segment_part", segment_part)
    monkeypatch.setattr(profiles.batch_task, "_window_part", window_part)
    return layers


def _geopandas_part(layer, geometry, attrs: dict, path: Path) -> Path:
    """The outside reference: the layer as a GeoDataFrame in EPSG:4326 (columns cast with
    pandas' DataFrame.astype), its attrs set, written by geopandas' GeoDataFrame.to_parquet."""
    import geopandas
    import pandas as pd

    frame = pd.DataFrame(dict(layer.columns)).astype(layer.kinds)
    lines = geopandas.GeoSeries(geometry, index=frame.index, crs="EPSG:4326")
    frame = geopandas.GeoDataFrame(frame, geometry=lines)
    frame.attrs["profiles"] = attrs
    frame.to_parquet(path, index=False)
    return path


def _assert_same_for_readers(ours: Path, reference: Path) -> None:
    """test_gis.assert_same_for_readers, and the attrs are those read_part_attrs reads."""
    import geopandas

    assert_same_for_readers(ours, reference)
    assert geopandas.read_parquet(ours).attrs["profiles"] == read_part_attrs(ours)


def test_parts_read_back_as_geopandas_writes_them(archive, tmp_path, monkeypatch):
    # Every part of the archive's files (one with a gap), against the same layers written by
    # geopandas' GeoDataFrame.to_parquet (the outside reference).
    _, good = archive
    layers = _recording(monkeypatch)
    for path in good:
        (item,) = find_survey_files([path]).files
        assert analyse_file(task_for(item, tmp_path / "out"))["status"] == "done"
        segments, windows = part_paths(tmp_path / "out", item.id)
        for part, (layer, geometry) in ((segments, layers["segments"][-1]), (windows, layers["windows"][-1])):
            assert len(geometry) > 0
            reference = _geopandas_part(layer, geometry, read_part_attrs(part), tmp_path / f"ref-{part.name}")
            _assert_same_for_readers(part, reference)


def test_a_track_across_the_antimeridian_is_cut_there(tmp_path, monkeypatch):
    import geopandas
    import shapely

    lon, lat = walk(179.7, -20.0, [(90.0, 160, 250.0)])  # 40 km east across 180 degrees
    depth = 3000 + 40 * np.sin(np.arange(lon.size) / 5.0)
    path = write_csv(
        tmp_path / "dateline.csv", {"line": ["D1"] * lon.size, "lon": lon, "lat": lat, FIELD: depth}
    )
    (item,) = find_survey_files([path]).files
    out = tmp_path / "out"
    layers = _recording(monkeypatch)
    record = analyse_file(task_for(item, out))
    assert record["status"] == "done", record["reason"]
    segments, windows = part_paths(out, item.id)
    (line,) = geopandas.read_parquet(segments).geometry
    assert line.geom_type == "MultiLineString"
    coords = shapely.get_coordinates(line)
    assert coords[:, 0].min() >= -180 and coords[:, 0].max() <= 180
    # pyproj.Geod: the parts add up to the track's geodesic length
    assert GEOD.geometry_length(line) == pytest.approx(GEOD.line_length(lon, lat), rel=1e-9)
    # The windows: those across 180 degrees cut, the others LineStrings; both parts as
    # geopandas' GeoDataFrame.to_parquet writes the same layers.
    assert set(geopandas.read_parquet(windows).geom_type) == {"LineString", "MultiLineString"}
    for part, (layer, geometry) in ((segments, layers["segments"][0]), (windows, layers["windows"][0])):
        _assert_same_for_readers(part, _geopandas_part(layer, geometry, read_part_attrs(part),
                                                       tmp_path / f"ref-{part.parent.name}"))


def _worker_environment():
    import dask

    return {"malloc": os.environ.get("MALLOC_TRIM_THRESHOLD_"), "omp": os.environ.get("OMP_NUM_THREADS"),
            "tick": dask.config.get("distributed.admin.tick.interval"),
            "profile": dask.config.get("distributed.worker.profile.enabled")}


def test_local_workers_settings_and_no_leak_into_this_process(monkeypatch):
    # Dask's nanny writes its pre-spawn variables into the parent's environment and leaves them
    # there (distributed/nanny.py), where the workers of any later cluster started from the same
    # process inherit them: with Dask's default MALLOC_TRIM_THRESHOLD_ = 65536 that made them
    # ~1.7x slower (docs/batch.md). Two local clusters in a row: the workers of both run with
    # the batch's settings, and this process's environment is as it was before each.
    from profiles.batch import DASK_SPAWN_VARIABLES, LOCAL_WORKER_CONFIG, dask_client

    tick = LOCAL_WORKER_CONFIG["distributed.admin.tick.interval"]
    for user_threads in (None, "3"):  # a user's own setting is kept, and passed on as Dask does
        for name in DASK_SPAWN_VARIABLES:
            monkeypatch.delenv(name, raising=False)
        if user_threads:
            monkeypatch.setenv("OMP_NUM_THREADS", user_threads)
        before = {name: os.environ.get(name) for name in DASK_SPAWN_VARIABLES}
        for _ in range(2):
            with dask_client(workers=1, scheduler=None) as client:
                (found,) = client.run(_worker_environment).values()
            assert found == {"malloc": None, "omp": user_threads or "1", "tick": tick, "profile": False}
            assert {name: os.environ.get(name) for name in DASK_SPAWN_VARIABLES} == before
