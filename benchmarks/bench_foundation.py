"""Benchmark: distance, segmentation and resampling against the bare library calls.

Target (foundation issue): distance, segmentation and resampling of 10 million points
(1,000 lines x 10,000 points) within 2x the time of a bare vectorised ``pyproj.Geod.inv`` plus
``numpy.interp`` over the same arrays, both measured in this run.

    python benchmarks/bench_foundation.py               # 1,000 lines x 10,000 points
    python benchmarks/bench_foundation.py --lines 100   # quicker
"""

from __future__ import annotations

import argparse
import time

import numpy as np
from pyproj import Geod

from profiles.geometry import split_tracks
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


def best_of(function, repeat: int) -> float:
    times = []
    for _ in range(repeat):
        start = time.perf_counter()
        function()
        times.append(time.perf_counter() - start)
    return min(times)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--lines", type=int, default=1000)
    parser.add_argument("--points", type=int, default=10_000)
    parser.add_argument("--repeat", type=int, default=3)
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

    t_bare = best_of(bare, args.repeat)
    t_ours = best_of(ours, args.repeat)
    print(f"points: {n:,} ({args.lines} lines x {args.points} points)")
    print(f"bare Geod.inv + numpy.interp: {t_bare:8.3f} s  ({n / t_bare / 1e6:6.2f} M points/s)")
    print(f"profiles distance+segments+resample: {t_ours:8.3f} s  ({n / t_ours / 1e6:6.2f} M points/s)")
    print(f"ratio: {t_ours / t_bare:.2f}  (target <= 2.0)")


if __name__ == "__main__":
    main()
