"""The ``profiles spacing`` command: JSON shape, CSV outputs, lengths with units, bad input.

Expected spacings follow from tracks built with pyproj.Geod.fwd (the reference geodesic).
"""

from __future__ import annotations

import json

import numpy as np
import pytest
from conftest import walk, write_csv

from profiles.cli import main


@pytest.fixture
def survey_file(tmp_path):
    lon, lat = walk(-15.0, -33.0, [(60, 120, 250.0), (60, 1, 8000.0), (60, 20, 250.0), (60, 40, 2500.0)])
    n = lon.size
    return write_csv(tmp_path / "lines.csv", {
        "Line": ["T1"] * n, "Longitude": lon, "Latitude": lat,
        "depth_m": np.linspace(3900, 4100, n),
    })


def run(capsys, *argv):
    status = main(list(argv))
    out, err = capsys.readouterr()
    return status, out, err


def test_json_has_the_documented_keys(capsys, survey_file):
    status, out, _ = run(capsys, "spacing", survey_file, "--shortest-wavelength", "4km", "--json")
    assert status == 0
    doc = json.loads(out)
    assert set(doc["rows"]) == {"read", "used", "merged", "dropped"}
    assert doc["rows"]["read"] == doc["rows"]["used"] == 182
    keys = {"line", "segment", "n_stations", "start_km", "end_km", "length_km", "azimuth_deg",
            "straightness", "spacing_median_km", "spacing_p95_km", "spacing_max_km",
            "nyquist_wavelength_km", "aliasing_risk"}
    assert keys <= set(doc["segments"][0])
    assert len(doc["segments"]) == 2  # the 8 km step is a gap
    # the 2.5 km steps exceed 4 km / 2: one risky stretch at the end of the second segment
    (stretch,) = doc["risky_stretches"]
    assert set(stretch) >= {"line", "segment", "start_km", "end_km", "lon", "lat", "spacing_km"}
    assert stretch["segment"] == 2
    assert stretch["spacing_km"] == pytest.approx(2.5, abs=1e-6)
    assert doc["segments"][0]["aliasing_risk"] is False
    assert isinstance(doc["warnings"], list)


def test_lengths_take_units(capsys, survey_file):
    _, out_nmi, _ = run(capsys, "spacing", survey_file, "--shortest-wavelength", "2.7nmi", "--json")
    _, out_m, _ = run(capsys, "spacing", survey_file, "--shortest-wavelength", "5000.4m", "--json")
    # 2.7 nmi = 5000.4 m exactly (1 nmi = 1852 m)
    assert json.loads(out_nmi)["risky_stretches"] == json.loads(out_m)["risky_stretches"]


def test_out_writes_tables(capsys, tmp_path, survey_file):
    out = tmp_path / "audit"
    status, text, _ = run(capsys, "spacing", survey_file, "--out", str(out), "--quiet")
    assert status == 0 and "rows read 182" in text
    for name in ("segments.csv", "risky_stretches.csv", "breaks.csv", "stations.csv", "spacing.json"):
        assert (out / name).is_file()
    status, _, err = run(capsys, "spacing", survey_file, "--out", str(out))
    assert status == 2 and "exists; use --overwrite" in err


def test_gap_option_as_length(capsys, survey_file):
    _, out, _ = run(capsys, "spacing", survey_file, "--gap", "10km", "--json")
    assert len(json.loads(out)["segments"]) == 1


def one_error_line(err: str) -> str:
    lines = [line for line in err.splitlines() if line.strip()]
    assert len(lines) == 1, err
    assert lines[0].startswith("profiles: error: ")
    assert "Traceback" not in err
    return lines[0]


@pytest.mark.parametrize("content, fragment", [
    ("", "file is empty"),
    ("line,lon,lat\n", "no data rows"),
    ("1.0,2.0,3.0\n1.5,2.5,3.5\n", "not column names"),
    ("name,east_ish,depth\nA,1,2\nA,2,3\n", "no longitude column"),
    ("line,lon,lat\nA,,\nA,x,y\n", "no usable rows"),
    ("line,lon,lat\nA,10,95\nA,10,96\nA,11,97\n", "look swapped"),
])
def test_bad_input_gets_one_line_and_status_2(capsys, tmp_path, content, fragment):
    path = tmp_path / "bad.csv"
    path.write_text(content)
    status, _, err = run(capsys, "spacing", str(path))
    assert status == 2
    assert fragment in one_error_line(err)
    assert str(path) in err


def test_missing_file(capsys, tmp_path):
    status, _, err = run(capsys, "spacing", str(tmp_path / "nowhere.csv"))
    assert status == 2 and "no such file" in one_error_line(err)


def test_no_coordinate_columns_lists_found_and_closest(capsys, tmp_path):
    path = tmp_path / "cols.csv"
    path.write_text("line,lonn,latt,depth\nA,1,2,3\nA,1.1,2,3\n")
    _, _, err = run(capsys, "spacing", str(path))
    line = one_error_line(err)
    assert "columns found: line, lonn, latt, depth" in line and "closest names: lonn" in line


def test_one_point_line_and_doubling_back(capsys, tmp_path):
    lon, lat = walk(1.0, 1.0, [(0, 40, 250.0), (180, 40, 250.0)])
    n = lon.size
    path = write_csv(tmp_path / "odd.csv", {
        "line": ["A"] * n + ["B"], "lon": [*lon, 5.0], "lat": [*lat, 5.0]})
    status, out, _ = run(capsys, "spacing", path, "--json")
    assert status == 0
    doc = json.loads(out)
    assert doc["rows"]["dropped"] == {"single-station line": 1}
    assert any("doubles back" in w for w in doc["warnings"])
    assert len(doc["segments"]) == 2
    status, _, _ = run(capsys, "spacing", path, "--strict", "--quiet")
    assert status == 1  # warnings with --strict


def test_latitude_beyond_90_in_one_row_is_dropped(capsys, tmp_path):
    lon, lat = walk(0.0, 10.0, [(90, 20, 500.0)])
    lat[3] = 91.0
    path = write_csv(tmp_path / "lat.csv", {"line": ["A"] * lon.size, "lon": lon, "lat": lat})
    _, out, _ = run(capsys, "spacing", path, "--json")
    assert json.loads(out)["rows"]["dropped"] == {"coordinate out of range": 1}


def test_usage_error_is_one_line(capsys):
    with pytest.raises(SystemExit) as stop:
        main(["spacing"])
    assert stop.value.code == 2
    one_error_line(capsys.readouterr().err)
