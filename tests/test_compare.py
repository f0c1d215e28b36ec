"""Line comparison and fabric fit end to end, and the compare / coherence commands.

References: the apparent wavelength of a lineated fabric on an oblique line, L / |sin(t - s)|
(projection of the wavevector; ../shared/references.md section 9); positions from
pyproj.Geod.fwd and a pyproj azimuthal-equidistant projection (reference geodesy).
"""

from __future__ import annotations

import json

import numpy as np
import pytest
from conftest import walk, write_csv
from pyproj import Proj

from profiles.cli import main
from profiles.compare import compare_survey
from profiles.geometry import build_segments
from profiles.survey import Survey

CENTRE = (-140.0, -20.0)
FABRIC_WAVELENGTH = 9000.0
STRIKE = 35.0


def fabric_survey(azimuths, *, seed=0, length=150_000.0, step=200.0, noise=5.0):
    """Lines through the centre at the given azimuths over a fabric cos(2 pi u / L)."""
    plane = Proj(proj="aeqd", lon_0=CENTRE[0], lat_0=CENTRE[1], ellps="WGS84")
    normal = np.radians(STRIKE + 90.0)
    rng = np.random.default_rng(seed)
    lines, lons, lats, depth = [], [], [], []
    for i, azimuth in enumerate(azimuths):
        n = int(length / step)
        start = walk(*CENTRE, [(azimuth + 180.0, 1, length / 2)])
        lon, lat = walk(start[0][-1], start[1][-1], [(azimuth, n, step)])
        east, north = plane(lon, lat)
        u = east * np.sin(normal) + north * np.cos(normal)
        lines += [f"A{i}"] * lon.size
        lons.append(lon)
        lats.append(lat)
        depth.append(4000.0 - 150.0 * np.cos(2 * np.pi * u / FABRIC_WAVELENGTH)
                     + rng.normal(0, noise, lon.size))
    return Survey.from_arrays(line=np.array(lines), lon=np.concatenate(lons),
                              lat=np.concatenate(lats), values={"depth_m": np.concatenate(depth)})


def test_fabric_from_four_azimuths_end_to_end():
    # Issue check: four azimuths give L within 3 % and s within 3 degrees.
    survey = fabric_survey([80.0, 115.0, 150.0, 185.0])
    result = compare_survey(build_segments(survey), field="depth_m")
    assert result.fabric is not None
    assert result.fabric.wavelength == pytest.approx(FABRIC_WAVELENGTH, rel=0.03)
    assert abs((result.fabric.strike_deg - STRIKE + 90) % 180 - 90) < 3.0
    table = result.table.to_frame()
    # each line sees L / |sin(t - s)| to within one harmonic (resolution lambda^2 / length)
    for row in table.itertuples():
        expected = FABRIC_WAVELENGTH / abs(np.sin(np.radians(row.azimuth_deg - STRIKE)))
        assert abs(row.dominant_wavelength_km * 1e3 - expected) < expected**2 / (row.length_km * 1e3)
        assert row.red_noise_significant


def test_outlier_segment_is_left_out_and_named():
    survey = fabric_survey([80.0, 115.0, 150.0, 185.0])
    stations = survey.stations.copy()
    # Replace line A2's depth by a 40 km wavelength feature: its dominant peak is no fabric.
    on_a2 = (stations["line"] == "A2").to_numpy()
    n = int(on_a2.sum())
    stations.loc[on_a2, "depth_m"] = 4000.0 + 800.0 * np.sin(2 * np.pi * np.arange(n) * 200.0 / 40_000.0)
    result = compare_survey(build_segments(Survey(stations, survey.fields, survey.sources)),
                            field="depth_m")
    assert any(note.startswith("A2/1") for note in result.fabric_left_out)
    assert result.fabric.wavelength == pytest.approx(FABRIC_WAVELENGTH, rel=0.03)


