"""Checks of the demo survey (demo_data/) against outside references.

The data are read here with the csv module, numpy and pyproj.Geod only, never with the
profiles reader, so that these checks do not depend on the code they will later test.

Sources named beside the checks:
- pyproj.Geod on WGS84 (Karney 2013 geodesic algorithms) for along-track distance and azimuth.
- references.md section 9: apparent wavelength on an oblique profile, lambda / |cos theta|,
  i.e. L / |sin(t - s)| with t the line azimuth and s the strike.
- references.md section 7: uncompensated admittance Z(k) = 2 pi G drho exp(-|k| d), the linear
  term of Parker (1972) (series form from memory) and Watts (2001, ch. 5; equation number from
  memory); G = 6.67430e-11 m^3 kg^-1 s^-2 from CODATA 2018.
- references.md section 8: alias wavenumber k_a = |k - n / dx|, n = round(k dx) (Shannon 1949).
"""

from __future__ import annotations

import csv
import importlib
import itertools
import math
import re
import sys
from datetime import datetime
from pathlib import Path

import numpy as np
import pytest
from pyproj import Geod

DEMO = Path(__file__).resolve().parents[1] / "demo_data"
OUTPUTS = ("survey.csv", "survey.toml", "README.md")
HEADER = ["line", "time", "lon", "lat", "depth_m", "gravity_mgal", "magnetic_nt"]
FIELDS = ("depth_m", "gravity_mgal", "magnetic_nt")
GEOD = Geod(ellps="WGS84")
# CODATA 2018 value of the Newtonian constant of gravitation (m^3 kg^-1 s^-2).
G_CODATA_2018 = 6.67430e-11


@pytest.fixture(scope="module")
def make_demo():
    """The generator, profiles.demo_survey (demo_data/make_demo.py only calls it)."""
    import profiles.demo_survey as module

    return module


@pytest.fixture(scope="module")
def generated(make_demo, tmp_path_factory):
    return make_demo.write_demo(tmp_path_factory.mktemp("demo"))


@pytest.fixture(scope="module")
def readme() -> str:
    return (DEMO / "README.md").read_text(encoding="utf-8")


def _table(text: str, first_cells: str) -> list[dict[str, str]]:
    """Rows of the Markdown table whose header starts with `first_cells` (e.g. '| line | leg')."""
    lines = text.splitlines()
    start = next(i for i, line in enumerate(lines) if line.startswith(first_cells))
    names = [cell.strip() for cell in lines[start].strip("|").split("|")]
    rows = []
    for line in lines[start + 2 :]:
        if not line.startswith("|"):
            break
        rows.append(dict(zip(names, (c.strip() for c in line.strip("|").split("|")), strict=True)))
    return rows


def _classify(row: list[str], previous: list[str] | None) -> str:
    """Status of one data row by the rules the README states (written independently here)."""
    record = dict(zip(HEADER, row, strict=True))
    if record["lon"] == "" or record["lat"] == "":
        return "dropped"
    try:
        lon, lat = float(record["lon"]), float(record["lat"])
        for name in FIELDS:
            float(record[name])
    except ValueError:
        return "dropped"
    if not (-90.0 <= lat <= 90.0 and -180.0 <= lon <= 180.0):
        return "dropped"
    if row == previous:
        return "merged"
    return "used"


@pytest.fixture(scope="module")
def survey() -> dict:
    """Committed survey.csv: header, per-row status, and the used stations of each line."""
    with open(DEMO / "survey.csv", newline="", encoding="utf-8") as handle:
        rows = list(csv.reader(handle))
    statuses, stations, previous = [], {}, None
    for number, row in enumerate(rows[1:], start=2):
        status = _classify(row, previous)
        statuses.append((number, row[0], status))
        if status == "used":
            stations.setdefault(row[0], []).append(row)
        previous = row
    lines = {}
    for name, good in stations.items():
        table = np.array([[float(v) for v in row[2:]] for row in good])
        lon, lat = table[:, 0], table[:, 1]
        _, _, step = GEOD.inv(lon[:-1], lat[:-1], lon[1:], lat[1:])
        lines[name] = {
            "time": [row[1] for row in good],
            "lon": lon,
            "lat": lat,
            "distance": np.concatenate([[0.0], np.cumsum(step)]),
            "depth": table[:, 2],
            "gravity": table[:, 3],
            "magnetic": table[:, 4],
        }
    return {"header": rows[0], "statuses": statuses, "lines": lines}


