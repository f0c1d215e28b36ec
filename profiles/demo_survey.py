"""Generate the ``profiles`` demo survey, a synthetic marine survey with known true values.

Scenario (invented): cruise MQ26-03 of the research vessel *Maren Quillet* over the western
flank of the Tolvane Ridge, at the edge of the Vethra Basin, open South Pacific deep ocean
near 35.8 S, 118.6 W. Eight ship lines cross a lineated abyssal-hill fabric, one seamount
(Caldre Knoll) and magnetic stripes. Every value below is invented; the README written next
to the data states each true value so that the demo doubles as a check of the tool.

Run ``python demo_data/make_demo.py`` (rewrites demo_data/), ``profiles demo --out DIR``, or
call :func:`write_demo` from Python. The output is deterministic (fixed seed). Nothing happens at
import time. Run-time dependencies: numpy, scipy and pyproj (all dependencies of ``profiles``).

Models (positions on a local azimuthal-equidistant plane centred on the survey, east ``e``
and north ``n`` in metres; ``u = e sin(a) + n cos(a)`` is the distance along the fabric's
normal, azimuth ``a = strike + 90``):

- Seafloor elevation relative to the mean depth ``D0``:
  ``h(e, n) = A cos(2 pi u / L + phi) + H exp(-r^2 / R^2)``, r the distance from the seamount
  centre. Depth (positive down) ``depth = D0 - h + noise``.
- Free-air gravity: the linear (first) term of Parker (1972), the uncompensated admittance
  ``Z(k) = 2 pi G drho exp(-|k| D0)`` (|k| in rad/m, Watts 2001, ch. 5), applied by FFT to
  ``h`` on a padded, edge-tapered 2-D grid, then interpolated (cubic) to the stations;
  plus white noise.
- Magnetic anomaly at sea level: ``M cos(2 pi u / L_mag + phi_mag)`` plus white noise.

A profile at azimuth ``t`` crosses a fabric striking ``s`` at apparent wavelength
``L / |sin(t - s)|`` (projection of the wavevector onto the track).
"""

from __future__ import annotations

import argparse
import math
import os
import textwrap
from dataclasses import dataclass
from datetime import UTC, datetime, timedelta
from pathlib import Path

import numpy as np

# ---------------------------------------------------------------------------------------------
# Scenario (invented names)
CRUISE_ID = "MQ26-03"
VESSEL = "RV Maren Quillet"
AREA = "western flank of the Tolvane Ridge, Vethra Basin"
SEAMOUNT_NAME = "Caldre Knoll"
SEED = 20260304

# Local plane: azimuthal equidistant on WGS84, centred here (degrees).
CENTRE_LON_DEG = -118.60
CENTRE_LAT_DEG = -35.80
ELLIPSOID = "WGS84"

# Bathymetry
MEAN_DEPTH_M = 4000.0
FABRIC_WAVELENGTH_M = 10_000.0
FABRIC_STRIKE_DEG = 20.0  # crests strike 020 (and 200)
FABRIC_AMPLITUDE_M = 200.0
FABRIC_PHASE_DEG = 30.0
SEAMOUNT_EAST_M = 25_000.0
SEAMOUNT_NORTH_M = 30_000.0
SEAMOUNT_HEIGHT_M = 1500.0
SEAMOUNT_RADIUS_M = 6000.0  # e-folding radius R in H exp(-r^2/R^2)
DEPTH_NOISE_M = 10.0

# Gravity
GRAVITATIONAL_CONSTANT = 6.67430e-11  # m^3 kg^-1 s^-2, CODATA 2018
CRUST_DENSITY_KG_M3 = 2700.0
WATER_DENSITY_KG_M3 = 1030.0
DENSITY_CONTRAST_KG_M3 = CRUST_DENSITY_KG_M3 - WATER_DENSITY_KG_M3  # 1670
GRAVITY_NOISE_MGAL = 0.5
GRID_SPACING_M = 200.0
GRID_SIZE = 2048  # samples per side: 409.6 km
TAPER_INNER_M = 150_000.0  # relief untouched within |e|, |n| <= this
TAPER_OUTER_M = 195_000.0  # relief tapered (cosine) to zero here
INTERPOLATION_HALF_WIDTH_M = 125_000.0  # cubic interpolation from the grid within +-125 km

# Magnetics
MAGNETIC_WAVELENGTH_M = 22_000.0
MAGNETIC_AMPLITUDE_NT = 150.0
MAGNETIC_PHASE_DEG = -50.0
MAGNETIC_NOISE_NT = 5.0

# Ship and logging
SPEED_KNOTS = 10.0
KNOT_M_S = 1852.0 / 3600.0
LOG_INTERVAL_S = 50
LOG_JITTER_S = 3  # integer jitter, uniform in [-3, 3] s
SPEED_VARIATION = (0.12, 9000.0, 0.05, 2500.0)  # (fraction, period s) twice
SPEED_JITTER = 0.03  # relative, per station step
SURVEY_START = datetime(2026, 3, 4, 5, 6, 7, tzinfo=UTC)
TRANSIT_S = 3 * 3600 + 17 * 60

# Irregularities
GAP = {"line": "L03", "start_m": 60_000.0, "end_m": 68_000.0}
DOGLEG = {"line": "L04", "turn_m": 90_000.0, "turn_deg": 80.0}
COARSE = {"line": "L08", "start_m": 100_000.0, "end_m": 140_000.0, "intervals": 7}

CSV_NAME = "survey.csv"
CONFIG_NAME = "survey.toml"
README_NAME = "README.md"
COLUMNS = ("line", "time", "lon", "lat", "depth_m", "gravity_mgal", "magnetic_nt")


@dataclass(frozen=True)
class LinePlan:
    """One ship line: it passes the plane point (anchor_east_m, anchor_north_m) at along-track
    distance anchor_distance_m heading azimuth_deg (degrees clockwise from true north)."""

    name: str
    azimuth_deg: float
    length_m: float
    anchor_east_m: float
    anchor_north_m: float
    anchor_distance_m: float


