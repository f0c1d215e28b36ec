"""Shared test helpers: tracks built with pyproj.Geod.fwd so that true distances are known."""

from __future__ import annotations

import numpy as np
import pytest
from pyproj import Geod

GEOD = Geod(ellps="WGS84")


def walk(start_lon: float, start_lat: float, legs) -> tuple[np.ndarray, np.ndarray]:
    """Stations along legs of (azimuth_deg, n_steps, step_m), with pyproj.Geod.fwd."""
    lon, lat = [start_lon], [start_lat]
    for azimuth, n_steps, step in legs:
        for _ in range(n_steps):
            x, y, _ = GEOD.fwd(lon[-1], lat[-1], azimuth, step)
            lon.append(x)
            lat.append(y)
    return np.array(lon), np.array(lat)


def write_csv(path, columns: dict) -> str:
    """Write columns (name -> sequence) as a CSV with a header; return the path as str."""
    names = list(columns)
    n = len(next(iter(columns.values())))
    with open(path, "w", encoding="utf-8") as stream:
        stream.write(",".join(names) + "\n")
        for i in range(n):
            stream.write(",".join(_cell(columns[name][i]) for name in names) + "\n")
    return str(path)


def _cell(value) -> str:
    if isinstance(value, float | np.floating):
        return repr(float(value))
    return str(value)


@pytest.fixture
def track_factory():
    return walk
