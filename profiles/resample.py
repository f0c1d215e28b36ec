"""Resampling a segment to a uniform spacing, within the segment only.

Values are interpolated on geodesic along-track distance, never across a gap (segments end at
gaps). Linear interpolation (``numpy.interp``) is the default; cubic uses a not-a-knot cubic
spline (``scipy.interpolate.CubicSpline``).

Anti-alias filter
-----------------
When the new spacing is coarser than the stations (more than 1.01 times the segment's median
station spacing), interpolating straight onto the coarse grid would fold every wavelength
shorter than the new Nyquist wavelength back onto longer ones. The values are therefore first
interpolated onto a fine grid of spacing ``spacing / q`` with ``q = ceil(spacing / median)``,
then low-pass filtered and decimated by ``q`` with ``scipy.signal.resample_poly`` (a zero-phase
polyphase FIR: windowed sinc, Kaiser window with beta 5, cutoff at the new Nyquist wavenumber
1 / (2 spacing), filter half-length 10 q input samples, edges padded with the line through the
end values). This is the textbook decimation scheme (Crochiere and Rabiner 1983, "Multirate
Digital Signal Processing", Prentice-Hall; the Kaiser window: Kaiser 1974, Proc. IEEE Int.
Symp. Circuits Syst., 20-23).

Sample positions are interpolated linearly in latitude and in unwrapped longitude, which is
exact to well under a metre over steps of a few km.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Literal, get_args

import numpy as np

from .errors import InputError, SpacingError
from .geometry import Segment

Interpolation = Literal["linear", "cubic"]
COARSER_THAN_STATIONS = 1.01


@dataclass(frozen=True, eq=False)
class UniformSegment:
    """A field resampled to a uniform spacing along one segment.

    Attributes
    ----------
    line : str
    number : int
        Segment number within the line.
    field : str
        Field name.
    start : float
        Along-line distance of the first sample (m).
    spacing : float
        Sample spacing (m).
    values : ndarray
        Field values at the samples.
    lon, lat : ndarray
        Sample positions (degrees).
    station_distance : ndarray
        Along-line distances of the original stations (m), for local spacing statistics.
    interpolation : str
        ``"linear"`` or ``"cubic"``.
    lowpassed : bool
        Whether the anti-alias filter was applied.
    """

    line: str
    number: int
    field: str
    start: float
    spacing: float
    values: np.ndarray
    lon: np.ndarray
    lat: np.ndarray
    station_distance: np.ndarray
    interpolation: str
    lowpassed: bool

    @property
    def n(self) -> int:
        """Number of samples."""
        return int(self.values.size)

    @property
    def distance(self) -> np.ndarray:
        """Along-line distance of each sample (m)."""
        return self.start + self.spacing * np.arange(self.n)

    @property
    def label(self) -> str:
        """``line/segment``."""
        return f"{self.line}/{self.number}"

    def __str__(self) -> str:
        return (
            f"{self.field} on {self.label}: {self.n} samples every {self.spacing:.1f} m from "
            f"{self.start / 1e3:.3f} km ({self.interpolation}"
            f"{', low-passed' if self.lowpassed else ''})"
        )


def resample_values(
    distance: np.ndarray,
    values: np.ndarray,
    *,
    spacing: float,
    interpolation: Interpolation = "linear",
) -> tuple[np.ndarray, np.ndarray, bool]:
    """Resample values at strictly increasing distances to a uniform grid (pure arrays).

    Parameters
    ----------
    distance : ndarray
        Station distances (m), strictly increasing.
    values : ndarray
        Station values, finite.
    spacing : float
        New spacing (m).
    interpolation : {"linear", "cubic"}

    Returns
    -------
    grid, resampled, lowpassed : ndarray, ndarray, bool
        Grid distances from ``distance[0]``, values on it, and whether the anti-alias filter
        ran.
    """
    grid, resampled, lowpassed, _ = _resample_values(distance, values, spacing=spacing,
                                                     interpolation=interpolation)
    return grid, resampled, lowpassed


def _resample_values(distance, values, *, spacing: float | None, interpolation: str):
    """:func:`resample_values`, with ``spacing=None`` meaning the median station step (found
    once, with the steps the checks need anyway); also returns the spacing used."""
    if interpolation not in get_args(Interpolation):
        raise InputError(
            f"interpolation must be one of {', '.join(get_args(Interpolation))} (got {interpolation!r})"
        )
    distance = np.asarray(distance, dtype=float)
    values = np.asarray(values, dtype=float)
    if distance.size < 2:
        raise SpacingError("a segment needs at least two stations to be resampled")
    if spacing is not None and not spacing > 0:
        raise SpacingError(f"spacing must be positive (got {spacing})")
    steps = np.diff(distance)
    if not (steps > 0).all():
        bad = int(np.flatnonzero(steps <= 0)[0])
        raise InputError(f"distance must increase strictly; it does not after station {bad}")
    if not np.isfinite(values).all():
        raise InputError(
            "values must be finite; read the survey with this field requested so "
            "that rows without a value are dropped"
        )
    median = float(np.median(steps))
    if spacing is None:
        spacing = median
    length = distance[-1] - distance[0]
    n = math.floor(length / spacing + 1e-9) + 1
    if n < 2:
        raise SpacingError(f"segment of {length:.1f} m is shorter than one step of {spacing:.1f} m")
    q = math.ceil(spacing / median - 1e-9) if spacing > COARSER_THAN_STATIONS * median else 1
    fine = distance[0] + (spacing / q) * np.arange((n - 1) * q + 1)
    interpolated = _interpolate(distance, values, fine, interpolation)
    if q == 1:
        return fine - distance[0], interpolated, False, spacing
    from scipy.signal import resample_poly

    filtered = resample_poly(interpolated, 1, q, padtype="line")[:n]
    return fine[::q][:n] - distance[0], filtered, True, spacing


def wrap_longitude(lon: np.ndarray) -> np.ndarray:
    """Longitudes (degrees) into [-180, 180): ``(lon + 180) % 360 - 180``, number for number.

    Where every lon + 180 already lies in [0, 360) the remainder changes nothing, and the
    (slow) floating-point remainder is skipped.
    """
    shifted = np.asarray(lon, dtype=float) + 180.0
    if shifted.size and shifted.min() >= 0.0 and shifted.max() < 360.0:
        shifted -= 180.0
        return shifted
    return shifted % 360.0 - 180.0


def _continuous_longitude(lon: np.ndarray) -> np.ndarray:
    """``numpy.unwrap(lon, period=360)``: longitudes made continuous along the track.

    Where all longitudes lie within 180 degrees of each other no step reaches 180 degrees, and
    unwrap would change nothing but negative zeros (it returns lon[1:] + 0.0): the longitudes
    are returned as they are, which the caller's interpolation and :func:`wrap_longitude`
    turn into the same numbers (-0.0 + 180 is 180).
    """
    if lon.size and float(lon.max()) - float(lon.min()) < 180.0:
        return lon
    return np.unwrap(lon, period=360.0)


def _interpolate(distance, values, grid, interpolation):
    if interpolation == "linear":
        return np.interp(grid, distance, values)
    from scipy.interpolate import CubicSpline

    return CubicSpline(distance, values, bc_type="not-a-knot")(grid)


def resample(
    segment: Segment,
    field: str,
    *,
    spacing: float | None = None,
    interpolation: Interpolation = "linear",
) -> UniformSegment:
    """Resample one field of a segment to a uniform spacing.

    Parameters
    ----------
    segment : Segment
    field : str
        Field to resample.
    spacing : float, optional
        New spacing (m); the segment's median station spacing when omitted.
    interpolation : {"linear", "cubic"}

    Returns
    -------
    UniformSegment
    """
    if field not in segment.values:
        raise InputError(
            f"segment {segment.label} has no field {field!r}; fields: {', '.join(segment.values) or 'none'}"
        )
    grid, values, lowpassed, spacing = _resample_values(
        segment.distance, segment.values[field], spacing=spacing, interpolation=interpolation
    )
    where = segment.distance[0] + grid
    lon = np.interp(where, segment.distance, _continuous_longitude(segment.lon))
    lat = np.interp(where, segment.distance, segment.lat)
    return UniformSegment(
        line=segment.line,
        number=segment.number,
        field=field,
        start=float(segment.distance[0]),
        spacing=float(spacing),
        values=values,
        lon=wrap_longitude(lon),
        lat=lat,
        station_distance=segment.distance,
        interpolation=interpolation,
        lowpassed=lowpassed,
    )