def _leg(survey: dict, leg: dict) -> dict:
    """Stations of one README leg (from_km..to_km along track)."""
    line = survey["lines"][leg["line"]]
    lo, hi = float(leg["from_km"]) * 1e3 - 1.0, float(leg["to_km"]) * 1e3 + 1.0
    inside = (line["distance"] >= lo) & (line["distance"] <= hi)
    return {key: value[inside] for key, value in line.items() if key != "time"}


def _sinusoid_fit(distance, values, wavelength, trend_order):
    """Least-squares complex amplitude c = a - i b of a cos(2 pi s / wl) + b sin(...) + poly.

    Returns (c, residual standard deviation). Works on irregular stations directly.
    """
    phase = 2.0 * np.pi * distance / wavelength
    scaled = (distance - distance.mean()) / np.ptp(distance)
    columns = [np.cos(phase), np.sin(phase)] + [scaled**p for p in range(trend_order + 1)]
    design = np.column_stack(columns)
    coef, *_ = np.linalg.lstsq(design, values, rcond=None)
    residual = values - design @ coef
    return complex(coef[0], -coef[1]), float(np.std(residual))


# --- determinism and size ------------------------------------------------------------------


def test_generator_reproduces_committed_files(generated):
    assert set(generated) == {"survey", "config", "readme"}
    for path in generated.values():
        assert path.read_bytes() == (DEMO / path.name).read_bytes(), path.name


def test_total_size_under_5_mb():
    total = sum((DEMO / name).stat().st_size for name in OUTPUTS)
    assert total < 5_000_000


def test_import_has_no_side_effects(tmp_path, monkeypatch):
    # Importing the module must not write anything (the demo command imports it).
    monkeypatch.chdir(tmp_path)
    sys.modules.pop("profiles.demo_survey", None)
    module = importlib.import_module("profiles.demo_survey")
    assert list(tmp_path.iterdir()) == []
    assert callable(module.write_demo)


# --- format and bad rows --------------------------------------------------------------------


def test_header_and_time_format(survey):
    assert survey["header"] == HEADER
    for name, line in survey["lines"].items():
        times = [datetime.strptime(text, "%Y-%m-%dT%H:%M:%S%z") for text in line["time"]]
        assert all(text.endswith("Z") for text in line["time"]), name
        assert all(b > a for a, b in itertools.pairwise(times)), name


def test_bad_rows_match_readme(survey, readme):
    found = [(n, line, s) for n, line, s in survey["statuses"] if s != "used"]
    stated = [
        (int(r["file_line"]), r["line"], r["expected handling"])
        for r in _table(readme, "| file_line |")
    ]
    assert found == stated
    kinds = {s for *_, s in found}
    assert kinds == {"dropped", "merged"}


def test_row_accounting_matches_readme(survey, readme):
    (stated,) = _table(readme, "| data_rows |")
    statuses = [s for *_, s in survey["statuses"]]
    assert len(statuses) == int(stated["data_rows"])
    assert statuses.count("used") == int(stated["used"])
    assert statuses.count("merged") == int(stated["merged"])
    assert statuses.count("dropped") == int(stated["dropped"])


# --- geometry -------------------------------------------------------------------------------


