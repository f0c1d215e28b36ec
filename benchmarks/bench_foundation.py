"""Benchmark: distance, segmentation, resampling and reading against the bare library calls.

Targets, each a ratio to bare calls measured in the same run (interleaved, best of --repeat):

- distance, segmentation and resampling of 10 million points (1,000 lines x 10,000 points)
  within 2x a bare vectorised ``pyproj.Geod.inv`` plus ``numpy.interp`` over the same arrays
  (foundation issue);
- the geodesic steps alone (``profiles.geometry.geodesic_steps``) against ``Geod.inv`` over the
  same pairs;
- reading CSV files like the batch benchmark's (line,time,lon,lat,depth_m; ISO 8601 times) with
  ``profiles.read.read_survey`` against ``pandas.read_csv`` (C engine), and their segments
  (``profiles.geometry.build_segments``) against ``Geod.inv`` over the file's station pairs:
  goals of our own for the batch's stages (2.5x and 1x), not targets of an issue.

    python benchmarks/bench_foundation.py               # 1,000 lines x 10,000 points; 4 files
    python benchmarks/bench_foundation.py --lines 100   # quicker
"""

from __future__ import annotations

import argparse
import tempfile
import time
from pathlib import Path

import numpy as np
import pandas as pd
from pyproj import Geod

from profiles.geometry import build_segments, geodesic_steps, split_tracks
from profiles.read import read_survey
from profiles.resample import resample_values


def synthetic_lines(n_lines: int, n_points: int, seed: int = 0):
    """Straight-ish lines with irregular 200-300 m steps, as lon/lat/values arrays."""
    rng = np.random.default_rng(seed)
    lon0 = rng.uniform(-30, 30, n_lines)
    lat0 = rng.uniform(-50, 50, n_lines)
    azimuth = np.radians(rng.uniform(0, 360, n_lines))
    step = rng.uniform(200, 300, (n_lines, n_points))
    along = np.cumsum(step, axis=1) - step[:, :1]
    # small-angle positions: metres to degrees (accurate enough for a benchmark track)
    dlat = along * np.cos(azimuth)[:, None] / 111_320.0
    dlon = along * np.sin(azimuth)[:, None] / (111_320.0 * np.cos(np.radians(lat0))[:, None])
    lon = (lon0[:, None] + dlon).ravel()
    lat = (lat0[:, None] + dlat).ravel()
    codes = np.repeat(np.arange(n_lines), n_points)
    values = np.sin(along / 4000.0).ravel() + rng.normal(0, 0.1, n_lines * n_points)
    return codes, lon, lat, values


def interleaved(functions: dict, repeat: int) -> dict[str, float]:
    """Best seconds of each function, the functions run in turn ``repeat`` times (so that a
    change of load on the machine falls on all of them alike)."""
    best = dict.fromkeys(functions, float("inf"))
    for _ in range(repeat):
        for name, function in functions.items():
            start = time.perf_counter()
            function()
            best[name] = min(best[name], time.perf_counter() - start)
    return best


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--lines", type=int, default=1000)
    parser.add_argument("--points", type=int, default=10_000)
    parser.add_argument("--repeat", type=int, default=3)
    parser.add_argument("--files", type=int, default=4, help="CSV files of 10 lines x 10,000 points to read")
    args = parser.parse_args()
    codes, lon, lat, values = synthetic_lines(args.lines, args.points)
    n = codes.size
    geod = Geod(ellps="WGS84")

    def bare():
        # Bare lower bound: one Geod.inv over all pairs, one numpy.interp over the same arrays.
        _, _, step = geod.inv(lon[:-1], lat[:-1], lon[1:], lat[1:])
        distance = np.concatenate([[0.0], np.cumsum(step)])
        grid = np.linspace(distance[0], distance[-1], n)
        np.interp(grid, distance, values)

    def ours():
        split = split_tracks(codes, lon, lat)
        kept_values = values[split.kept]
        for a, b in zip(split.starts, split.stops, strict=True):
            if b - a >= 2:
                resample_values(split.distance[a:b], kept_values[a:b],
                                spacing=float(np.median(np.diff(split.distance[a:b]))))

    seconds = interleaved({
        "bare": bare,
        "ours": ours,
        "Geod.inv": lambda: geod.inv(lon[:-1], lat[:-1], lon[1:], lat[1:]),
        "geodesic_steps": lambda: geodesic_steps(lon, lat),
    }, args.repeat)
    print(f"points: {n:,} ({args.lines} lines x {args.points} points); best of {args.repeat}, interleaved")
    print(f"bare Geod.inv + numpy.interp: {seconds['bare']:8.3f} s  "
          f"({n / seconds['bare'] / 1e6:6.2f} M points/s)")
    print(f"profiles distance+segments+resample: {seconds['ours']:8.3f} s  "
          f"({n / seconds['ours'] / 1e6:6.2f} M points/s)")
    print(f"ratio: {seconds['ours'] / seconds['bare']:.2f}  (target <= 2.0)")
    print(f"geodesic steps alone: {seconds['geodesic_steps']:.3f} s against Geod.inv "
          f"{seconds['Geod.inv']:.3f} s: ratio {seconds['geodesic_steps'] / seconds['Geod.inv']:.2f}")

    if args.files:
        reading(args.files, args.repeat, geod)


def reading(files: int, repeat: int, geod: Geod) -> None:
    """read_survey against read_csv, build_segments against Geod.inv, on the batch benchmark's
    kind of file; each file's calls interleaved, best of ``repeat`` per file, summed."""
    from bench_batch import make_archive  # the batch benchmark's files (imports this module)

    with tempfile.TemporaryDirectory() as folder:
        paths = make_archive(Path(folder), files=files, lines=10, points=10_000)
        read_survey(paths[0], fields=("depth_m",))  # imports and caches, outside the timings
        total = dict.fromkeys(("read_csv", "read_survey", "Geod.inv", "build_segments"), 0.0)
        stations = 0
        for path in paths:
            table = pd.read_csv(path, engine="c")
            survey = read_survey(path, fields=("depth_m",))
            lon, lat = table["lon"].to_numpy(), table["lat"].to_numpy()
            stations += len(table)
            best = interleaved({
                "read_csv": lambda path=path: pd.read_csv(path, engine="c"),
                "read_survey": lambda path=path: read_survey(path, fields=("depth_m",)),
                "Geod.inv": lambda lon=lon, lat=lat: geod.inv(lon[:-1], lat[:-1], lon[1:], lat[1:]),
                "build_segments": lambda survey=survey: build_segments(survey),
            }, repeat)
            for name, value in best.items():
                total[name] += value
    print(f"reading {files} CSV files, {stations:,} stations (line,time,lon,lat,depth_m):")
    print(f"  read_survey {total['read_survey']:.3f} s against pandas.read_csv {total['read_csv']:.3f} s: "
          f"ratio {total['read_survey'] / total['read_csv']:.2f} (our goal <= 2.5)")
    print(f"  build_segments {total['build_segments']:.3f} s against Geod.inv {total['Geod.inv']:.3f} s: "
          f"ratio {total['build_segments'] / total['Geod.inv']:.2f} (our goal <= 1.0)")


if __name__ == "__main__":
    main()
