"""Track geometry: geodesic along-track distance, merging of repeated stations, segments.

Distances are geodesics on the WGS84 ellipsoid (or another PROJ ellipsoid). Steps between
consecutive stations are short (tens of metres to a few km), so most are computed with a flat-step
formula in the local frame at each step's mid-latitude, carried to fourth order in the latitude
and longitude differences (:func:`flat_steps`), which agrees with :class:`pyproj.Geod` (Karney
2013, "Algorithms for geodesics", J. Geodesy 87, 43-55) to within the round-off of
``Geod.inv`` itself. Steps outside the formula's domain (either difference above
:data:`FLAT_STEP_LIMIT` degrees, which takes in gaps, the antimeridian and steps near the poles,
zero-length steps and non-finite input) are computed by ``Geod.inv``, which is right everywhere.
Each survey is handled with vectorised calls over all consecutive station pairs; nothing loops
per station.

A line is split into segments

* at gaps: a step longer than ``gap_multiple`` times the line's median step and than
  ``gap_multiple`` times the larger of the medians of the three steps before and the three
  steps after it (so a stretch logged more coarsely stays one stretch, flagged by the spacing
  audit), or longer than ``gap_length`` when that is given;
* at sharp turns: where the mean course over ``turn_distance`` before a station and the mean
  course over ``turn_distance`` after it differ by more than ``turn_angle`` degrees. Mean
  courses are the directions of the summed step vectors (step length times the unit vector of
  the step's forward azimuth), so station jitter does not trigger splits. Within a run of
  stations above the threshold the line is split once, after the station with the largest
  change of course.

Stations closer than ``merge_tolerance`` to their predecessor on the same line are merged into
it (field values averaged), because distance must increase strictly for interpolation.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from functools import lru_cache

import numpy as np
import pandas as pd

from .errors import InputError
from .survey import DROPPED, MERGED, USED, Survey

#: Ellipsoid of every distance unless said otherwise.
DEFAULT_ELLIPSOID = "WGS84"


@lru_cache(maxsize=8)
def ellipsoid_geod(ellipsoid: str = DEFAULT_ELLIPSOID):
    """A :class:`pyproj.Geod` for a PROJ ellipsoid name (``"WGS84"``, ``"GRS80"``, ``"bessel"``,
    ``"intl"``, ...), built once per process: pyproj objects are not shared across processes
    or threads."""
    from pyproj import Geod

    return Geod(ellps=ellipsoid)


def wgs84():
    """The WGS84 :class:`pyproj.Geod` of this process."""
    return ellipsoid_geod(DEFAULT_ELLIPSOID)


#: Largest difference of latitude and of longitude (degrees) of a step that :func:`flat_steps`
#: computes inside :func:`geodesic_steps` (0.1 degree is 11 km of latitude, or of longitude at
#: the equator). Within it the formula's truncation error is below 1e-13 of the step, well under
#: ``Geod.inv``'s own round-off; see ``docs/geometry-and-spacing.md`` for the measurements.
FLAT_STEP_LIMIT = 0.1

#: Station pairs per block of the flat-step evaluation: temporaries of 32 kB stay in the cache
#: and are reused by the allocator, instead of a fresh megabyte for every intermediate array.
_BLOCK = 4096

_RADIAN = np.pi / 180.0


@lru_cache(maxsize=8)
def ellipsoid_axes(ellipsoid: str = DEFAULT_ELLIPSOID) -> tuple[float, float]:
    """Equatorial radius ``a`` (m) and squared eccentricity ``e2 = f (2 - f)`` of a PROJ
    ellipsoid, as :class:`pyproj.Geod` holds them (WGS84: 6 378 137 m, 0.00669437999014)."""
    geod = ellipsoid_geod(ellipsoid)
    return float(geod.a), float(geod.f * (2.0 - geod.f))


def geodesic_steps(
    lon: np.ndarray, lat: np.ndarray, *, ellipsoid: str = DEFAULT_ELLIPSOID
) -> tuple[np.ndarray, np.ndarray]:
    """Length (m) and forward azimuth (degrees, in [-180, 180]) of each step between
    consecutive stations.

    Steps whose latitude and longitude differences are both within :data:`FLAT_STEP_LIMIT`
    degrees (and not both zero) are computed by :func:`flat_steps`; every other step (gaps,
    across the antimeridian or between 0..360 and -180..180 longitudes, near the poles, a
    repeated position, a non-finite or out-of-range coordinate) by one vectorised
    ``pyproj.Geod.inv`` call (Karney 2013), whose numbers it returns unchanged.

    Accuracy (``docs/geometry-and-spacing.md``): against ``Geod.inv`` on WGS84, over random
    steps everywhere on the globe, the lengths agree to 1e-8 m + 1e-12 of the step (the
    differences measured are the round-off of ``Geod.inv``, a few nanometres) and the
    azimuths to 1e-6 degree for steps of a metre or more.

    Parameters
    ----------
    lon, lat : array_like
        Station positions (degrees), in survey order.
    ellipsoid : str
        PROJ ellipsoid name.

    Returns
    -------
    length : ndarray
        Length of each of the ``n - 1`` steps (m).
    azimuth : ndarray
        Forward azimuth of each step at its first station (degrees).

    Examples
    --------
    >>> length, azimuth = geodesic_steps([0.0, 0.001, 179.9, -179.9], [45.0, 45.0, 45.0, 45.0])
    >>> [round(float(x), 3) for x in length]  # a short step, a gap, across the antimeridian
    [78.847, 10034037.744, 15769.363]
    """
    lon = np.asarray(lon, dtype=float)
    lat = np.asarray(lat, dtype=float)
    if lon.size < 2:
        return np.zeros(0), np.zeros(0)
    a, e2 = ellipsoid_axes(ellipsoid)
    dlon = lon[1:] - lon[:-1]
    dlat = lat[1:] - lat[:-1]
    with np.errstate(invalid="ignore"):
        on_globe = np.abs(lat) <= 90.0
        flat = (
            (np.abs(dlat) <= FLAT_STEP_LIMIT)
            & (np.abs(dlon) <= FLAT_STEP_LIMIT)
            & ((dlat != 0.0) | (dlon != 0.0))
            & on_globe[1:]
            & on_globe[:-1]
        )
    length = np.empty(dlon.size)
    azimuth = np.empty(dlon.size)
    _flat_blocks(dlon, dlat, lat[:-1], lat[1:], a, e2, length, azimuth)
    other = np.flatnonzero(~flat)
    if other.size:
        forward, _, distance = ellipsoid_geod(ellipsoid).inv(
            lon[:-1][other], lat[:-1][other], lon[1:][other], lat[1:][other]
        )
        length[other] = distance
        azimuth[other] = forward
    return length, azimuth


def flat_steps(
    lon1, lat1, lon2, lat2, *, ellipsoid: str = DEFAULT_ELLIPSOID
) -> tuple[np.ndarray, np.ndarray]:
    """Length (m) and forward azimuth (degrees) of short steps by the flat-step formula.

    In the local frame at the step's mid-latitude ``phi = (phi1 + phi2) / 2`` the step is
    ``north = M dphi`` and ``east = N cos(phi) dlambda``, with the ellipsoid's meridional and
    prime-vertical radii of curvature

    ``N = a / W``, ``M = a (1 - e2) / W**3``, ``W = sqrt(1 - e2 sin(phi)**2)``

    (standard geodesy, e.g. Torge and Mueller, *Geodesy*, 4th ed., 2012; stated here from
    memory). The squared length is carried to fourth order in ``dphi`` and
    ``dlambda`` (radians):

    ``s**2 = north**2 + east**2 + A dphi**4 + B dphi**2 dlambda**2 + C dlambda**4``

    with ``S = sin(phi)**2`` and

    * ``A = e2 M**2 (1 - 2 S + e2 S (4 - 3 S)) / (4 W**4)``,
    * ``B = -M N (1 + 2 S + e2 S (5 - 8 S)) / (12 W**2)``,
    * ``C = -N**2 S (1 - S) / 12``.

    These terms were derived for this package (with sympy) from the chord between the two
    points in Earth-centred coordinates and the arc of the normal section over it,
    ``s**2 = c**2 + c**4 k**2 / 12`` with ``k = cos(alpha)**2 / M + sin(alpha)**2 / N``
    (Euler's theorem): on a sphere they reduce to the series of the haversine formula. The
    forward azimuth at the first point is the azimuth in the mid-latitude frame turned back by
    half the convergence of the meridians, plus the next term of the spherical series:

    ``alpha1 = atan2(east, north) - dlambda sin(phi) / 2
    + dphi dlambda cos(phi) (dphi**2 + 2 dlambda**2) / (24 (dphi**2 + cos(phi)**2 dlambda**2))``.

    The neglected terms are of sixth order in the differences (distance) and of second order
    times ``e2`` (azimuth): within :data:`FLAT_STEP_LIMIT` the lengths agree with
    ``pyproj.Geod.inv`` (Karney 2013) to its round-off and the azimuths to 1e-6 degree
    (``docs/geometry-and-spacing.md``). Outside that domain the formula is not used.

    Parameters
    ----------
    lon1, lat1, lon2, lat2 : array_like
        Ends of each step (degrees). Longitudes are not wrapped: ``lon2 - lon1`` must be the
        short way round.
    ellipsoid : str
        PROJ ellipsoid name.

    Returns
    -------
    length : ndarray
        Step lengths (m).
    azimuth : ndarray
        Forward azimuths at the first point (degrees, in (-180, 180]); NaN for a zero step.
    """
    lon1, lat1, lon2, lat2 = np.broadcast_arrays(
        *(np.asarray(x, dtype=float) for x in (lon1, lat1, lon2, lat2))
    )
    a, e2 = ellipsoid_axes(ellipsoid)
    length = np.empty(lon1.shape)
    azimuth = np.empty(lon1.shape)
    with np.errstate(invalid="ignore", divide="ignore"):
        _flat_blocks(
            (lon2 - lon1).ravel(), (lat2 - lat1).ravel(), lat1.ravel(), lat2.ravel(), a, e2,
            length.reshape(-1), azimuth.reshape(-1),
        )
    return length, azimuth


def _flat_blocks(dlon, dlat, lat1, lat2, a, e2, length, azimuth) -> None:
    """:func:`flat_steps` from differences (degrees), written into ``length`` and ``azimuth``
    block by block."""
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        for start in range(0, dlon.size, _BLOCK):
            block = slice(start, start + _BLOCK)
            length[block], azimuth[block] = _flat_formula(
                dlon[block], dlat[block], lat1[block] + lat2[block], a, e2
            )


def _flat_formula(dlon, dlat, lat_sum, a: float, e2: float):
    """The formula of :func:`flat_steps` on one block (differences and the latitude sum in
    degrees)."""
    phi = lat_sum * (0.5 * _RADIAN)
    sin_phi = np.sin(phi)
    cos_phi = np.cos(phi)
    s = sin_phi * sin_phi
    c = cos_phi * cos_phi
    w2 = 1.0 - e2 * s
    n = a / np.sqrt(w2)
    m = n * (1.0 - e2) / w2
    dphi = dlat * _RADIAN
    dlam = dlon * _RADIAN
    north = m * dphi
    east = n * cos_phi * dlam
    u = dphi * dphi
    v = dlam * dlam
    a4 = e2 * m * m * (1.0 - 2.0 * s + e2 * s * (4.0 - 3.0 * s)) / (4.0 * w2 * w2)
    b4 = -m * n * (1.0 + 2.0 * s + e2 * s * (5.0 - 8.0 * s)) / (12.0 * w2)
    c4 = -n * n * s * c / 12.0
    length = np.sqrt(north * north + east * east + u * (a4 * u + b4 * v) + c4 * v * v)
    turn = dphi * dlam * cos_phi * (u + 2.0 * v) / (24.0 * (u + c * v)) - 0.5 * dlam * sin_phi
    azimuth = (np.arctan2(east, north) + turn) * (180.0 / np.pi)
    # Back into (-180, 180], as Geod.inv gives it, where the turn crossed the due-south azimuth.
    azimuth[azimuth > 180.0] -= 360.0
    azimuth[azimuth <= -180.0] += 360.0
    return length, azimuth


def along_track_distance(
    lon: np.ndarray, lat: np.ndarray, *, ellipsoid: str = DEFAULT_ELLIPSOID
) -> np.ndarray:
    """Cumulative geodesic distance (m) along a track, starting at 0.

    Examples
    --------
    One degree of longitude along the equator is a * pi / 180 = 111 319.490793 m on WGS84:

    >>> float(along_track_distance([0.0, 1.0], [0.0, 0.0])[-1])  # doctest: +ELLIPSIS
    111319.49079...
    """
    length, _ = geodesic_steps(lon, lat, ellipsoid=ellipsoid)
    return np.concatenate([[0.0], np.cumsum(length)])


@dataclass(frozen=True, eq=False)
class Segment:
    """A stretch of one line without gaps or sharp turns.

    Attributes
    ----------
    line : str
        Line id.
    number : int
        Segment number within the line, from 1.
    distance : ndarray
        Along-line distance of each station (m), measured from the line's first station, so
        segments of one line share one distance axis.
    lon, lat : ndarray
        Station positions (degrees).
    values : dict of str to ndarray
        Field values at the stations.
    rows : ndarray
        Input row (file line) of each station.
    source : str
        Input file.
    azimuth_deg : float
        Geodesic azimuth from the first to the last station, in [0, 360).
    chord : float
        Geodesic distance from the first to the last station (m).
    """

    line: str
    number: int
    distance: np.ndarray
    lon: np.ndarray
    lat: np.ndarray
    values: dict[str, np.ndarray]
    rows: np.ndarray
    source: str
    azimuth_deg: float
    chord: float

    @property
    def n_stations(self) -> int:
        """Number of stations."""
        return int(self.distance.size)

    @property
    def start(self) -> float:
        """Along-line distance of the first station (m)."""
        return float(self.distance[0])

    @property
    def end(self) -> float:
        """Along-line distance of the last station (m)."""
        return float(self.distance[-1])

    @property
    def length(self) -> float:
        """Along-track length (m)."""
        return self.end - self.start

    @property
    def spacing(self) -> np.ndarray:
        """Station spacing: the length of each step (m)."""
        return np.diff(self.distance)

    @property
    def straightness(self) -> float:
        """Chord over along-track length (1 for a straight line)."""
        return self.chord / self.length if self.length > 0 else float("nan")

    @property
    def label(self) -> str:
        """``line/segment``, e.g. ``"KR-03/2"``."""
        return f"{self.line}/{self.number}"

    def __str__(self) -> str:
        return (
            f"segment {self.label}: {self.n_stations} stations, "
            f"{self.start / 1e3:.3f}-{self.end / 1e3:.3f} km, azimuth {self.azimuth_deg:.1f} deg"
        )


@dataclass(frozen=True)
class Segments:
    """The segments of a survey and the survey with updated row statuses.

    Attributes
    ----------
    survey : Survey
        The survey after merging repeated stations and dropping isolated ones.
    segments : tuple of Segment
        In survey order.
    breaks : pandas.DataFrame
        One row per split: line, distance_km, kind (``gap`` or ``turn``), size (gap length in
        km or change of course in degrees), row (input row of the last station before it).
    warnings : tuple of str
        Things the user should know (lines that double back, isolated stations, ...).
    """

    survey: Survey
    segments: tuple[Segment, ...]
    breaks: pd.DataFrame
    warnings: tuple[str, ...] = field(default=())

    def __iter__(self):
        return iter(self.segments)

    def __len__(self) -> int:
        return len(self.segments)

    def select(self, lines, *, strict: bool = True) -> Segments:
        """Only the segments of the given line ids.

        Raises
        ------
        InputError
            With ``strict``, when a line id is not in the survey (the message lists the lines
            there are).
        """
        keep = set(lines)
        known = set(self.survey.lines)
        missing = [line for line in lines if line not in known]
        if strict and missing:
            raise InputError(f"no line {', '.join(missing)} in the survey; lines: {', '.join(sorted(known))}")
        return Segments(
            self.survey,
            tuple(s for s in self.segments if s.line in keep),
            self.breaks[self.breaks["line"].isin(keep)],
            self.warnings,
        )


@dataclass(frozen=True)
class TrackSplit:
    """Array-level result of :func:`split_tracks` (positions refer to the input arrays).

    Attributes
    ----------
    kept : ndarray of int
        Positions of stations kept (first of each run of repeated positions).
    merged_into : ndarray of int
        For every input position, the kept position it belongs to (itself when kept).
    distance : ndarray
        Along-line distance of each kept station (m).
    step_azimuth : ndarray
        Forward azimuth (degrees) of the step from each kept station to the next (NaN at the
        last station of a line).
    starts, stops : ndarray of int
        Piece boundaries as positions into ``kept`` (stop exclusive).
    break_after : ndarray of int
        Positions into ``kept`` of the last station before each split within a line.
    break_kind : ndarray of str
        ``"gap"`` or ``"turn"`` for each split.
    break_size : ndarray
        Gap length (m) or change of course (degrees).
    """

    kept: np.ndarray
    merged_into: np.ndarray
    distance: np.ndarray
    step_azimuth: np.ndarray
    starts: np.ndarray
    stops: np.ndarray
    break_after: np.ndarray
    break_kind: np.ndarray
    break_size: np.ndarray


def split_tracks(
    line_codes: np.ndarray,
    lon: np.ndarray,
    lat: np.ndarray,
    *,
    gap_multiple: float = 5.0,
    gap_length: float | None = None,
    turn_angle: float = 45.0,
    turn_distance: float = 2000.0,
    merge_tolerance: float = 0.01,
) -> TrackSplit:
    """Merge repeated stations and split lines at gaps and sharp turns (pure arrays).

    Parameters
    ----------
    line_codes : ndarray of int
        Line of each station; stations of a line are contiguous and in survey order.
    lon, lat : ndarray
        Positions (degrees).
    gap_multiple : float
        A step longer than this multiple of the line's median step is a gap.
    gap_length : float, optional
        A step longer than this (m) is a gap; overrides ``gap_multiple``.
    turn_angle : float
        Change of mean course (degrees) that counts as a sharp turn.
    turn_distance : float
        Distance (m) over which the mean course before and after each station is taken.
    merge_tolerance : float
        Steps shorter than this (m) merge a station into its predecessor.

    Returns
    -------
    TrackSplit
    """
    codes = np.asarray(line_codes)
    n = codes.size
    step, azimuth = geodesic_steps(lon, lat)
    same_line = codes[1:] == codes[:-1]
    repeat = same_line & (step < merge_tolerance)
    if n and repeat.any():
        is_kept = np.concatenate([[True], ~repeat])
        kept = np.flatnonzero(is_kept)
        merged_into = kept[np.cumsum(is_kept) - 1]
        # Steps between consecutive kept stations: the sum of the input steps between them
        # (the skipped ones are shorter than the merge tolerance); azimuth of the last one.
        cumulative = np.concatenate([[0.0], np.cumsum(step)])
        kstep = cumulative[kept[1:]] - cumulative[kept[:-1]]
        kazimuth = azimuth[kept[1:] - 1]
        kcodes = codes[kept]
        within = kcodes[1:] == kcodes[:-1]
    else:  # nothing to merge: no copies
        kept = merged_into = np.arange(n)
        kstep, kazimuth, kcodes, within = step, azimuth, codes, same_line
    m = kept.size
    if m == 0:
        empty = np.zeros(0, np.intp)
        return TrackSplit(kept, merged_into, np.zeros(0), np.zeros(0), empty, empty, empty,
                          np.zeros(0, dtype="<U4"), np.zeros(0))

    # Along-line distance of kept stations: cumulative steps, restarted at each line.
    line_first = np.concatenate([[0], np.flatnonzero(~within) + 1])
    line_size = np.diff(np.append(line_first, m))
    along = np.empty(m)
    along[0] = 0.0
    np.cumsum(np.where(within, kstep, 0.0), out=along[1:])
    distance = along - np.repeat(along[line_first], line_size)

    # Gaps.
    if gap_length is not None:
        gap = within & (kstep > float(gap_length))
    else:
        gap = _relative_gaps(kstep, within, kcodes, gap_multiple)

    # Sharp turns, over all lines at once: an artificial jump at line ends and gaps keeps the
    # course windows inside one piece; the step vectors there are zero.
    valid_step = within & ~gap
    position = np.empty(m)
    position[0] = 0.0
    np.cumsum(np.where(valid_step, kstep, kstep + 10.0 * turn_distance), out=position[1:])
    rad = np.radians(kazimuth)
    weight = np.where(valid_step, kstep, 0.0)
    ce = np.empty(m)
    cn = np.empty(m)
    ce[0] = cn[0] = 0.0
    np.cumsum(weight * np.sin(rad), out=ce[1:])
    np.cumsum(weight * np.cos(rad), out=cn[1:])
    index = np.arange(m)
    lo = np.minimum(np.searchsorted(position, position - turn_distance, side="left"),
                    np.maximum(index - 1, 0))
    hi = np.maximum(np.searchsorted(position, position + turn_distance, side="right") - 1,
                    np.minimum(index + 1, m - 1))
    be, bn = ce - ce[lo], cn - cn[lo]
    ae, an = ce[hi] - ce, cn[hi] - cn
    # Angle between the mean course before and after; 0 where either vector is zero
    # (arctan2(0, 0) = 0), i.e. at the ends of pieces.
    change = np.arctan2(np.abs(be * an - bn * ae), be * ae + bn * an)
    candidate = change > np.radians(turn_angle)
    # Never split at the first or last station of a piece.
    candidate[0] = candidate[-1] = False
    candidate[1:][~valid_step] = False
    candidate[:-1][~valid_step] = False
    change_deg = np.degrees(change)
    turn_after = _run_maxima(candidate, change_deg)

    is_break = gap.copy()
    is_break[turn_after] = True
    boundary = np.flatnonzero(~within | is_break) + 1
    starts = np.concatenate([[0], boundary])
    stops = np.concatenate([boundary, [m]])
    after = np.flatnonzero(within & is_break)
    kind = np.where(gap[after], "gap", "turn")
    size = np.where(gap[after], kstep[after], change_deg[after])
    return TrackSplit(kept, merged_into, distance, np.concatenate([kazimuth, [np.nan]]),
                      starts.astype(np.intp), stops.astype(np.intp), after, kind, size)


#: Steps on each side of a step whose median is the local spacing a gap is judged against.
LOCAL_STEPS = 3


def _relative_gaps(step: np.ndarray, within: np.ndarray, codes: np.ndarray, multiple: float) -> np.ndarray:
    """Steps longer than ``multiple`` times the line's median step and than ``multiple`` times
    the larger of the median of the ``LOCAL_STEPS`` steps before and of those after it.

    The local test keeps a stretch that was logged more coarsely (say every 5 km on a line
    logged every 250 m) as one stretch, whose spacing the audit then flags, instead of letting
    it fall apart into isolated stations; a single long step between finely spaced stations
    stays a gap.
    """
    if step.size == 0:
        return np.zeros(0, bool)
    line_of_step = codes[:-1]
    median = pd.Series(np.where(within, step, np.nan)).groupby(line_of_step).transform("median")
    candidate = np.flatnonzero(within & (step > multiple * median.to_numpy(dtype=float)))
    if candidate.size == 0:
        return np.zeros(step.size, bool)
    local = np.zeros(candidate.size)
    for offsets in (np.arange(-LOCAL_STEPS, 0), np.arange(1, LOCAL_STEPS + 1)):
        around = candidate[:, None] + offsets[None, :]
        inside = (around >= 0) & (around < step.size)
        around = np.clip(around, 0, step.size - 1)
        same = inside & within[around] & (line_of_step[around] == line_of_step[candidate][:, None])
        neighbours = np.where(same, step[around], np.nan)
        neighbours[~same.any(axis=1), 0] = 0.0  # no neighbour on this side: no local evidence
        local = np.maximum(local, np.nanmedian(neighbours, axis=1))
    gap = np.zeros(step.size, bool)
    gap[candidate[step[candidate] > multiple * local]] = True
    return gap


def _run_maxima(candidate: np.ndarray, score: np.ndarray, tie: float = 0.5) -> np.ndarray:
    """Position of the largest ``score`` in each run of consecutive ``candidate`` positions.

    Where several positions of a run come within ``tie`` of its maximum (a plateau, as at a
    reversal of course, where every station near the tip sees 180 degrees), the middle one of
    them is taken.
    """
    where = np.flatnonzero(candidate)
    if where.size == 0:
        return where
    run = np.concatenate([[0], np.cumsum(np.diff(where) > 1)])
    best = pd.Series(score[where]).groupby(run).transform("max").to_numpy()
    near = where[score[where] >= best - tie]
    near_run = run[score[where] >= best - tie]
    counts = np.bincount(near_run)
    first = np.concatenate([[0], np.cumsum(counts)[:-1]])
    middle = first + (counts - 1) // 2
    return near[middle[counts > 0]]


def build_segments(
    survey: Survey,
    *,
    gap_multiple: float = 5.0,
    gap_length: float | None = None,
    turn_angle: float = 45.0,
    turn_distance: float = 2000.0,
    merge_tolerance: float = 0.01,
) -> Segments:
    """Split the used stations of a survey into segments (see the module notes for the rules).

    Stations at the position of their predecessor are marked ``merged`` (values averaged
    into the kept station); stations left alone between two splits are dropped ("isolated
    station"); a line with one station is dropped ("single-station line").

    Returns
    -------
    Segments
    """
    if not gap_multiple > 1:
        raise InputError(f"gap multiple must be greater than 1 (got {gap_multiple})")
    if not 0 < turn_angle <= 180:
        raise InputError(f"turn angle must be in (0, 180] degrees (got {turn_angle})")
    stations = survey.stations
    # Compared as arrow strings: converting the column to Python strings costs ten times more.
    used_pos = np.flatnonzero((stations["status"] == USED).to_numpy(dtype=bool))
    used = stations.iloc[used_pos]
    codes, line_names = pd.factorize(used["line"], sort=False)
    lon = used["lon"].to_numpy(dtype=float)
    lat = used["lat"].to_numpy(dtype=float)
    split = split_tracks(
        codes,
        lon,
        lat,
        gap_multiple=gap_multiple,
        gap_length=gap_length,
        turn_angle=turn_angle,
        turn_distance=turn_distance,
        merge_tolerance=merge_tolerance,
    )
    rows = used["row"].to_numpy()
    fields = survey.fields
    values = {name: _merge_mean(used[name].to_numpy(dtype=float), split) for name in fields}

    merged_pos = np.flatnonzero(split.merged_into != np.arange(len(used)))
    new = survey
    if merged_pos.size:
        reasons = np.array(
            [f"duplicate position of row {r}" for r in rows[split.merged_into[merged_pos]]], dtype=object
        )
        new = new.with_status(used_pos[merged_pos], MERGED, reasons)
        kept_values = {name: values[name][split.kept] for name in fields}
        new = new.replace_values(used_pos[split.kept], kept_values)

    kept_rows = rows[split.kept]
    kept_codes = codes[split.kept]
    klon, klat = lon[split.kept], lat[split.kept]
    lengths = split.stops - split.starts
    warnings = []
    lonely = np.flatnonzero(lengths == 1)
    if lonely.size:
        positions = split.starts[lonely]
        line_sizes = np.bincount(kept_codes, minlength=len(line_names))
        single_line = line_sizes[kept_codes[positions]] == 1
        reasons = np.where(single_line, "single-station line", "isolated station between gaps")
        new = new.with_status(used_pos[split.kept[positions]], DROPPED, reasons.astype(object))
        for pos, single in zip(positions, single_line, strict=True):
            name = line_names[kept_codes[pos]]
            what = "has a single station" if single else "has a station isolated between gaps"
            warnings.append(
                f"{survey.stations['source'].iloc[used_pos[split.kept[pos]]]}: row "
                f"{kept_rows[pos]}: line {name} {what}; dropped"
            )

    good = np.flatnonzero(lengths >= 2)
    first = split.starts[good]
    last = split.stops[good] - 1
    azimuth, chord = _chords(klon[first], klat[first], klon[last], klat[last])
    number_in_line = _count_within(kept_codes[first])
    sources = stations["source"].array.take(used_pos[split.kept[first]])
    segments = []
    for i, (a, b) in enumerate(zip(first, last + 1, strict=True)):
        segments.append(
            Segment(
                line=str(line_names[kept_codes[a]]),
                number=int(number_in_line[i]),
                distance=split.distance[a:b],
                lon=klon[a:b],
                lat=klat[a:b],
                values={name: values[name][split.kept[a:b]] for name in fields},
                rows=kept_rows[a:b],
                source=str(sources[i]),
                azimuth_deg=float(azimuth[i]),
                chord=float(chord[i]),
            )
        )

    breaks = pd.DataFrame(
        {
            "line": [str(line_names[kept_codes[p]]) for p in split.break_after],
            "distance_km": split.distance[split.break_after] / 1e3 if split.break_after.size else [],
            "kind": split.break_kind,
            "size": np.where(split.break_kind == "gap", split.break_size / 1e3, split.break_size),
            "row": kept_rows[split.break_after],
        }
    )
    for _, item in breaks[(breaks["kind"] == "turn") & (breaks["size"] > 150)].iterrows():
        warnings.append(
            f"line {item['line']} doubles back on itself at {item['distance_km']:.3f} km "
            f"(row {item['row']}, course change {item['size']:.0f} deg); split there"
        )
    return Segments(new, tuple(segments), breaks, tuple(warnings))


def _merge_mean(values: np.ndarray, split: TrackSplit) -> np.ndarray:
    """Average values over each run of merged stations; result indexed like the input."""
    if split.kept.size == values.size:
        return values
    finite = np.isfinite(values)
    sums = np.bincount(split.merged_into, weights=np.where(finite, values, 0.0), minlength=values.size)
    counts = np.bincount(split.merged_into, weights=finite.astype(float), minlength=values.size)
    with np.errstate(invalid="ignore", divide="ignore"):
        mean = sums / counts
    out = values.copy()
    out[split.kept] = np.where(counts[split.kept] > 0, mean[split.kept], np.nan)
    return out


def _chords(lon1, lat1, lon2, lat2) -> tuple[np.ndarray, np.ndarray]:
    if len(lon1) == 0:
        return np.zeros(0), np.zeros(0)
    azimuth, _, chord = wgs84().inv(lon1, lat1, lon2, lat2)
    return np.mod(np.asarray(azimuth), 360.0), np.asarray(chord)


def _count_within(codes: np.ndarray) -> np.ndarray:
    """1, 2, 3, ... within each run of equal codes."""
    if codes.size == 0:
        return codes
    start = np.concatenate([[True], codes[1:] != codes[:-1]])
    index = np.arange(codes.size)
    return index - np.maximum.accumulate(np.where(start, index, 0)) + 1