def test_legs_lengths_and_azimuths_match_readme(survey, readme):
    legs = _table(readme, "| line | leg |")
    assert len({leg["line"] for leg in legs}) >= 6
    azimuths = [float(leg["azimuth_mid_deg"]) for leg in legs]
    assert max(azimuths) - min(azimuths) >= 120.0
    for leg in legs:
        stations = _leg(survey, leg)
        distance = stations["distance"]
        assert distance.size == int(leg["stations"]), leg["line"]
        assert abs(distance[-1] / 1e3 - float(leg["to_km"])) < 0.002  # 6-decimal lon/lat
        assert 100.0 <= survey["lines"][leg["line"]]["distance"][-1] / 1e3 <= 200.0
        # Mid-leg azimuth: mean of the forward azimuth at a station 5 km before the middle
        # and the reversed back azimuth at one 5 km after it (pyproj.Geod.inv).
        middle = 0.5 * (distance[0] + distance[-1])
        i = int(np.searchsorted(distance, middle - 5000.0))
        j = int(np.searchsorted(distance, middle + 5000.0))
        forward, back, _ = GEOD.inv(
            stations["lon"][i], stations["lat"][i], stations["lon"][j], stations["lat"][j]
        )
        azimuth = (
            math.degrees(
                math.atan2(
                    math.sin(math.radians(forward)) + math.sin(math.radians(back + 180.0)),
                    math.cos(math.radians(forward)) + math.cos(math.radians(back + 180.0)),
                )
            )
            % 360.0
        )
        assert abs((azimuth - float(leg["azimuth_mid_deg"]) + 180.0) % 360.0 - 180.0) < 0.01
        # references.md section 9: L / |sin(t - s)| from the stated azimuth and strike.
        angle = math.radians(float(leg["azimuth_mid_deg"]) - float(leg["strike_mid_deg"]))
        assert float(leg["fabric_apparent_km"]) == pytest.approx(
            10.0 / abs(math.sin(angle)), rel=2e-4
        )
        assert float(leg["magnetic_apparent_km"]) == pytest.approx(
            22.0 / abs(math.sin(angle)), rel=2e-4
        )
        assert float(leg["fabric_apparent_fit_km"]) == pytest.approx(
            float(leg["fabric_apparent_km"]), rel=1e-3
        )


def test_readme_constants_match_generator(make_demo, readme):
    assert make_demo.FABRIC_WAVELENGTH_M == 10_000.0
    assert make_demo.MAGNETIC_WAVELENGTH_M == 22_000.0
    assert make_demo.MEAN_DEPTH_M == 4000.0
    assert make_demo.DENSITY_CONTRAST_KG_M3 == 1670.0
    assert make_demo.GRAVITATIONAL_CONSTANT == G_CODATA_2018
    assert "| fabric wavelength L (true, 2-D) | 10.0 km |" in readme
    assert "| stripe wavelength L_mag (true) | 22.0 km |" in readme
    assert "| mean water depth D0 | 4000 m" in readme


def test_irregularities_as_stated(survey, readme):
    # Gap on L03 (README: "a gap of X km").
    stated_gap = float(re.search(r"a gap of ([\d.]+) km", readme).group(1))
    steps = np.diff(survey["lines"]["L03"]["distance"])
    assert steps.max() / 1e3 == pytest.approx(stated_gap, abs=0.002)
    assert 6.0 < stated_gap < 10.0
    # Dog-leg on L04: the two legs differ in azimuth by the stated turn (pyproj.Geod.inv).
    legs = [leg for leg in _table(readme, "| line | leg |") if leg["line"] == "L04"]
    assert len(legs) == 2
    turn = float(legs[1]["azimuth_mid_deg"]) - float(legs[0]["azimuth_mid_deg"])
    assert 70.0 < turn < 90.0
    # Coarse stretch on L08: spacing above half the apparent fabric wavelength (aliased).
    count = int(re.search(r"keeps only (\d+) stations", readme).group(1))
    alias_km = float(re.search(r"aliased\s+to about ([\d.]+) km", readme).group(1))
    l08 = survey["lines"]["L08"]
    wide = np.flatnonzero(np.diff(l08["distance"]) > 2000.0)
    assert wide.size == count - 1
    spacing = float(np.mean(np.diff(l08["distance"])[wide]))
    (leg,) = [leg for leg in _table(readme, "| line | leg |") if leg["line"] == "L08"]
    apparent = float(leg["fabric_apparent_fit_km"]) * 1e3
    assert spacing > apparent / 2.0
    assert np.diff(l08["distance"])[wide].sum() > 35_000.0
    # references.md section 8: k_a = |k - n/dx|, n = round(k dx).
    k = 1.0 / apparent
    k_alias = abs(k - round(k * spacing) / spacing)
    assert 1.0 / k_alias / 1e3 == pytest.approx(alias_km, abs=0.02)


# --- spectra --------------------------------------------------------------------------------


def _clean_legs(readme):
    return [leg for leg in _table(readme, "| line | leg |") if leg["features"] == "clean"]


