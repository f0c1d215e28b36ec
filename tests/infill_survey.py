"""A constructed survey whose middle stretch must be infill, for the map, GIS and report tests.

Line K1 is logged every 250 m for 50 km, then every 3 km for 45 km (15 steps, enough for a
stretch of its own, :data:`profiles.stretches.MIN_STEPS`), then every 250 m again; line K2 runs
parallel to it, every 250 m throughout. Both follow geodesics (pyproj.Geod.fwd, conftest.walk).

The values are white Gaussian noise integrated twice along a 250 m grid, whose spectrum falls as
k^-4 (each integration multiplies the density by 1 / (2 pi k)^2; common practice), plus a
white floor of 5 mm; every station takes the grid value at its own distance, so the coarse
stations are point samples of the same process.

Why the coarse stretch must be infill at a 4 km target: a spacing dx >= L/2 puts the first
image of the wavelength L on L itself, so the aliased power there is at least the true power
(Shannon 1949, Proc. IRE 37, 10-21; docs/aliasing-budget.md section 1). Any spacing keeping it
under a tolerance below 1 is therefore finer than L/2 = 2 km, and 3 km exceeds it. (A
recommendation can be coarser than L/2 only on the noise-floor basis, when the signal meets the
floor at a wavelength longer than L; the 5 mm floor here lies far below the signal at 4 km, and
test_gis checks that the basis is the tolerance.)
"""

from __future__ import annotations

import numpy as np
from conftest import walk, write_csv

#: Where the coarse stretch of K1 runs (km from the line start) and its spacing (km).
COARSE_START_KM, COARSE_END_KM, COARSE_SPACING_KM = 50.0, 95.0, 3.0
#: Target wavelength (km) of the tests.
TARGET_KM = 4.0

_LEGS = {
    "K1": [(70.0, 200, 250.0), (70.0, 15, 3000.0), (70.0, 200, 250.0)],
    "K2": [(70.0, 580, 250.0)],
}
_STARTS = {"K1": (-40.0, 10.0), "K2": (-40.03, 10.08)}


def columns(seed: int = 7) -> dict:
    """The survey as columns ``line``, ``lon``, ``lat``, ``depth_m``."""
    rng = np.random.default_rng(seed)
    out = {"line": [], "lon": [], "lat": [], "depth_m": []}
    for name, legs in _LEGS.items():
        lon, lat = walk(*_STARTS[name], legs)
        steps = np.concatenate([np.full(n, step) for _, n, step in legs])
        grid = np.rint(np.concatenate([[0.0], np.cumsum(steps)]) / 250.0).astype(int)
        process = np.cumsum(np.cumsum(rng.normal(size=grid[-1] + 1)))
        depth = 4000.0 + 0.05 * process[grid] + rng.normal(0.0, 0.005, grid.size)
        out["line"] += [name] * lon.size
        out["lon"].append(lon)
        out["lat"].append(lat)
        out["depth_m"].append(depth)
    return {key: (value if key == "line" else np.concatenate(value)) for key, value in out.items()}


def write(path) -> str:
    """Write the survey as a CSV file; return its path."""
    return write_csv(path, columns())


def build(*, lines=None):
    """Segments, resampled-window table and spacing audit with its aliasing budget at the
    4 km target (40 km windows every 10 km)."""
    from profiles.geometry import build_segments
    from profiles.resample import resample
    from profiles.spacing import audit_spacing
    from profiles.survey import Survey
    from profiles.windows import along_track_windows

    data = columns()
    survey = Survey.from_arrays(line=np.array(data["line"]), lon=data["lon"], lat=data["lat"],
                                values={"depth_m": data["depth_m"]})
    segments = build_segments(survey)
    if lines is not None:
        segments = segments.select(lines)
    tracks = [resample(segment, "depth_m") for segment in segments]
    windows = along_track_windows(tracks, window=40e3, step=10e3, shortest_wavelength=TARGET_KM * 1e3)
    audit = audit_spacing(segments, shortest_wavelength=TARGET_KM * 1e3, field="depth_m")
    return segments, windows, audit


def halo_pixels(image) -> int:
    """Pixels of a decoded RGB(A) image (floats in 0..1) in the colour of the infill halo over
    white: alpha a of colour c over white gives a c + (1 - a) (the "over" operator, Porter and
    Duff 1984, Computer Graphics 18(3), 253-259), within 0.01 in every channel."""
    import matplotlib.colors

    from profiles.figures import style

    colour = np.array(matplotlib.colors.to_rgb(style.INFILL_COLOUR))
    expected = style.INFILL_ALPHA * colour + (1.0 - style.INFILL_ALPHA)
    return int((np.abs(np.asarray(image)[..., :3] - expected).max(axis=-1) < 0.01).sum())