def test_resampling_and_welch_options_reach_every_segment():
    # The same fabric seen at a coarser common spacing: 400 m is still > 20 samples per
    # 10 km cycle, so the fit holds; every segment's grid has the spacing asked for, and the
    # Welch density its block (a spacing option that did not reach the analysis would fail).
    survey = fabric_survey([80.0, 115.0, 150.0, 185.0])
    result = compare_survey(build_segments(survey), field="depth_m", method="welch", spacing=400.0,
                            segment_length=20_000.0, confidence=0.9)
    assert {spectrum.uniform.spacing for _, spectrum in result.spectra} == {400.0}
    assert result.fabric.wavelength == pytest.approx(FABRIC_WAVELENGTH, rel=0.03)
    for _, spectrum in result.spectra:
        assert spectrum.density.confidence == 0.9
        assert spectrum.density.segment_length == pytest.approx(20_000.0, abs=400.0)


def test_fabric_refused_when_azimuths_span_too_little():
    # Issue: refuse with a clear message when the azimuths span less than 20 degrees.
    survey = fabric_survey([100.0, 110.0])
    result = compare_survey(build_segments(survey), field="depth_m")
    assert result.fabric is None
    assert "20" in result.fabric_note


def survey_csv(tmp_path, survey: Survey) -> str:
    table = survey.stations
    return write_csv(tmp_path / "fabric.csv", {
        "line": table["line"].tolist(), "lon": table["lon"].to_numpy(),
        "lat": table["lat"].to_numpy(), "depth_m": table["depth_m"].to_numpy(),
    })


def test_compare_command_json(tmp_path, capsys):
    path = survey_csv(tmp_path, fabric_survey([80.0, 115.0, 150.0]))
    assert main(["compare", path, "--field", "depth_m", "--json", "--out", str(tmp_path / "o")]) == 0
    doc = json.loads(capsys.readouterr().out)
    keys = {"line", "segment", "azimuth_deg", "length_km", "spacing_median_km",
            "nyquist_wavelength_km", "dominant_wavelength_km", "fisher_p_value",
            "red_noise_significant", "second_wavelength_km", "beta", "aliasing_share"}
    assert keys <= set(doc["segments"][0])
    assert set(doc["fabric"]) == {"wavelength_km", "strike_deg", "wavelength_err_km",
                                  "strike_err_deg", "n_segments", "rms_misfit_km"}
    for name in ("compare.csv", "spectra.png", "fabric.png", "fabric_segments.csv"):
        assert (tmp_path / "o" / name).stat().st_size > 0
    # The resampling and Welch options from the command line (checked in the library above).
    assert main(["compare", path, "--field", "depth_m", "--json", "--method", "welch", "--spacing", "400m",
                 "--segment-length", "20km", "--confidence", "0.9"]) == 0
    again = json.loads(capsys.readouterr().out)
    assert again["fabric"]["wavelength_km"] == pytest.approx(doc["fabric"]["wavelength_km"], rel=0.03)


def test_coherence_command_json_and_refusals(tmp_path, capsys):
    lon, lat = walk(30.0, -50.0, [(90, 1500, 250.0)])
    rng = np.random.default_rng(2)
    depth = 3000.0 + np.cumsum(rng.normal(0, 5, lon.size))
    gravity = rng.normal(0, 1, lon.size)
    path = write_csv(tmp_path / "two.csv", {"line": ["C"] * lon.size, "lon": lon, "lat": lat,
                                            "depth_m": depth, "gravity_mgal": gravity})
    status = main(["coherence", path, "--input", "depth_m", "--output", "gravity_mgal",
                   "--segment-length", "40km", "--json"])
    assert status == 0
    doc = json.loads(capsys.readouterr().out)
    assert set(doc["bands"][0]) == {"wavenumber_per_km", "wavelength_km", "coherence",
                                    "coherence_threshold", "admittance", "admittance_err",
                                    "phase_deg"}
    # independent fields: coherence below the zero-coherence level at most wavenumbers
    # (about 95 %; Carter, Knapp and Nuttall 1973, from memory)
    below = np.mean([b["coherence"] < b["coherence_threshold"] for b in doc["bands"]])
    assert below > 0.85
    assert main(["coherence", path, "--input", "depth_m", "--output", "depth_m"]) == 2
    # one block of the whole line is a single estimate: refused, never coherence 1
    assert main(["coherence", path, "--input", "depth_m", "--output", "gravity_mgal",
                 "--segment-length", "370km"]) == 2
    assert "independent estimates" in capsys.readouterr().err