@pytest.mark.parametrize(
    ("field", "column"), [("depth", "fabric_apparent_fit_km"), ("magnetic", "magnetic_apparent_km")]
)
def test_periodogram_peak_at_apparent_wavelength(survey, readme, field, column):
    legs = _clean_legs(readme)
    assert len(legs) >= 3
    spacing = 250.0
    for leg in legs:
        stations = _leg(survey, leg)
        distance = stations["distance"] - stations["distance"][0]
        grid = np.arange(0.0, distance[-1], spacing)
        values = np.interp(grid, distance, stations[field])
        values = values - np.polyval(np.polyfit(grid, values, 1), grid)
        power = np.abs(np.fft.rfft(values)) ** 2
        wavenumber = np.fft.rfftfreq(grid.size, d=spacing)
        peak = wavenumber[1 + int(np.argmax(power[1:]))]
        expected = 1.0 / (float(leg[column]) * 1e3)
        # Within one harmonic spacing 1/(N dx) of the stated apparent wavenumber.
        assert abs(peak - expected) <= 1.0 / (grid.size * spacing), (leg["line"], field)


def test_fitted_amplitudes_and_noise(survey, readme):
    # Least-squares sinusoids at the stated apparent wavelengths recover the stated
    # amplitudes (200 m, 150 nT) and the residuals the stated noise (10 m, 5 nT).
    for leg in _clean_legs(readme):
        stations = _leg(survey, leg)
        distance = stations["distance"]
        c_depth, noise_depth = _sinusoid_fit(
            distance, stations["depth"], float(leg["fabric_apparent_fit_km"]) * 1e3, 1
        )
        c_mag, noise_mag = _sinusoid_fit(
            distance, stations["magnetic"], float(leg["magnetic_apparent_km"]) * 1e3, 1
        )
        assert abs(c_depth) == pytest.approx(200.0, rel=0.03), leg["line"]
        assert abs(c_mag) == pytest.approx(150.0, rel=0.03), leg["line"]
        assert noise_depth == pytest.approx(10.0, rel=0.15), leg["line"]
        assert noise_mag == pytest.approx(5.0, rel=0.15), leg["line"]


def test_gravity_admittance_at_fabric_wavenumber(survey, readme):
    # references.md section 7: 2 pi G drho for drho = 1670 kg/m^3 is 0.07003 mGal/m.
    two_pi_g_drho = 2.0 * math.pi * G_CODATA_2018 * 1670.0 * 1e5
    assert two_pi_g_drho == pytest.approx(0.07003, abs=1e-5)
    expected = two_pi_g_drho * math.exp(-2.0 * math.pi * 4000.0 / 10_000.0)
    # Near-perpendicular legs far from the seamount. A least-squares fit at a known wavenumber
    # needs no even spacing, so L08 is used whole, its coarse stretch included.
    numerator = denominator = 0.0
    for name in ("L05", "L06", "L08"):
        (leg,) = [leg for leg in _table(readme, "| line | leg |") if leg["line"] == name]
        stations = _leg(survey, leg)
        distance = stations["distance"]
        elevation = 4000.0 - stations["depth"]  # up positive, relative to the mean depth
        wavelength = float(leg["fabric_apparent_fit_km"]) * 1e3
        c_elev, _ = _sinusoid_fit(distance, elevation, wavelength, 1)
        # A cubic absorbs the smooth far field of the seamount (more than 28 km away).
        c_grav, noise = _sinusoid_fit(distance, stations["gravity"], wavelength, 3)
        ratio = c_grav / c_elev
        assert abs(ratio) == pytest.approx(expected, rel=0.10), name
        assert abs(math.degrees(np.angle(ratio))) < 8.0, name
        assert noise == pytest.approx(0.5, rel=0.15), name
        numerator += c_grav * np.conj(c_elev)
        denominator += abs(c_elev) ** 2
    combined = numerator / denominator
    assert abs(combined) == pytest.approx(expected, rel=0.03)
    assert abs(math.degrees(np.angle(combined))) < 4.0
    assert f"{expected:.6e}" in readme


def test_gravity_anticorrelates_with_depth_over_the_seamount(survey):
    # Linear uncompensated response: gravity rises where the seafloor rises (depth falls).
    for name in ("L02", "L07"):
        line = survey["lines"][name]
        assert np.corrcoef(line["depth"], line["gravity"])[0, 1] < -0.8, name
        assert line["depth"].min() < 2800.0, name