LINES = (
    LinePlan("L01", 0.0, 160_000.0, -40_000.0, 0.0, 80_000.0),
    LinePlan("L02", 25.0, 150_000.0, SEAMOUNT_EAST_M, SEAMOUNT_NORTH_M, 90_000.0),
    LinePlan("L03", 50.0, 170_000.0, -20_000.0, 40_000.0, 85_000.0),
    LinePlan("L04", 75.0, 150_000.0, -95_000.0, 10_000.0, 0.0),
    LinePlan("L05", 100.0, 180_000.0, 0.0, -30_000.0, 90_000.0),
    LinePlan("L06", 130.0, 170_000.0, -10_000.0, -10_000.0, 85_000.0),
    LinePlan("L07", 155.0, 160_000.0, SEAMOUNT_EAST_M, SEAMOUNT_NORTH_M, 60_000.0),
    LinePlan("L08", 112.0, 180_000.0, 0.0, 5_000.0, 90_000.0),
)

# Bad rows inserted after station number `after` (0-based, in the clean line) of `line`.
BAD_ROWS = (
    {"line": "L01", "after": 120, "kind": "missing_lat"},
    {"line": "L03", "after": 200, "kind": "non_numeric"},
    {"line": "L04", "after": 250, "kind": "duplicate"},
    {"line": "L06", "after": 300, "kind": "missing_lon"},
    {"line": "L07", "after": 400, "kind": "lat_out_of_range"},
)
HANDLING = {
    "missing_lat": ("dropped", "missing coordinate (empty lat)"),
    "missing_lon": ("dropped", "missing coordinate (empty lon)"),
    "non_numeric": ("dropped", "non-numeric value ('err' in gravity_mgal)"),
    "lat_out_of_range": ("dropped", "latitude out of range (-135.9...)"),
    "duplicate": ("merged", "duplicate station (exact repeat of the previous row)"),
}


# ---------------------------------------------------------------------------------------------
# Models


def two_pi_g_drho() -> float:
    """Bouguer-slab factor 2 pi G drho in mGal per metre of relief (1 mGal = 1e-5 m s^-2)."""
    return 2.0 * math.pi * GRAVITATIONAL_CONSTANT * DENSITY_CONTRAST_KG_M3 * 1e5


def admittance_mgal_per_m(wavelength_m: float) -> float:
    """Uncompensated admittance Z = 2 pi G drho exp(-2 pi D0 / L) in mGal/m.

    Linear term of Parker (1972); Watts (2001, ch. 5). L is the true 2-D wavelength.
    """
    return two_pi_g_drho() * math.exp(-2.0 * math.pi * MEAN_DEPTH_M / wavelength_m)


def fabric_normal_distance(east: np.ndarray, north: np.ndarray) -> np.ndarray:
    """Distance u (m) along the fabric normal, azimuth strike + 90 deg, on the local plane."""
    normal = math.radians(FABRIC_STRIKE_DEG + 90.0)
    return east * math.sin(normal) + north * math.cos(normal)


def relief_m(east: np.ndarray, north: np.ndarray) -> np.ndarray:
    """True seafloor elevation above the mean depth (m, up positive), noise-free.

    h = A cos(2 pi u / L + phi) + H exp(-((e - e_s)^2 + (n - n_s)^2) / R^2)
    """
    phase = 2.0 * math.pi * fabric_normal_distance(east, north) / FABRIC_WAVELENGTH_M
    fabric = FABRIC_AMPLITUDE_M * np.cos(phase + math.radians(FABRIC_PHASE_DEG))
    r2 = (east - SEAMOUNT_EAST_M) ** 2 + (north - SEAMOUNT_NORTH_M) ** 2
    return fabric + SEAMOUNT_HEIGHT_M * np.exp(-r2 / SEAMOUNT_RADIUS_M**2)


def magnetic_nt(east: np.ndarray, north: np.ndarray) -> np.ndarray:
    """Noise-free magnetic anomaly at sea level, M cos(2 pi u / L_mag + phi_mag), in nT."""
    phase = 2.0 * math.pi * fabric_normal_distance(east, north) / MAGNETIC_WAVELENGTH_M
    return MAGNETIC_AMPLITUDE_NT * np.cos(phase + math.radians(MAGNETIC_PHASE_DEG))


