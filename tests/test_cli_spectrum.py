"""The ``profiles spectrum`` command end to end: JSON shape, the peak of a known sinusoid,
Parseval through the command, files written.

References: a sinusoid of amplitude A on a Fourier wavenumber carries variance A^2/2 in its
harmonic (Parseval; ../shared/references.md section 10); positions from pyproj.Geod.fwd.
"""

from __future__ import annotations

import json

import numpy as np
import pytest
from conftest import walk, write_csv

from profiles.cli import main

SPACING = 250.0
WAVELENGTH = 5000.0


@pytest.fixture
def survey(tmp_path):
    # 400 steps of 250 m = 100 km = 20 cycles of 5 km: the sinusoid sits on harmonic 20.
    lon, lat = walk(150.0, -45.0, [(30, 400, SPACING)])
    distance = SPACING * np.arange(lon.size)
    rng = np.random.default_rng(7)
    depth = 3500.0 + 40.0 * np.sin(2 * np.pi * distance / WAVELENGTH) + rng.normal(0, 2, lon.size)
    return write_csv(tmp_path / "one.csv", {"line": ["S1"] * lon.size, "lon": lon, "lat": lat,
                                            "depth_m": depth})


def run_json(capsys, *argv):
    assert main(list(argv)) == 0
    return json.loads(capsys.readouterr().out)


def test_harmonic_json(capsys, survey):
    doc = run_json(capsys, "spectrum", survey, "--field", "depth_m", "--json")
    (segment,) = doc["segments"]
    assert {"line", "segment", "n", "spacing_km", "variance", "harmonics", "fisher",
            "red_noise"} <= set(segment)
    assert set(segment["harmonics"][0]) == {"k", "wavenumber_per_km", "wavelength_km", "a", "b",
                                            "amplitude", "phase_deg", "variance",
                                            "variance_fraction"}
    assert set(segment["fisher"]) >= {"g", "m", "p_value", "g_critical", "g_critical_approx",
                                      "alpha", "dominant_k", "dominant_wavelength_km",
                                      "significant"}
    assert set(segment["red_noise"]) >= {"lag1", "significant_k"}
    # harmonic 20 of a record of N dx = 401 x 250 m: 5.0125 km
    assert segment["fisher"]["dominant_wavelength_km"] == pytest.approx(401 * SPACING / 20 / 1e3)
    assert segment["fisher"]["significant"] and segment["fisher"]["p_value"] < 1e-10
    assert segment["fisher"]["m"] == (segment["n"] - 1) // 2  # Fisher 1929 m; references.md s1
    # Parseval through the command: harmonic variances add up to the variance of the
    # detrended values, and the 40 m sinusoid carries about 40^2/2 = 800 m^2.
    harmonics = segment["harmonics"]
    peak = max(harmonics, key=lambda h: h["variance"])
    assert peak["variance"] == pytest.approx(800.0, rel=0.02)
    assert peak["amplitude"] == pytest.approx(40.0, rel=0.02)
    assert sum(h["variance_fraction"] for h in harmonics[1:]) == pytest.approx(1.0, abs=1e-9)
    assert doc["verdict"].startswith("summaries use the red-noise")


@pytest.mark.parametrize("method", ["welch", "multitaper", "lomb-scargle"])
def test_density_methods_peak_at_the_sinusoid(capsys, survey, method):
    doc = run_json(capsys, "spectrum", survey, "--field", "depth_m", "--method", method, "--json")
    psd = doc["segments"][0]["psd"]
    key = "power" if method == "lomb-scargle" else "psd"
    peak = max(psd, key=lambda row: row[key] if row["wavenumber_per_km"] > 0 else -1)
    # the same 5 km sinusoid peaks at 0.2 cycles/km whatever the method (pitfalls S3)
    assert peak["wavenumber_per_km"] == pytest.approx(1e3 / WAVELENGTH, rel=0.08)
    if method != "lomb-scargle":
        assert {"lower", "upper"} <= set(psd[0])


def test_out_writes_tables_and_a_decodable_figure(tmp_path, capsys, survey):
    from matplotlib.image import imread

    out = tmp_path / "spec"
    assert main(["spectrum", survey, "--field", "depth_m", "--method", "multitaper",
                 "--out", str(out), "--quiet"]) == 0
    for name in ("spectra.csv", "harmonics.csv", "psd.csv", "spectrum.json"):
        assert (out / name).stat().st_size > 0
    image = imread(out / "spectrum_S1_1.png")
    assert image.shape[0] > 300 and image.shape[1] > 500


def test_unknown_field_is_one_line(capsys, survey):
    assert main(["spectrum", survey, "--field", "gravity"]) == 2
    err = capsys.readouterr().err
    assert err.count("profiles: error:") == 1 and "depth_m" in err