def grid_axis_m() -> np.ndarray:
    """Grid node coordinates (m) along either axis, centred on the survey."""
    return (np.arange(GRID_SIZE) - GRID_SIZE // 2) * GRID_SPACING_M


def edge_taper(coordinate: np.ndarray) -> np.ndarray:
    """1 within TAPER_INNER_M, cosine roll-off to 0 at TAPER_OUTER_M and beyond."""
    span = TAPER_OUTER_M - TAPER_INNER_M
    ramp = np.clip((np.abs(coordinate) - TAPER_INNER_M) / span, 0.0, 1.0)
    return 0.5 * (1.0 + np.cos(math.pi * ramp))


def gravity_grid_mgal() -> np.ndarray:
    """Free-air anomaly (mGal) on the grid: irfft2( Z(|k|) * rfft2(h * taper) ).

    Z(|k|) = 2 pi G drho exp(-|k| D0), |k| = 2 pi sqrt(kx^2 + ky^2) with kx, ky in cycles/m
    (Parker 1972, linear term). The grid spans 409.6 km; the survey lies within +-110 km and
    the relief is tapered to zero between 150 and 195 km, so wrap-around does not reach it.
    Indexing: [north, east].
    """
    axis = grid_axis_m()
    north, east = np.meshgrid(axis, axis, indexing="ij")
    taper = edge_taper(axis)
    relief = relief_m(east, north) * taper[:, None] * taper[None, :]
    ky = np.fft.fftfreq(GRID_SIZE, d=GRID_SPACING_M)
    kx = np.fft.rfftfreq(GRID_SIZE, d=GRID_SPACING_M)
    k_angular = 2.0 * math.pi * np.hypot(ky[:, None], kx[None, :])
    response = two_pi_g_drho() * np.exp(-k_angular * MEAN_DEPTH_M)
    return np.fft.irfft2(np.fft.rfft2(relief) * response, s=relief.shape)


# ---------------------------------------------------------------------------------------------
# Geometry


def _plane_transformers():
    """(forward, inverse) pyproj transformers between lon/lat and the local plane (m)."""
    from pyproj import Transformer

    plane = (
        f"+proj=aeqd +lat_0={CENTRE_LAT_DEG} +lon_0={CENTRE_LON_DEG}"
        f" +ellps={ELLIPSOID} +units=m +no_defs"
    )
    forward = Transformer.from_crs("EPSG:4326", plane, always_xy=True)
    inverse = Transformer.from_crs(plane, "EPSG:4326", always_xy=True)
    return forward, inverse


def _station_times_and_distances(
    rng: np.random.Generator, length_m: float
) -> tuple[np.ndarray, np.ndarray]:
    """Seconds since line start and geodesic along-track distance (m) of every logged station.

    Logging every 50 s +- 3 s (integer seconds). Speed
    v(tau) = v0 (1 + a1 sin(2 pi tau / T1 + p1) + a2 sin(2 pi tau / T2 + p2)) (1 + e),
    e ~ N(0, 0.03) per step, so spacing varies between about 190 and 335 m.
    """
    a1, period1, a2, period2 = SPEED_VARIATION
    p1, p2 = rng.uniform(0.0, 2.0 * math.pi, size=2)
    mean_step = SPEED_KNOTS * KNOT_M_S * LOG_INTERVAL_S
    count = int(length_m / mean_step * 1.4) + 10
    steps_s = LOG_INTERVAL_S + rng.integers(-LOG_JITTER_S, LOG_JITTER_S + 1, size=count)
    seconds = np.concatenate([[0], np.cumsum(steps_s)])
    middle = 0.5 * (seconds[1:] + seconds[:-1])
    speed = (
        SPEED_KNOTS
        * KNOT_M_S
        * (
            1.0
            + a1 * np.sin(2.0 * math.pi * middle / period1 + p1)
            + a2 * np.sin(2.0 * math.pi * middle / period2 + p2)
        )
    )
    speed = speed * (1.0 + SPEED_JITTER * rng.standard_normal(count))
    distance = np.concatenate([[0.0], np.cumsum(speed * steps_s)])
    keep = distance <= length_m
    return seconds[keep], distance[keep]


def _thin(plan: LinePlan, distance: np.ndarray) -> np.ndarray:
    """Boolean mask of the stations kept after the gap and the coarse stretch."""
    keep = np.ones(distance.size, dtype=bool)
    if plan.name == GAP["line"]:
        keep &= ~((distance >= GAP["start_m"]) & (distance < GAP["end_m"]))
    if plan.name == COARSE["line"]:
        inside = (distance >= COARSE["start_m"]) & (distance <= COARSE["end_m"])
        keep &= ~inside
        targets = np.linspace(COARSE["start_m"], COARSE["end_m"], COARSE["intervals"] + 1)
        for target in targets:
            keep[int(np.argmin(np.abs(distance - target)))] = True
    return keep


def _positions(plan: LinePlan, distance: np.ndarray, geod, inverse) -> dict:
    """Station lon/lat (deg) along geodesic legs from the line start, with Geod.fwd."""
    anchor_lon, anchor_lat = inverse.transform(plan.anchor_east_m, plan.anchor_north_m)
    if plan.anchor_distance_m > 0.0:
        start_lon, start_lat, start_az = geod.fwd(
            anchor_lon, anchor_lat, plan.azimuth_deg + 180.0, plan.anchor_distance_m
        )
    else:
        start_lon, start_lat, start_az = anchor_lon, anchor_lat, plan.azimuth_deg
    ones = np.ones_like(distance)
    if plan.name != DOGLEG["line"]:
        lon, lat, _ = geod.fwd(start_lon * ones, start_lat * ones, start_az * ones, distance)
        return {"lon": lon, "lat": lat, "legs": [(start_lon, start_lat, start_az, 0.0)]}
    turn_m = DOGLEG["turn_m"]
    turn_lon, turn_lat, back_az = geod.fwd(start_lon, start_lat, start_az, turn_m)
    leg2_az = (back_az + 180.0 + DOGLEG["turn_deg"]) % 360.0
    first = distance <= turn_m
    lon = np.empty_like(distance)
    lat = np.empty_like(distance)
    lon[first], lat[first], _ = geod.fwd(
        start_lon * ones[first], start_lat * ones[first], start_az * ones[first], distance[first]
    )
    rest = ~first
    lon[rest], lat[rest], _ = geod.fwd(
        turn_lon * ones[rest], turn_lat * ones[rest], leg2_az * ones[rest], distance[rest] - turn_m
    )
    legs = [(start_lon, start_lat, start_az, 0.0), (turn_lon, turn_lat, leg2_az, turn_m)]
    return {"lon": lon, "lat": lat, "legs": legs}


def local_strike_deg(geod, forward, inverse, lon: float, lat: float) -> float:
    """True azimuth (deg) of the fabric crests at (lon, lat).

    The fabric is straight on the local plane, striking FABRIC_STRIKE_DEG from the plane's
    grid north; away from the centre grid north and true north differ by the meridian
    convergence. Measured with Geod.inv towards a point 1 km along the crest on the plane.
    """
    east, north = forward.transform(lon, lat)
    strike = math.radians(FABRIC_STRIKE_DEG)
    lon2, lat2 = inverse.transform(
        east + 1000.0 * math.sin(strike), north + 1000.0 * math.cos(strike)
    )
    return float(geod.inv(lon, lat, lon2, lat2)[0]) % 360.0


def _leg_summary(geod, forward, inverse, legs, leg_index, path, distance, east, north) -> dict:
    """Geometry and expected apparent wavelengths of one straight (geodesic) leg.

    Apparent wavelength L / |sin(t - s)|, t the leg's geodesic azimuth at its mid-distance and
    s the local true strike there; also L / |du/ds| fitted to the stations (what the data hold).
    `path` is the distance along the ship's path (through the turn vertex), `distance` the
    cumulative station-to-station geodesic distance that a reader computes from the file.
    """
    start_lon, start_lat, start_az, start_m = legs[leg_index]
    half = 0.5 * (path[-1] - start_m)
    mid_lon, mid_lat, back_az = geod.fwd(start_lon, start_lat, start_az, half)
    azimuth_mid = (back_az + 180.0) % 360.0
    strike_mid = local_strike_deg(geod, forward, inverse, mid_lon, mid_lat)
    angle = math.radians(azimuth_mid - strike_mid)
    # Observed rate du/ds of the fabric phase along the track, least squares on the stations.
    slope = np.polyfit(distance, fabric_normal_distance(east, north), 1)[0]
    spacing = np.diff(distance)
    return {
        "start_m": float(distance[0]),
        "end_m": float(distance[-1]),
        "stations": int(distance.size),
        "azimuth_start_deg": float(start_az % 360.0),
        "azimuth_mid_deg": float(azimuth_mid),
        "strike_mid_deg": strike_mid,
        "mid_lon": float(mid_lon),
        "mid_lat": float(mid_lat),
        "fabric_apparent_m": FABRIC_WAVELENGTH_M / abs(math.sin(angle)),
        "fabric_apparent_data_m": FABRIC_WAVELENGTH_M / abs(float(slope)),
        "magnetic_apparent_m": MAGNETIC_WAVELENGTH_M / abs(math.sin(angle)),
        "spacing_median_m": float(np.median(spacing)) if spacing.size else float("nan"),
    }


def build_survey() -> dict:
    """Compute every station and the true values; returns a dict (lines, rows, bad rows)."""
    from pyproj import Geod
    from scipy.interpolate import RegularGridInterpolator

    rng = np.random.default_rng(SEED)
    geod = Geod(ellps=ELLIPSOID)
    forward, inverse = _plane_transformers()
    axis = grid_axis_m()
    near = np.abs(axis) <= INTERPOLATION_HALF_WIDTH_M
    gravity_at = RegularGridInterpolator(
        (axis[near], axis[near]), gravity_grid_mgal()[np.ix_(near, near)], method="cubic"
    )
    line_start_s = 0
    lines = []
    for plan in LINES:
        seconds, path = _station_times_and_distances(rng, plan.length_m)
        keep = _thin(plan, path)
        seconds, path = seconds[keep], path[keep]
        where = _positions(plan, path, geod, inverse)
        lon, lat = where["lon"], where["lat"]
        _, _, steps = geod.inv(lon[:-1], lat[:-1], lon[1:], lat[1:])
        distance = np.concatenate([[0.0], np.cumsum(steps)])
        east, north = forward.transform(lon, lat)
        count = distance.size
        depth = MEAN_DEPTH_M - relief_m(east, north) + DEPTH_NOISE_M * rng.standard_normal(count)
        gravity = gravity_at(np.column_stack([north, east]))
        gravity = gravity + GRAVITY_NOISE_MGAL * rng.standard_normal(count)
        magnetic = magnetic_nt(east, north) + MAGNETIC_NOISE_NT * rng.standard_normal(count)
        legs = []
        for index, leg in enumerate(where["legs"]):
            upper = where["legs"][index + 1][3] if index + 1 < len(where["legs"]) else np.inf
            inside = (path >= leg[3]) & (path <= upper)
            legs.append(
                _leg_summary(
                    geod,
                    forward,
                    inverse,
                    where["legs"],
                    index,
                    path[inside],
                    distance[inside],
                    east[inside],
                    north[inside],
                )
            )
        seamount_m = np.hypot(east - SEAMOUNT_EAST_M, north - SEAMOUNT_NORTH_M)
        lines.append(
            {
                "plan": plan,
                "seconds": line_start_s + seconds,
                "distance": distance,
                "path": path,
                "lon": where["lon"],
                "lat": where["lat"],
                "east": east,
                "north": north,
                "depth": depth,
                "gravity": gravity,
                "magnetic": magnetic,
                "legs": legs,
                "seamount_closest_m": float(seamount_m.min()),
                "seamount_closest_at_m": float(distance[int(np.argmin(seamount_m))]),
            }
        )
        line_start_s += int(seconds[-1]) + TRANSIT_S
    rows, bad = _csv_rows(lines)
    summit = {
        "depth_m": float(MEAN_DEPTH_M - relief_m(SEAMOUNT_EAST_M, SEAMOUNT_NORTH_M)),
        "gravity_mgal": float(gravity_at([SEAMOUNT_NORTH_M, SEAMOUNT_EAST_M])[0]),
    }
    return {"lines": lines, "rows": rows, "bad_rows": bad, "summit": summit}


# ---------------------------------------------------------------------------------------------
# Output


def _time_text(seconds: float) -> str:
    return (SURVEY_START + timedelta(seconds=int(seconds))).strftime("%Y-%m-%dT%H:%M:%SZ")


def _row(name, seconds, lon, lat, depth, gravity, magnetic) -> list[str]:
    return [
        name,
        _time_text(seconds),
        f"{lon:.6f}",
        f"{lat:.6f}",
        f"{depth:.1f}",
        f"{gravity:.2f}",
        f"{magnetic:.1f}",
    ]


def _bad_row(kind: str, line: dict, index: int) -> list[str]:
    """A row inserted after station `index`: halfway to the next station, then spoiled."""
    this, after = index, index + 1
    seconds = line["seconds"][this] + (line["seconds"][after] - line["seconds"][this]) // 2
    values = [
        0.5 * (line[key][this] + line[key][after])
        for key in ("lon", "lat", "depth", "gravity", "magnetic")
    ]
    row = _row(line["plan"].name, seconds, *values)
    if kind == "duplicate":
        return _row(
            line["plan"].name,
            line["seconds"][this],
            *(line[key][this] for key in ("lon", "lat", "depth", "gravity", "magnetic")),
        )
    if kind == "missing_lat":
        row[3] = ""
    elif kind == "missing_lon":
        row[2] = ""
    elif kind == "non_numeric":
        row[5] = "err"
    elif kind == "lat_out_of_range":
        row[3] = "-1" + row[3].lstrip("-")
    else:
        raise ValueError(f"unknown bad-row kind {kind!r}")
    return row


def _csv_rows(lines: list[dict]) -> tuple[list[list[str]], list[dict]]:
    """All CSV rows (header first) and the inserted bad rows with their 1-based file lines.

    Also stores, in each line dict, the 1-based file line of every station ("file_line").
    """
    rows = [list(COLUMNS)]
    bad = []
    for line in lines:
        name = line["plan"].name
        spoil = {item["after"]: item["kind"] for item in BAD_ROWS if item["line"] == name}
        file_line = np.zeros(line["distance"].size, dtype=int)
        line["file_line"] = file_line
        for index in range(line["distance"].size):
            rows.append(
                _row(
                    name,
                    line["seconds"][index],
                    *(line[key][index] for key in ("lon", "lat", "depth", "gravity", "magnetic")),
                )
            )
            file_line[index] = len(rows)
            if index in spoil:
                kind = spoil[index]
                rows.append(_bad_row(kind, line, index))
                status, reason = HANDLING[kind]
                bad.append(
                    {
                        "file_line": len(rows),
                        "line": name,
                        "kind": kind,
                        "after_station": index,
                        "status": status,
                        "reason": reason,
                        "text": ",".join(rows[-1]),
                    }
                )
    return rows, bad


def row_accounting(rows: list[list[str]], bad_rows: list[dict]) -> dict:
    """Expected counts: data rows, used (distinct stations), merged and dropped rows."""
    data = len(rows) - 1
    merged = sum(item["status"] == "merged" for item in bad_rows)
    dropped = sum(item["status"] == "dropped" for item in bad_rows)
    return {
        "data_rows": data,
        "used": data - merged - dropped,
        "merged": merged,
        "dropped": dropped,
    }


def _station(line: dict, index: int) -> str:
    return f"{line['distance'][index] / 1e3:.3f} km (file line {line['file_line'][index]})"


def _wrap(*parts: str) -> str:
    """Join the parts into one paragraph wrapped at 96 characters (bullets indented)."""
    text = "".join(parts)
    indent = "  " if text.startswith("- ") else ""
    return textwrap.fill(
        text, width=96, subsequent_indent=indent, break_long_words=False, break_on_hyphens=False
    )


def alias_wavelength_m(wavelength_m: float, spacing_m: float) -> float:
    """Apparent wavelength of a sinusoid sampled at spacing dx: k_a = |k - n/dx|, n = round(k dx).

    references.md section 8 (Shannon 1949). Returns inf when the alias falls on zero.
    """
    wavenumber = 1.0 / wavelength_m
    alias = abs(wavenumber - round(wavenumber * spacing_m) / spacing_m)
    return math.inf if alias == 0.0 else 1.0 / alias


def _irregularities(lines: dict) -> dict:
    """Where the gap, the dog-leg, the coarse stretch and the seamount crossings are."""
    gap_line = lines[GAP["line"]]
    after = int(np.searchsorted(gap_line["distance"], GAP["start_m"])) - 1
    distance = lines[COARSE["line"]]["distance"]
    first = int(np.argmin(np.abs(distance - COARSE["start_m"])))
    last = int(np.argmin(np.abs(distance - COARSE["end_m"])))
    spacing = np.diff(distance[first : last + 1])
    dog_line = lines[DOGLEG["line"]]
    before = int(np.searchsorted(dog_line["path"], DOGLEG["turn_m"], side="right")) - 1
    return {
        "gap_after": after,
        "gap_m": float(gap_line["distance"][after + 1] - gap_line["distance"][after]),
        "coarse_indices": np.arange(first, last + 1),
        "coarse_spacing_m": spacing,
        "coarse_mean_spacing_m": float(np.mean(spacing)),
        "dogleg_before": before,
    }


def _features(name: str, line: dict) -> str:
    """Short list of what is special on a line (for the lines table)."""
    notes = []
    if line["seamount_closest_m"] < 2.0 * SEAMOUNT_RADIUS_M:
        notes.append(f"seamount at {line['seamount_closest_at_m'] / 1e3:.1f} km")
    if name == GAP["line"]:
        notes.append(f"gap {GAP['start_m'] / 1e3:.0f}-{GAP['end_m'] / 1e3:.0f} km")
    if name == DOGLEG["line"]:
        notes.append(f"turn at {DOGLEG['turn_m'] / 1e3:.0f} km")
    if name == COARSE["line"]:
        notes.append(f"coarse {COARSE['start_m'] / 1e3:.0f}-{COARSE['end_m'] / 1e3:.0f} km")
    return ", ".join(notes) if notes else "clean"


def _lines_table(lines: dict) -> list[str]:
    head = (
        "| line | leg | from_km | to_km | stations | azimuth_mid_deg | strike_mid_deg "
        "| fabric_apparent_km | fabric_apparent_fit_km | magnetic_apparent_km "
        "| spacing_median_m | seamount_closest_km | features |"
    )
    out = [head, "|" + "---|" * 13]
    for name, line in lines.items():
        for index, leg in enumerate(line["legs"], start=1):
            out.append(
                f"| {name} | {index} | {leg['start_m'] / 1e3:.3f} | {leg['end_m'] / 1e3:.3f} "
                f"| {leg['stations']} | {leg['azimuth_mid_deg']:.3f} "
                f"| {leg['strike_mid_deg']:.3f} | {leg['fabric_apparent_m'] / 1e3:.3f} "
                f"| {leg['fabric_apparent_data_m'] / 1e3:.3f} "
                f"| {leg['magnetic_apparent_m'] / 1e3:.3f} | {leg['spacing_median_m']:.1f} "
                f"| {line['seamount_closest_m'] / 1e3:.2f} | {_features(name, line)} |"
            )
    return out


def _geometry_table(lines: dict) -> list[str]:
    out = [
        "| line | start_lon | start_lat | end_lon | end_lat | length_km | first_time | last_time |",
        "|" + "---|" * 8,
    ]
    for name, line in lines.items():
        out.append(
            f"| {name} | {line['lon'][0]:.6f} | {line['lat'][0]:.6f} | {line['lon'][-1]:.6f} "
            f"| {line['lat'][-1]:.6f} | {line['distance'][-1] / 1e3:.3f} "
            f"| {_time_text(line['seconds'][0])} | {_time_text(line['seconds'][-1])} |"
        )
    return out


def _readme_models(lines: dict, summit: dict) -> list[str]:
    """README section: the true models and their constants."""
    z_fabric = admittance_mgal_per_m(FABRIC_WAVELENGTH_M)
    seamount_lon, seamount_lat = _plane_transformers()[1].transform(
        SEAMOUNT_EAST_M, SEAMOUNT_NORTH_M
    )
    oblique = lines["L03"]["legs"][0]["fabric_apparent_data_m"]
    normal_deg = FABRIC_STRIKE_DEG + 90.0
    a1, period1, a2, period2 = SPEED_VARIATION
    steps = np.concatenate([np.diff(line["distance"]) for line in lines.values()])
    steps = steps[steps < 1000.0]
    low, middle, high = steps.min(), np.median(steps), steps.max()
    return [
        "## True models",
        "",
        _wrap(
            "Positions (e east, n north, metres) are on the local plane; u is the distance ",
            f"along the fabric's normal, azimuth strike + 90 = {normal_deg:.0f} deg:",
        ),
        "",
        f"    u = e sin({normal_deg:.0f} deg) + n cos({normal_deg:.0f} deg)",
        "",
        "### Bathymetry",
        "",
        "    elevation  h(e, n) = A cos(2 pi u / L + phi) + H exp(-r^2 / R^2)",
        "    depth_m    = D0 - h + noise",
        "",
        "with r the distance from the seamount centre on the plane.",
        "",
        "| quantity | value |",
        "|---|---|",
        f"| mean water depth D0 | {MEAN_DEPTH_M:.0f} m (no regional trend) |",
        f"| fabric wavelength L (true, 2-D) | {FABRIC_WAVELENGTH_M / 1e3:.1f} km |",
        f"| fabric strike (crests) | {FABRIC_STRIKE_DEG:03.0f} deg from the plane's grid north "
        "(true north at the centre); local true strike per line below |",
        f"| fabric amplitude A | {FABRIC_AMPLITUDE_M:.0f} m (peak to trough "
        f"{2 * FABRIC_AMPLITUDE_M:.0f} m; variance A^2/2 = {FABRIC_AMPLITUDE_M**2 / 2:.0f} m^2) |",
        f"| fabric phase phi | {FABRIC_PHASE_DEG:.0f} deg |",
        f"| seamount ({SEAMOUNT_NAME}) centre | e = {SEAMOUNT_EAST_M / 1e3:.1f} km, "
        f"n = {SEAMOUNT_NORTH_M / 1e3:.1f} km; lat {seamount_lat:.6f}, lon {seamount_lon:.6f} |",
        f"| seamount height H | {SEAMOUNT_HEIGHT_M:.0f} m (summit depth "
        f"{MEAN_DEPTH_M - SEAMOUNT_HEIGHT_M:.0f} m before fabric and noise) |",
        f"| seamount radius R (e-folding) | {SEAMOUNT_RADIUS_M / 1e3:.1f} km (half height at "
        f"{SEAMOUNT_RADIUS_M * math.sqrt(math.log(2.0)) / 1e3:.3f} km) |",
        f"| depth noise | white, Gaussian, standard deviation {DEPTH_NOISE_M:.0f} m |",
        "",
        "### Free-air gravity",
        "",
        _wrap(
            "Linear (first) term of Parker (1972) for an uncompensated load; Watts (2001, ",
            "ch. 5) gives this admittance for marine data, d being the mean water depth:",
        ),
        "",
        "    F[gravity](k) = Z(|k|) F[h](k),   Z(|k|) = 2 pi G drho exp(-|k| D0),   |k| in rad/m",
        "",
        _wrap(
            f"applied by FFT to h on a {GRID_SIZE} x {GRID_SIZE} grid at {GRID_SPACING_M:.0f} m ",
            f"({GRID_SIZE * GRID_SPACING_M / 1e3:.1f} km square), h tapered by a cosine from ",
            f"{TAPER_INNER_M / 1e3:.0f} km to zero at {TAPER_OUTER_M / 1e3:.0f} km from the ",
            "centre (all stations lie within 110 km, so wrap-around does not reach them), then ",
            "sampled at the stations with scipy's RegularGridInterpolator (cubic), plus noise. ",
            "Gravity rises over seafloor highs: it correlates positively with elevation and ",
            "negatively with depth_m.",
        ),
        "",
        "| quantity | value |",
        "|---|---|",
        f"| G | {GRAVITATIONAL_CONSTANT:.5e} m^3 kg^-1 s^-2 (CODATA 2018) |",
        f"| drho | {DENSITY_CONTRAST_KG_M3:.0f} kg/m^3 ({CRUST_DENSITY_KG_M3:.0f} - "
        f"{WATER_DENSITY_KG_M3:.0f}) |",
        f"| d = D0 | {MEAN_DEPTH_M:.0f} m |",
        f"| 2 pi G drho | {two_pi_g_drho():.6e} mGal/m |",
        f"| Z at the fabric: 2 pi G drho exp(-2 pi D0 / L), L = {FABRIC_WAVELENGTH_M / 1e3:.0f} km "
        f"| {z_fabric:.6e} mGal/m |",
        f"| gravity fabric amplitude A Z | {FABRIC_AMPLITUDE_M * z_fabric:.4f} mGal, in phase "
        "with the elevation (phase 0 deg) |",
        f"| gravity over the summit, noise-free (summit depth {summit['depth_m']:.1f} m with "
        f"the fabric) | {summit['gravity_mgal']:.3f} mGal |",
        f"| gravity noise | white, Gaussian, standard deviation {GRAVITY_NOISE_MGAL:.1f} mGal |",
        "",
        _wrap(
            "The admittance belongs to the true 2-D wavenumber, not to the apparent one along ",
            f"a line: on L03 the fabric appears at {oblique / 1e3:.3f} km, yet gravity over ",
            f"elevation there is still {z_fabric:.4e} mGal/m; the formula evaluated at the ",
            f"apparent wavelength would give {admittance_mgal_per_m(oblique):.4e} mGal/m.",
        ),
        "",
        "### Magnetic anomaly",
        "",
        "    magnetic_nt = M cos(2 pi u / L_mag + phi_mag) + noise",
        "",
        "Stripes parallel to the fabric, given directly at sea level (no upward continuation).",
        "",
        "| quantity | value |",
        "|---|---|",
        f"| stripe wavelength L_mag (true) | {MAGNETIC_WAVELENGTH_M / 1e3:.1f} km |",
        f"| strike | {FABRIC_STRIKE_DEG:03.0f} deg, as the fabric |",
        f"| amplitude M | {MAGNETIC_AMPLITUDE_NT:.0f} nT |",
        f"| phase phi_mag | {MAGNETIC_PHASE_DEG:.0f} deg |",
        f"| noise | white, Gaussian, standard deviation {MAGNETIC_NOISE_NT:.0f} nT |",
        "",
        "### Ship and stations",
        "",
        _wrap(
            f"Stations are logged every {LOG_INTERVAL_S} s +- {LOG_JITTER_S} s (whole seconds) ",
            f"at {SPEED_KNOTS:.0f} knots on average. The speed varies smoothly, ",
            f"v = v0 (1 + {a1} sin(2 pi tau / {period1:.0f} s + p1) + {a2} sin(2 pi tau / ",
            f"{period2:.0f} s + p2)), with random phases p1, p2 per line and a ",
            f"{SPEED_JITTER * 100:.0f} % random jitter per step, so station spacing is ",
            f"irregular on every line: {low:.0f} to {high:.0f} m, median {middle:.0f} m (outside ",
            "the gap and the coarse stretch).",
        ),
        "",
    ]


def readme_text(survey: dict) -> str:
    """The README stating every true value (Markdown)."""
    lines = {line["plan"].name: line for line in survey["lines"]}
    rows, bad = survey["rows"], survey["bad_rows"]
    count = row_accounting(rows, bad)
    where = _irregularities(lines)
    east = np.concatenate([line["east"] for line in lines.values()]) / 1e3
    north = np.concatenate([line["north"] for line in lines.values()]) / 1e3
    lon = np.concatenate([line["lon"] for line in lines.values()])
    lat = np.concatenate([line["lat"] for line in lines.values()])
    gap_line, coarse_line = lines[GAP["line"]], lines[COARSE["line"]]
    dog_line = lines[DOGLEG["line"]]
    dog_before = where["dogleg_before"]
    leg2_az = dog_line["legs"][1]["azimuth_start_deg"]
    corner = float(dog_line["path"][-1] - dog_line["distance"][-1])
    coarse_idx = where["coarse_indices"]
    coarse_km = ", ".join(f"{d / 1e3:.3f}" for d in coarse_line["distance"][coarse_idx])
    coarse_sp = ", ".join(f"{d / 1e3:.3f}" for d in where["coarse_spacing_m"])
    coarse_leg = coarse_line["legs"][0]
    step = where["coarse_mean_spacing_m"]
    alias = alias_wavelength_m(coarse_leg["fabric_apparent_data_m"], step)
    crossings = [
        f"{name} passes {line['seamount_closest_m']:.0f} m from the summit at "
        f"{line['seamount_closest_at_m'] / 1e3:.3f} km"
        for name, line in lines.items()
        if line["seamount_closest_m"] < 2.0 * SEAMOUNT_RADIUS_M
    ]
    far = min(
        line["seamount_closest_m"]
        for line in lines.values()
        if line["seamount_closest_m"] >= 2.0 * SEAMOUNT_RADIUS_M
    )
    legs = [leg for line in lines.values() for leg in line["legs"]]
    mismatch = max(
        abs(leg["fabric_apparent_data_m"] / leg["fabric_apparent_m"] - 1.0) for leg in legs
    )
    clean = [name for name, line in lines.items() if _features(name, line) == "clean"]
    text = [
        f"# Demo survey {CRUISE_ID} (invented)",
        "",
        _wrap(
            "A synthetic marine survey for trying profiles and for checking it. Everything ",
            f"here is invented: cruise {CRUISE_ID} of the research vessel ",
            f"*{VESSEL.removeprefix('RV ')}*, the {AREA} and the seamount {SEAMOUNT_NAME} do ",
            "not exist. The values below are the true values the data were built from, so a ",
            "tool reading survey.csv should find them. The generator writes this file; do not ",
            "edit it by hand.",
        ),
        "",
        "## Files",
        "",
        f"- `survey.csv`: {count['data_rows']} data rows after one header line; columns "
        + ", ".join(f"`{name}`" for name in COLUMNS)
        + ".",
        "- `survey.toml`: survey configuration (input, columns, fields, windows, significance,",
        "  spectrum and coherence methods); `profiles report --config survey.toml --out DIR` runs",
        "  the whole analysis.",
        "- `make_demo.py`: runs the generator, `profiles/demo_survey.py` (numpy, scipy, pyproj;",
        f"  seed {SEED}). `python demo_data/make_demo.py` rewrites all three files byte for",
        "  byte; `profiles.demo_survey.write_demo(out_dir)` does the same from Python.",
        "- `README.md`: this file.",
        "",
        "| column | meaning | units |",
        "|---|---|---|",
        "| `line` | ship line name | |",
        "| `time` | station time, ISO 8601 UTC, whole seconds | |",
        "| `lon`, `lat` | WGS84 longitude and latitude, 6 decimals | degree |",
        "| `depth_m` | water depth below sea level, positive down | m |",
        "| `gravity_mgal` | free-air gravity anomaly | mGal |",
        "| `magnetic_nt` | magnetic anomaly | nT |",
        "",
        "## Area and local plane",
        "",
        _wrap(
            f"- Centre lat {CENTRE_LAT_DEG:.2f} deg, lon {CENTRE_LON_DEG:.2f} deg: open deep ",
            "ocean in the South Pacific, far from the antimeridian.",
        ),
        _wrap(
            f"- Stations span lon {lon.min():.3f} to {lon.max():.3f} deg and lat {lat.min():.3f} ",
            f"to {lat.max():.3f} deg; on the plane, east {east.min():.1f} to {east.max():.1f} km ",
            f"and north {north.min():.1f} to {north.max():.1f} km.",
        ),
        _wrap(
            f"- Time: {_time_text(lines['L01']['seconds'][0])} to ",
            f"{_time_text(lines['L08']['seconds'][-1])}; lines surveyed in order L01 to L08, ",
            "each from its start (distance 0) onwards.",
        ),
        _wrap(
            "- The fields are functions of position on an azimuthal-equidistant plane centred ",
            f"there: `+proj=aeqd +lat_0={CENTRE_LAT_DEG} +lon_0={CENTRE_LON_DEG} ",
            f"+ellps={ELLIPSOID}`. Station positions come from pyproj.Geod.fwd along geodesics ",
            f"on {ELLIPSOID}, so along-track distances are geodesic distances.",
        ),
        "",
        *_readme_models(lines, survey["summit"]),
        "## Lines and expected apparent wavelengths",
        "",
        *_geometry_table(lines),
        "",
        _wrap(
            "A line at azimuth t across a fabric striking s sees the apparent wavelength ",
            "L / |sin(t - s)| (references.md section 9). In the table, azimuth_mid_deg is the ",
            "leg's geodesic azimuth at its mid-distance, strike_mid_deg the true strike of the ",
            "crests there (020 plus the plane's meridian convergence), fabric_apparent_km = ",
            "L / |sin(t - s)| from those two, and fabric_apparent_fit_km = L / |du/ds| with ",
            "du/ds fitted over the leg's stations, i.e. what the data contain; the two agree ",
            f"to {mismatch:.1e} (relative). magnetic_apparent_km = L_mag / |sin(t - s)|. ",
            "from_km and to_km are along-track distances from the line start, summed station ",
            "to station with Geod.inv as a reader would compute them from the file. ",
            "Straight lines sampled evenly throughout and far from the seamount (marked clean; ",
            "bad rows aside): ",
            ", ".join(clean),
            ".",
        ),
        "",
        *_lines_table(lines),
        "",
        "## Irregularities (along-track distances from the line start, station to station)",
        "",
        _wrap(
            f"- Gap: {GAP['line']} has no stations from {GAP['start_m'] / 1e3:.0f} to ",
            f"{GAP['end_m'] / 1e3:.0f} km. The last station before is at ",
            f"{_station(gap_line, where['gap_after'])}, the next at ",
            f"{_station(gap_line, where['gap_after'] + 1)}: a gap of ",
            f"{where['gap_m'] / 1e3:.3f} km.",
        ),
        _wrap(
            f"- Dog-leg: {DOGLEG['line']} turns {DOGLEG['turn_deg']:+.0f} deg (to starboard) ",
            f"at {DOGLEG['turn_m'] / 1e3:.3f} km along the ship's path, from azimuth ",
            f"{(leg2_az - DOGLEG['turn_deg']) % 360:.3f} to {leg2_az:.3f} deg. The last ",
            f"station of leg 1 is at {_station(dog_line, dog_before)}, the first of leg 2 at ",
            f"{_station(dog_line, dog_before + 1)}; station to station the track cuts the ",
            f"corner, so distances after the turn are {corner:.1f} m shorter than the path.",
        ),
        _wrap(
            f"- Coarse stretch: {COARSE['line']} from {COARSE['start_m'] / 1e3:.0f} to ",
            f"{COARSE['end_m'] / 1e3:.0f} km keeps only {coarse_idx.size} stations (file lines ",
            f"{coarse_line['file_line'][coarse_idx[0]]} to ",
            f"{coarse_line['file_line'][coarse_idx[-1]]}), at {coarse_km} km; spacings ",
            f"{coarse_sp} km, mean {step / 1e3:.3f} km. The Nyquist wavelength there, ",
            f"{2 * step / 1e3:.3f} km, is longer than the fabric's apparent wavelength ",
            f"{coarse_leg['fabric_apparent_data_m'] / 1e3:.3f} km, so the fabric is aliased to ",
            f"about {alias / 1e3:.2f} km (k_a = |k - n/dx|, references.md section 8); the ",
            f"magnetic stripes ({coarse_leg['magnetic_apparent_m'] / 1e3:.2f} km) are not.",
        ),
        _wrap(
            f"- Seamount: {'; '.join(crossings)}. Every other line stays at least ",
            f"{far / 1e3:.1f} km away.",
        ),
        "",
        "## Bad rows",
        "",
        _wrap(
            "Each is inserted between two good stations of a line. File lines are 1-based; the ",
            "header is line 1.",
        ),
        "",
        "| file_line | line | what is wrong | expected handling |",
        "|---|---|---|---|",
        *(
            f"| {item['file_line']} | {item['line']} | {item['reason']} | {item['status']} |"
            for item in bad
        ),
        "",
        "The rows as written:",
        "",
        *(f"    {item['file_line']}: {item['text']}" for item in bad),
        "",
        "## Row accounting",
        "",
        "| data_rows | used | merged | dropped |",
        "|---|---|---|---|",
        f"| {count['data_rows']} | {count['used']} | {count['merged']} | {count['dropped']} |",
        "",
        _wrap(
            "used counts distinct stations: the duplicate row is merged into the row before ",
            "it. These counts hold when every field is analysed (as the report does); a ",
            "command that does not analyse gravity_mgal keeps the row with the non-numeric ",
            "gravity value as a station whose gravity is missing. Stations per line: ",
            ", ".join(f"{name} {line['distance'].size}" for name, line in lines.items()),
            ".",
        ),
        "",
    ]
    return "\n".join(text)


def config_text() -> str:
    """The survey configuration (TOML), flat; paths relative to the configuration file."""
    return "\n".join(
        [
            f"# profiles survey configuration: demo cruise {CRUISE_ID} (invented).",
            "# Paths are relative to this file.",
            "",
            "[survey]",
            f'name = "{CRUISE_ID} demo survey"',
            f'inputs = ["{CSV_NAME}"]',
            "",
            "[columns]",
            'line = "line"',
            'time = "time"',
            'lon = "lon"',
            'lat = "lat"',
            "",
            "[fields.depth_m]",
            'kind = "bathymetry"',
            'units = "m"',
            "positive_down = true",
            'shortest_wavelength = "4km"',
            "",
            "[fields.gravity_mgal]",
            'kind = "potential_field"',
            'anomaly = "free_air"',
            'units = "mGal"',
            'shortest_wavelength = "8km"',
            "",
            "[fields.magnetic_nt]",
            'kind = "potential_field"',
            'anomaly = "magnetic"',
            'units = "nT"',
            'shortest_wavelength = "10km"',
            "",
            "[windows]",
            'window = "40km"',
            'step = "10km"',
            "",
            "[significance]",
            "alpha = 0.05",
            "",
            "[spectrum]",
            "# Density of every segment: multitaper or welch.",
            'method = "multitaper"',
            "nw = 4.0",
            "# Resampling spacing (default: each segment's median station step).",
            '# spacing = "250m"',
            "",
            "[coherence]",
            "# Free-air gravity (output) against depth (input); the density contrast of an",
            "# uncompensated load is fitted to the admittance.",
            'input = "depth_m"',
            'output = "gravity_mgal"',
            'method = "welch"',
            'block = "40km"',
            "",
        ]
    )


def _write_text(path: Path, text: str) -> None:
    """Write UTF-8 with LF line ends through a temporary name, then rename into place."""
    temporary = path.with_name(path.name + ".tmp")
    with open(temporary, "w", encoding="utf-8", newline="\n") as handle:
        handle.write(text)
    os.replace(temporary, path)


def write_demo(out_dir: str | os.PathLike) -> dict[str, Path]:
    """Write survey.csv, survey.toml and README.md into out_dir (created if needed).

    Returns the paths as {"survey": ..., "config": ..., "readme": ...}. Deterministic: the
    same bytes on every call.
    """
    out = Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    survey = build_survey()
    paths = {"survey": out / CSV_NAME, "config": out / CONFIG_NAME, "readme": out / README_NAME}
    _write_text(paths["survey"], "".join(",".join(row) + "\n" for row in survey["rows"]))
    _write_text(paths["config"], config_text())
    _write_text(paths["readme"], readme_text(survey))
    return paths


def main(argv: list[str] | None = None) -> int:
    """Command line: ``python -m profiles.demo_survey --out DIR``."""
    parser = argparse.ArgumentParser(description="Write the profiles demo survey.")
    parser.add_argument("--out", required=True, help="output folder")
    args = parser.parse_args(argv)
    for path in write_demo(args.out).values():
        print(path)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
