"""Sliding windows along each resampled segment: dominant wavelength, significance, aliasing.

Every uniformly resampled segment (:class:`profiles.resample.UniformSegment`) is cut into
windows of ``window`` metres that start every ``step`` metres; windows never leave their
segment, so they never cross a gap or a sharp turn. All windows are analysed together, those
of every segment given: one strided view (``numpy.lib.stride_tricks.sliding_window_view``,
the windows are never copied) per window length and step, over one segment's samples or
over the samples of all segments with that length and step laid end to end; one batched
real FFT per view with the mean and line removed in the transform and only the per-window
results kept (:func:`profiles.spectral.harmonics.detrended_harmonics` with
``keep_power=False``: dominant harmonic, its variance, the sums of Fisher's test, the lag-1
sum and the rolloff band's variance); the local station spacing of every window in one
range statistic over the steps of every segment (:mod:`profiles.ranges`); and the
significance tests of :mod:`profiles.spectral.significance` once over all windows,
whatever their lengths (the lag-1 coefficient from the variances,
:func:`~profiles.spectral.significance.lag1_from_harmonics`; the red-noise test at the
dominant harmonic only, :func:`~profiles.spectral.significance.red_noise_at`). No Python
loop runs per window.

Per window
----------
- **Dominant wavelength**: the harmonic k = 2..m (m = floor((n - 1)/2), n samples) with the
  largest variance. k = 0 (the mean) and k = 1 (a wavelength as long as the window, which a
  detrend and any regional field confuse) are left out, so no wavelength longer than half
  the window is reported; the Nyquist harmonic of an even window is left out too, as in
  Fisher's test (it carries one degree of freedom, not two). The Fourier resolution of a
  window of length W = n dx is 1/W in wavenumber (Rayleigh criterion; common practice), so
  the dominant wavelength is known to within W/(k + 1/2) .. W/(k - 1/2).
- **Variance fraction**: its variance over the window's total (harmonics k >= 1).
- **Fisher's p-value**: P(g > g_k) under Gaussian white noise for g_k = s_k^2 / sum of the
  m harmonics' variances (Fisher 1929): the probability that white noise alone puts a
  peak this high anywhere among the m harmonics.
- **Red-noise verdict**: whether the dominant harmonic's variance exceeds the AR(1)
  background at level ``alpha`` (Gilman, Fuglister and Mitchell 1963; Torrence and Compo
  1998), with the lag-1 coefficient estimated from the window (bias-corrected).
- **Local station spacing**: median and maximum of the steps between the *original*
  stations that overlap the window's extent (a step that straddles an end counts, because
  the resampled values there were interpolated across it), and the local Nyquist
  wavelength, twice the local median spacing (Shannon 1949).

Aliasing reasons
----------------
``spacing``
    the local maximum step is longer than half the target shortest wavelength: that
    wavelength cannot be sampled twice per cycle there.
``rolloff``
    more than ``rolloff_share`` of the window's variance lies in the top 20 % of wavenumbers
    below the local Nyquist wavenumber 1/(2 local median spacing): the spectrum has not
    decayed there, so energy very likely continues past the Nyquist wavenumber and folds
    back (common practice; cf. references.md section 8).
``near-nyquist``
    the dominant wavelength is shorter than ``near_nyquist_factor`` times the local Nyquist
    wavelength: a peak that close to the Nyquist wavelength may be an alias of a shorter one.

Defaults (see docs/windows-and-map.md): window = max(64 dx, 10 x target shortest
wavelength), rounded up to two significant figures, or 256 dx without a target; step = a
quarter of the window.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, field, replace

import numpy as np

from .errors import InputError, SpacingError
from .ranges import range_median_and_maximum
from .resample import UniformSegment, wrap_longitude
from .spectral.harmonics import detrended_harmonics
from .spectral.preprocess import Detrend, check_option, check_probability
from .spectral.significance import fisher_p_value, lag1_from_harmonics, red_noise_at

#: Aliasing reasons, in the order they are listed.
REASONS = ("spacing", "rolloff", "near-nyquist")
#: Fewest samples a window may hold: 7 harmonics for Fisher's test and the red-noise fit.
MIN_WINDOW_SAMPLES = 16
#: Default window: at least this many samples ...
DEFAULT_MIN_SAMPLES = 64
#: ... and at least this many cycles of the target shortest wavelength.
DEFAULT_CYCLES = 10
#: Default window without a target shortest wavelength, in samples.
DEFAULT_SAMPLES_WITHOUT_TARGET = 256
#: Default step as a fraction of the window.
DEFAULT_STEP_FRACTION = 0.25
#: Upper part of the band below the local Nyquist wavenumber examined by ``rolloff``.
ROLLOFF_BAND = 0.2

COLUMNS = (
    "line",
    "segment",
    "start_km",
    "end_km",
    "center_km",
    "lon",
    "lat",
    "n_samples",
    "spacing_km",
    "dominant_harmonic",
    "dominant_wavelength_km",
    "dominant_wavelength_min_km",
    "dominant_wavelength_max_km",
    "variance_fraction",
    "fisher_p_value",
    "lag1",
    "red_noise_significant",
    "local_spacing_km",
    "local_spacing_max_km",
    "local_nyquist_km",
    "rolloff_share",
    "aliasing_risk",
    "reasons",
)


def round_up_length(length: float) -> float:
    """Round a length (m) up to two significant figures, e.g. 16 470 m to 17 000 m."""
    if not length > 0:
        raise SpacingError(f"length must be positive (got {length})")
    unit = 10.0 ** (math.floor(math.log10(length)) - 1)
    return math.ceil(length / unit - 1e-9) * unit


def default_window(*, spacing: float, shortest_wavelength: float | None = None) -> float:
    """Default window length (m) for a sample spacing and a target shortest wavelength.

    ``max(64 dx, 10 L)`` rounded up to two significant figures: ten cycles of the shortest
    wavelength L put it at harmonic 10, where one harmonic of resolution is 10 % of the
    wavelength, and the band reported then reaches five times L (half the window); 64
    samples leave 31 harmonics for the significance tests. Without a target, 256 samples.
    """
    if not spacing > 0:
        raise SpacingError(f"spacing must be positive (got {spacing})")
    if shortest_wavelength is None:
        return round_up_length(DEFAULT_SAMPLES_WITHOUT_TARGET * spacing)
    return round_up_length(max(DEFAULT_MIN_SAMPLES * spacing, DEFAULT_CYCLES * shortest_wavelength))


@dataclass(frozen=True)
class WindowSettings:
    """The settings a window table was computed with (lengths in metres).

    Attributes
    ----------
    window : float
        Window length.
    step : float
        Distance between the starts of consecutive windows.
    shortest_wavelength : float or None
        Target shortest wavelength (``spacing`` reason); None when not given.
    alpha : float
        Level of the red-noise test (and of Fisher's test where it is quoted).
    rolloff_share : float
        Share of the variance in the top 20 % of wavenumbers below the local Nyquist above
        which ``rolloff`` is raised.
    near_nyquist_factor : float
        ``near-nyquist`` is raised where the dominant wavelength is below this factor times
        the local Nyquist wavelength.
    detrend : str
        ``"linear"`` or ``"mean"``, removed from every window.
    window_default : bool
        Whether the window length came from :func:`default_window`.
    """

    window: float
    step: float
    shortest_wavelength: float | None
    alpha: float
    rolloff_share: float
    near_nyquist_factor: float
    detrend: str
    window_default: bool = False

    def to_json(self) -> dict:
        """The settings with units in the key names."""
        return {
            "window_km": self.window / 1e3,
            "step_km": self.step / 1e3,
            "shortest_wavelength_km": (
                None if self.shortest_wavelength is None else self.shortest_wavelength / 1e3
            ),
            "alpha": self.alpha,
            "rolloff_share": self.rolloff_share,
            "near_nyquist_factor": self.near_nyquist_factor,
            "detrend": self.detrend,
        }

    def __str__(self) -> str:
        target = (
            "no target wavelength"
            if self.shortest_wavelength is None
            else f"target shortest wavelength {self.shortest_wavelength / 1e3:g} km"
        )
        return (
            f"window {self.window / 1e3:g} km, step {self.step / 1e3:g} km, {target}, "
            f"alpha {self.alpha:g}"
        )


@dataclass(frozen=True, eq=False)
class WindowTable:
    """Windows along the segments of a survey, one entry per window in every array.

    Attributes
    ----------
    line : ndarray of str
        Line id.
    segment : ndarray of int
        Segment number within the line.
    track : ndarray of int
        Position of the window's segment in ``tracks``.
    first_sample : ndarray of int
        Index of the window's first sample in its segment.
    n_samples : ndarray of int
        Samples per window n (the window length is n times the spacing).
    spacing : ndarray
        Sample spacing of the window's segment, m.
    start, end, center : ndarray
        Along-line distance of the first sample, the last sample and the middle, m.
    lon, lat : ndarray
        Position of the window's middle on the track, degrees.
    dominant_harmonic : ndarray of int
        Harmonic k of the dominant wavelength.
    dominant_wavelength : ndarray
        n dx / k, m.
    variance_fraction : ndarray
        Variance of the dominant harmonic over the window's variance (harmonics k >= 1).
    fisher_p_value : ndarray
        Fisher's exact p-value for the dominant harmonic (white-noise null).
    lag1 : ndarray
        AR(1) coefficient of the window's red-noise background.
    red_noise_significant : ndarray of bool
        Dominant harmonic above the AR(1) background at level ``settings.alpha``.
    local_spacing, local_spacing_max : ndarray
        Median and maximum of the original station steps overlapping the window, m.
    local_nyquist : ndarray
        2 x local_spacing, m.
    rolloff_share : ndarray
        Share of the variance in the top 20 % of wavenumbers below the local Nyquist.
    spacing_risk, rolloff_risk, near_nyquist_risk : ndarray of bool
        The three aliasing reasons.
    settings : WindowSettings
    tracks : tuple of UniformSegment
        Every segment given, with or without windows (for maps and GIS layers).
    warnings : tuple of str
        Segments too short for a window, reasons not checked, windows at risk.
    """

    line: np.ndarray
    segment: np.ndarray
    track: np.ndarray
    first_sample: np.ndarray
    n_samples: np.ndarray
    spacing: np.ndarray
    start: np.ndarray
    end: np.ndarray
    center: np.ndarray
    lon: np.ndarray
    lat: np.ndarray
    dominant_harmonic: np.ndarray
    dominant_wavelength: np.ndarray
    variance_fraction: np.ndarray
    fisher_p_value: np.ndarray
    lag1: np.ndarray
    red_noise_significant: np.ndarray
    local_spacing: np.ndarray
    local_spacing_max: np.ndarray
    local_nyquist: np.ndarray
    rolloff_share: np.ndarray
    spacing_risk: np.ndarray
    rolloff_risk: np.ndarray
    near_nyquist_risk: np.ndarray
    settings: WindowSettings
    tracks: tuple[UniformSegment, ...] = field(repr=False)
    warnings: tuple[str, ...] = ()

    def __len__(self) -> int:
        return int(self.center.size)

    @property
    def aliasing_risk(self) -> np.ndarray:
        """True where at least one reason applies."""
        return self.spacing_risk | self.rolloff_risk | self.near_nyquist_risk

    def reasons(self) -> list[tuple[str, ...]]:
        """The reasons of every window, in the order of :data:`REASONS`."""
        flags = np.column_stack([self.spacing_risk, self.rolloff_risk, self.near_nyquist_risk])
        return [tuple(r for r, on in zip(REASONS, row, strict=True) if on) for row in flags.tolist()]

    def to_frame(self):
        """One row per window, columns :data:`COLUMNS` (lengths in km; ``reasons`` a list)."""
        import pandas as pd

        length = self.n_samples * self.spacing
        with np.errstate(divide="ignore"):
            longest = length / (self.dominant_harmonic - 0.5)
        return pd.DataFrame(
            {
                "line": self.line.astype(object),
                "segment": self.segment,
                "start_km": self.start / 1e3,
                "end_km": self.end / 1e3,
                "center_km": self.center / 1e3,
                "lon": self.lon,
                "lat": self.lat,
                "n_samples": self.n_samples,
                "spacing_km": self.spacing / 1e3,
                "dominant_harmonic": self.dominant_harmonic,
                "dominant_wavelength_km": self.dominant_wavelength / 1e3,
                "dominant_wavelength_min_km": length / (self.dominant_harmonic + 0.5) / 1e3,
                "dominant_wavelength_max_km": longest / 1e3,
                "variance_fraction": self.variance_fraction,
                "fisher_p_value": self.fisher_p_value,
                "lag1": self.lag1,
                "red_noise_significant": self.red_noise_significant,
                "local_spacing_km": self.local_spacing / 1e3,
                "local_spacing_max_km": self.local_spacing_max / 1e3,
                "local_nyquist_km": self.local_nyquist / 1e3,
                "rolloff_share": self.rolloff_share,
                "aliasing_risk": self.aliasing_risk,
                "reasons": [list(r) for r in self.reasons()],
            },
            columns=list(COLUMNS),
        )

    def records(self) -> list[dict]:
        """Windows as JSON-ready dicts (``reasons`` a list of strings)."""
        from .tables import records

        return records(self.to_frame())

    def aliasing_table(self):
        """One row per aliasing reason of every window at risk, with a readable message.

        Columns: ``window`` (position in this table), ``line``, ``segment``, ``start_km``,
        ``end_km``, ``center_km``, ``lon``, ``lat``, ``reason``, ``message``.
        """
        import pandas as pd

        settings = self.settings
        rows = []
        for reason, flag in zip(REASONS, (self.spacing_risk, self.rolloff_risk, self.near_nyquist_risk),
                                strict=True):
            for i in np.flatnonzero(flag).tolist():
                rows.append((i, reason, self._message(i, reason, settings)))
        rows.sort(key=lambda row: (row[0], REASONS.index(row[1])))
        index = np.array([r[0] for r in rows], dtype=np.int64)
        return pd.DataFrame(
            {
                "window": index,
                "line": self.line[index].astype(object),
                "segment": self.segment[index],
                "start_km": self.start[index] / 1e3,
                "end_km": self.end[index] / 1e3,
                "center_km": self.center[index] / 1e3,
                "lon": self.lon[index],
                "lat": self.lat[index],
                "reason": [r[1] for r in rows],
                "message": [r[2] for r in rows],
            }
        )

    def _message(self, i: int, reason: str, settings: WindowSettings) -> str:
        where = f"{self.line[i]}/{self.segment[i]} {self.start[i] / 1e3:.1f}-{self.end[i] / 1e3:.1f} km"
        if reason == "spacing":
            return (
                f"{where}: station step up to {self.local_spacing_max[i] / 1e3:.3f} km, above half "
                f"the target wavelength ({settings.shortest_wavelength / 2e3:.3f} km)"
            )
        if reason == "rolloff":
            nyquist = self.local_nyquist[i] / 1e3
            return (
                f"{where}: {100 * self.rolloff_share[i]:.1f} % of the variance lies at wavelengths of "
                f"{nyquist:.3f}-{nyquist / (1 - ROLLOFF_BAND):.3f} km, just above the local Nyquist "
                f"wavelength (limit {100 * settings.rolloff_share:g} %)"
            )
        return (
            f"{where}: dominant wavelength {self.dominant_wavelength[i] / 1e3:.3f} km is within "
            f"{settings.near_nyquist_factor:g} x the local Nyquist wavelength "
            f"{self.local_nyquist[i] / 1e3:.3f} km"
        )

    def piece_bounds(self) -> tuple[np.ndarray, np.ndarray]:
        """Along-line stretch (m) each window stands for on a map: ``step`` centred on it.

        Pieces of consecutive windows of a segment meet without overlap; the first and last
        pieces of a segment reach the ends of their windows, so every stretch analysed is
        drawn. With a step longer than the window, a piece is the window itself.
        """
        half = 0.5 * np.minimum(self.settings.step, self.n_samples * self.spacing)
        lower = np.maximum(self.center - half, self.start)
        upper = np.minimum(self.center + half, self.end)
        first = np.ones(len(self), bool)
        first[1:] = self.track[1:] != self.track[:-1]
        last = np.ones(len(self), bool)
        last[:-1] = self.track[1:] != self.track[:-1]
        return np.where(first, self.start, lower), np.where(last, self.end, upper)

    def __str__(self) -> str:
        risk = self.aliasing_risk
        counts = ", ".join(
            f"{name} {int(flag.sum())}"
            for name, flag in zip(REASONS, (self.spacing_risk, self.rolloff_risk, self.near_nyquist_risk),
                                  strict=True)
        )
        with_windows = len(np.unique(self.track)) if len(self) else 0
        return (
            f"{len(self)} windows on {with_windows} of {len(self.tracks)} segments ({self.settings}); "
            f"{int(risk.sum())} at aliasing risk ({counts}); "
            f"{int(self.red_noise_significant.sum())} with a peak above red noise"
        )


def track_paths(
    tracks: Sequence[UniformSegment],
    which: np.ndarray,
    start: np.ndarray,
    stop: np.ndarray,
    *,
    max_vertices: int = 200,
) -> list[np.ndarray]:
    """Positions along resampled segments between pairs of along-line distances (m).

    Path i runs on ``tracks[which[i]]`` from ``start[i]`` to ``stop[i]``: the two ends
    (interpolated) and the samples between them, thinned to at most ``max_vertices``
    points. Each path is an array of shape (k, 2) of (lon, lat) in degrees, longitudes
    continuous along the track (they may leave [-180, 180) where a track crosses the
    antimeridian; :mod:`profiles.gis` and the map deal with that). The paths are views of
    the one array of :func:`track_path_vertices`.
    """
    vertices, offsets = track_path_vertices(tracks, which, start, stop, max_vertices=max_vertices)
    return np.split(vertices, offsets[1:-1])


def track_path_vertices(
    tracks: Sequence[UniformSegment],
    which: np.ndarray,
    start: np.ndarray,
    stop: np.ndarray,
    *,
    max_vertices: int = 200,
) -> tuple[np.ndarray, np.ndarray]:
    """The paths of :func:`track_paths` as one array of vertices and the offsets of the paths.

    Returns ``(vertices, offsets)``: path i is ``vertices[offsets[i] : offsets[i + 1]]``,
    shape (k, 2), (lon, lat) in degrees. A path covers a contiguous run of its track's
    samples, so all paths are cut with one fancy index into the tracks' samples laid end to
    end; the interpolation is that of :func:`_at` (applied per track) and the longitudes are
    made continuous as ``numpy.unwrap(period=360)`` does per path, which only the few paths
    with a step of 180 degrees or more (after the short-way interpolation) need in full.
    """
    which = np.asarray(which, dtype=np.intp)
    start = np.asarray(start, dtype=float)
    stop = np.asarray(stop, dtype=float)
    if which.size == 0:
        return np.zeros((0, 2)), np.zeros(1, dtype=np.intp)
    used = np.unique(which)
    sizes = np.array([tracks[i].n for i in used.tolist()], dtype=np.intp)
    base = np.zeros(used.size, dtype=np.intp)
    np.cumsum(sizes[:-1], out=base[1:])
    slot = np.searchsorted(used, which)  # the track's place among those used
    origin = np.array([tracks[i].start for i in used.tolist()])[slot]
    spacing = np.array([tracks[i].spacing for i in used.tolist()])[slot]
    n = sizes[slot]
    lower = (start - origin) / spacing  # fractional sample positions of the ends
    upper = (stop - origin) / spacing
    first = np.maximum(0, np.floor(lower).astype(np.intp) + 1)
    last = np.minimum(n - 1, np.ceil(upper).astype(np.intp) - 1)
    inside = np.maximum(last - first + 1, 0)  # samples strictly between the ends
    room = max_vertices - 2
    thinned = inside > room
    kept = np.where(thinned, max(room, 0), inside)
    offsets = np.zeros(which.size + 1, dtype=np.intp)
    np.cumsum(kept + 2, out=offsets[1:])
    heads, tails = offsets[:-1], offsets[1:] - 1  # every path's two ends
    lon = np.concatenate([tracks[i].lon for i in used.tolist()])
    lat = np.concatenate([tracks[i].lat for i in used.tolist()])
    shift = base[slot]
    # Every vertex's sample in the tracks laid end to end: first, first + 1, ... along its path
    # (the samples inside[linspace(0, inside.size - 1, room).round()] of a thinned path); the
    # two ends are interpolated apart.
    place = np.arange(offsets[-1]) - np.repeat(heads + 1, kept + 2)
    rows = np.flatnonzero(thinned)
    if rows.size and room > 0:
        counts, group = np.unique(inside[rows], return_inverse=True)  # one grid per count
        grid = np.linspace(0.0, (counts - 1).astype(float), room, axis=1).round().astype(np.intp)
        cells = np.repeat(thinned, kept + 2)
        cells[heads] = cells[tails] = False
        place[cells] = grid[group].ravel()
    sample = place + np.repeat(shift + first, kept + 2)
    sample[heads] = sample[tails] = 0
    # _at at every whole sample position of the tracks used (each sample's value as _at gives
    # it), taken for the vertices inside, and _at at the two ends of every path.
    track_base = np.repeat(base, sizes)
    sample_lon, sample_lat = _at_laid_end_to_end(
        lon, lat, (np.arange(lon.size) - track_base).astype(float), np.repeat(sizes, sizes), track_base
    )
    path_lon, path_lat = sample_lon[sample], sample_lat[sample]
    end_lon, end_lat = _at_laid_end_to_end(
        lon, lat, np.concatenate([lower, upper]), np.concatenate([n, n]), np.concatenate([shift, shift])
    )
    path_lon[heads], path_lon[tails] = end_lon[: which.size], end_lon[which.size :]
    path_lat[heads], path_lat[tails] = end_lat[: which.size], end_lat[which.size :]
    # numpy.unwrap per path: unchanged (p[1:] + 0.0) unless a step reaches 180 degrees.
    jump = ~(np.abs(np.diff(path_lon)) < 180.0)
    jump[offsets[1:-1] - 1] = False  # steps between paths do not count
    head_lon = path_lon[heads]
    path_lon += 0.0  # as p[1:] + 0.0 in numpy.unwrap (no negative zeros), the first kept
    path_lon[heads] = head_lon
    crossing = np.searchsorted(offsets, np.flatnonzero(jump) + 1, side="right") - 1
    for i in np.unique(crossing).tolist():
        here = slice(offsets[i], offsets[i + 1])
        path_lon[here] = np.unwrap(path_lon[here], period=360.0)
    return np.column_stack([path_lon, path_lat]), offsets


def _at_laid_end_to_end(lon, lat, position, size, shift):
    """:func:`_at` of longitudes (the short way round) and latitudes on tracks laid end to end:
    ``position`` within a track of ``size`` samples whose first sample is at ``shift``."""
    position = np.clip(position, 0.0, size - 1.0)
    left = np.minimum(np.floor(position).astype(np.intp), np.maximum(size - 2, 0))
    right = np.minimum(left + 1, size - 1)
    weight = position - left
    left += shift
    right += shift
    step = lon[right] - lon[left]
    step = (step + 180.0) % 360.0 - 180.0
    return lon[left] + weight * step, lat[left] + weight * (lat[right] - lat[left])


def _at(values: np.ndarray, position: np.ndarray, *, period: float | None = None) -> np.ndarray:
    """Linear interpolation of samples at fractional sample positions (clamped to the ends).

    With ``period`` (360 for longitudes) the difference between neighbours is taken the
    short way round, so the result is continuous across the antimeridian (it may leave
    [-180, 180)).
    """
    position = np.clip(np.asarray(position, dtype=float), 0.0, values.size - 1.0)
    left = np.minimum(np.floor(position).astype(np.intp), max(values.size - 2, 0))
    right = np.minimum(left + 1, values.size - 1)
    weight = position - left
    difference = values[right] - values[left]
    if period is not None:
        difference = (difference + 0.5 * period) % period - 0.5 * period
    return values[left] + weight * difference


def along_track_windows(
    segments: UniformSegment | Sequence[UniformSegment],
    *,
    window: float | None = None,
    step: float | None = None,
    shortest_wavelength: float | None = None,
    alpha: float = 0.05,
    rolloff_share: float = 0.1,
    near_nyquist_factor: float = 1.25,
    detrend: Detrend = "linear",
) -> WindowTable:
    """Analyse sliding windows along resampled segments (see the module notes).

    Parameters
    ----------
    segments : UniformSegment or sequence of UniformSegment
        Resampled segments (:func:`profiles.resample.resample`).
    window : float, optional
        Window length, m; :func:`default_window` of the median spacing of the segments
        when omitted. Each segment's window holds round(window / spacing) samples, at least
        16.
    step : float, optional
        Distance between window starts, m; a quarter of the window when omitted. Rounded to
        a whole number of samples (at least one).
    shortest_wavelength : float, optional
        Target shortest wavelength, m: the ``spacing`` reason needs it.
    alpha : float
        Level of the red-noise test (default 0.05).
    rolloff_share : float
        Threshold of the ``rolloff`` reason, between 0 and 1 (default 0.1).
    near_nyquist_factor : float
        Threshold of the ``near-nyquist`` reason, >= 1 (default 1.25).
    detrend : {"linear", "mean"}
        Removed from every window before the transform (default linear).

    Returns
    -------
    WindowTable
        Windows of each segment are placed evenly: the stretch left over at the ends (less
        than one step) is split between both ends. Segments shorter than the window, and
        segments so coarse that the window holds fewer than 16 samples, give no window and
        a warning.

    Raises
    ------
    SpacingError
        A window of fewer than 16 samples on every segment, or a non-positive length.
    InputError
        A threshold out of range.
    """
    tracks = (segments,) if isinstance(segments, UniformSegment) else tuple(segments)
    if not tracks:
        raise InputError("no segment to cut into windows")
    check_option(detrend, Detrend, what="detrend")
    alpha = check_probability(alpha, what="alpha")
    rolloff_share = check_probability(rolloff_share, what="rolloff share")
    if not (math.isfinite(near_nyquist_factor) and near_nyquist_factor >= 1.0):
        raise InputError(f"near-Nyquist factor must be at least 1 (got {near_nyquist_factor})")
    for name, value in (("window", window), ("step", step), ("shortest wavelength", shortest_wavelength)):
        if value is not None and not (math.isfinite(value) and value > 0):
            raise SpacingError(f"{name} must be a positive length (got {value})")
    typical = float(np.median([t.spacing for t in tracks]))
    default = window is None
    if default:
        window = default_window(spacing=typical, shortest_wavelength=shortest_wavelength)
    if step is None:
        step = DEFAULT_STEP_FRACTION * window
    settings = WindowSettings(
        window=float(window),
        step=float(step),
        shortest_wavelength=shortest_wavelength,
        alpha=alpha,
        rolloff_share=rolloff_share,
        near_nyquist_factor=float(near_nyquist_factor),
        detrend=str(detrend),
        window_default=default,
    )
    plans, warnings, too_coarse = [], [], []
    for index, track in enumerate(tracks):
        n = round(settings.window / track.spacing)
        if n < MIN_WINDOW_SAMPLES:
            too_coarse.append(
                f"window {settings.window / 1e3:g} km holds {n} samples at the {track.spacing:.1f} m "
                f"spacing of {track.label}; a window needs at least {MIN_WINDOW_SAMPLES} samples "
                f"({MIN_WINDOW_SAMPLES * track.spacing / 1e3:.3f} km)"
            )
            continue
        if track.n < n:
            warnings.append(
                f"segment {track.label} ({(track.n - 1) * track.spacing / 1e3:.3f} km) is shorter "
                f"than the {settings.window / 1e3:g} km window; no window there"
            )
            continue
        plans.append(_Plan(index, track, n, max(1, round(settings.step / track.spacing))))
    if len(too_coarse) == len(tracks):
        raise SpacingError(too_coarse[0])
    warnings.extend(f"{message}; no window there" for message in too_coarse)
    table = _windows(plans, settings, tracks)
    if shortest_wavelength is None:
        warnings.append(
            "no shortest wavelength given: the 'spacing' reason was not checked; "
            "give --shortest-wavelength to check station spacing against it"
        )
    if len(table):
        risky = int(table.aliasing_risk.sum())
        if risky:
            counts = ", ".join(
                f"{name} {int(flag.sum())}"
                for name, flag in zip(
                    REASONS, (table.spacing_risk, table.rolloff_risk, table.near_nyquist_risk), strict=True
                )
                if flag.any()
            )
            warnings.append(f"{risky} of {len(table)} windows are at aliasing risk ({counts})")
    else:
        warnings.append(f"no segment is as long as the {settings.window / 1e3:g} km window; no window")
    return replace(table, warnings=tuple(warnings))


# --- all windows of all segments at once --------------------------------------------------------


@dataclass(frozen=True)
class _Plan:
    """A segment that gets windows: its place in ``tracks``, window length n and step (samples)."""

    index: int
    track: UniformSegment
    n: int
    stride: int

    @property
    def count(self) -> int:
        """Windows on the segment."""
        return (self.track.n - self.n) // self.stride + 1

    @property
    def offset(self) -> int:
        """First sample of the first window: the stretch left over is split between both ends."""
        return (self.track.n - self.n - (self.count - 1) * self.stride) // 2


def _windows(plans: list[_Plan], settings: WindowSettings, tracks) -> WindowTable:
    """Every window of the planned segments, in segment order (private).

    Per-window quantities are computed on all windows at once: the local station steps in one
    range statistic over the steps of every segment, the spectra in one batched transform per
    window length and step (:func:`_spectra`), positions and reasons as whole arrays.
    """
    if not plans:
        return WindowTable(**{name: np.zeros(0, kind) for name, kind in _ARRAYS}, settings=settings,
                           tracks=tracks)
    counts = np.array([plan.count for plan in plans])
    owner = np.repeat(np.arange(len(plans)), counts)  # the plan of every window
    begin = np.zeros(len(plans), dtype=np.int64)  # the first window of every plan
    np.cumsum(counts[:-1], out=begin[1:])

    def per_plan(values, kind=None):
        return np.asarray(values, dtype=kind)[owner]

    n = per_plan([plan.n for plan in plans], np.int64)
    dx = per_plan([plan.track.spacing for plan in plans], float)
    first = (per_plan([plan.offset for plan in plans], np.int64)
             + per_plan([plan.stride for plan in plans], np.int64) * (np.arange(owner.size) - begin[owner]))
    start = per_plan([plan.track.start for plan in plans], float) + first * dx
    end = start + (n - 1) * dx
    median_step, max_step = _step_statistics(plans, start, end, begin)
    nyquist = 2.0 * median_step
    spectra = _spectra(plans, settings, begin, n=n, dx=dx, local_nyquist=nyquist)
    dominant = spectra["dominant_harmonic"]
    wavelength = n * dx / dominant
    centre_index = first + 0.5 * (n - 1)
    if len(plans) == 1:
        lon_samples, lat_samples = plans[0].track.lon, plans[0].track.lat
    else:  # the tracks laid end to end; no window reaches past its own track's last sample
        lon_samples = np.concatenate([plan.track.lon for plan in plans])
        lat_samples = np.concatenate([plan.track.lat for plan in plans])
        bases = np.zeros(len(plans), dtype=np.int64)
        np.cumsum([plan.track.n for plan in plans[:-1]], out=bases[1:])
        centre_index = centre_index + bases[owner]
    lon = _at(lon_samples, centre_index, period=360.0)
    lat = _at(lat_samples, centre_index)
    target = settings.shortest_wavelength
    columns = {
        "line": per_plan([plan.track.line for plan in plans], object),
        "segment": per_plan([plan.track.number for plan in plans], np.int64),
        "track": per_plan([plan.index for plan in plans], np.int64),
        "first_sample": first,
        "n_samples": n,
        "spacing": dx,
        "start": start,
        "end": end,
        "center": 0.5 * (start + end),
        "lon": wrap_longitude(lon),
        "lat": lat,
        "dominant_wavelength": wavelength,
        "local_spacing": median_step,
        "local_spacing_max": max_step,
        "local_nyquist": nyquist,
        "spacing_risk": (max_step > 0.5 * target) if target is not None else np.zeros(owner.size, bool),
        "rolloff_risk": spectra["rolloff_share"] > settings.rolloff_share,
        "near_nyquist_risk": wavelength < settings.near_nyquist_factor * nyquist,
        **spectra,
    }
    return WindowTable(**{name: columns[name].astype(kind, copy=False) for name, kind in _ARRAYS},
                       settings=settings, tracks=tracks)


def _spectra(plans: list[_Plan], settings: WindowSettings, begin: np.ndarray, *, n: np.ndarray,
             dx: np.ndarray, local_nyquist: np.ndarray) -> dict:
    """Dominant harmonic, variance fraction, Fisher's p-value, lag-1 coefficient, red-noise
    verdict and rolloff share of every window (private).

    Segments with the same window length and step are transformed in one batch: their
    samples are laid end to end in one buffer, each segment's first window at a multiple of
    the step, so that the windows of all of them are one strided view
    (:func:`_laid_end_to_end`); the few windows that straddle two segments are transformed
    too and dropped. One segment is read in place. The tests then run once on all windows,
    whatever their lengths.
    """
    from numpy.lib.stride_tricks import sliding_window_view

    size = local_nyquist.size
    dominant = np.empty(size, dtype=np.int64)
    peak, total, tested, lag1, share = (np.empty(size) for _ in range(5))
    groups: dict[tuple[int, int], list[int]] = {}
    for number, plan in enumerate(plans):
        groups.setdefault((plan.n, plan.stride), []).append(number)
    for (length, stride), members in groups.items():
        values, frames, rows = _laid_end_to_end([plans[i] for i in members], begin[members], n=length,
                                                stride=stride)
        windows = sliding_window_view(values, length)[::stride][:frames]
        kept = np.flatnonzero(rows >= 0)  # leave out the windows that straddle two segments
        rows = rows[kept]
        first, last = np.ones(frames, dtype=np.int64), np.zeros(frames, dtype=np.int64)  # no band
        first[kept], last[kept] = _rolloff_band(length, dx[rows], local_nyquist[rows])
        # Only the per-window results: the variances of every harmonic are never written out.
        harmonics = detrended_harmonics(windows, detrend=settings.detrend, peak_from=2, band=(first, last),
                                        keep_power=False)
        dominant[rows] = harmonics.peak_harmonic[kept]
        peak[rows] = harmonics.peak_variance[kept]
        total[rows] = harmonics.total_variance[kept]
        tested[rows] = harmonics.tested_variance[kept]
        lag1[rows] = lag1_from_harmonics(harmonics, estimator="corrected")[kept]
        with np.errstate(invalid="ignore", divide="ignore"):
            share[rows] = np.where(total[rows] > 0, harmonics.band_variance[kept] / total[rows], 0.0)
    flat = total > 0
    with np.errstate(invalid="ignore", divide="ignore"):
        fraction = np.where(flat, peak / np.where(flat, total, 1.0), np.nan)
        g = np.where(tested > 0, peak / np.where(tested > 0, tested, 1.0), 0.0)
    return {
        "dominant_harmonic": dominant,
        "variance_fraction": fraction,
        # m = fisher_m(n) of every window
        "fisher_p_value": np.where(flat, fisher_p_value(np.clip(g, 0.0, 1.0), m=(n - 1) // 2), np.nan),
        "lag1": lag1,
        "red_noise_significant": red_noise_at(peak, harmonic=dominant, total=total, lag1=lag1, n=n,
                                              alpha=settings.alpha) & flat,
        "rolloff_share": share,
    }


def _laid_end_to_end(plans: list[_Plan], begin: np.ndarray, *, n: int, stride: int):
    """The samples of segments with the same window length n and step, in one buffer whose
    windows (every ``stride`` samples from 0) are all of theirs (private).

    Returns ``(values, frames, rows)``: the buffer, its number of windows, and for each of them
    its row in the window table (-1 for a window that straddles two segments). Segment s's
    first window is at sample ``place_s`` of the buffer, a multiple of the step, and the next
    segment starts at the first multiple of the step at or after the end of s's last window;
    the samples between them are a copy of s's last sample.
    """
    if len(plans) == 1:  # read in place
        plan = plans[0]
        stop = plan.offset + (plan.count - 1) * stride + n
        return plan.track.values[plan.offset : stop], plan.count, np.arange(begin[0], begin[0] + plan.count)
    counts = np.array([plan.count for plan in plans])
    gap = -(-(n - stride) // stride)  # straddling windows between two segments
    frames_before = np.zeros(len(plans), dtype=np.int64)
    np.cumsum(counts[:-1] + gap, out=frames_before[1:])
    frames = int(frames_before[-1] + counts[-1])
    values = np.empty((frames - 1) * stride + n)
    rows = np.full(frames, -1, dtype=np.int64)
    for plan, place, row in zip(plans, (frames_before * stride).tolist(), begin.tolist(), strict=True):
        length = (plan.count - 1) * stride + n
        values[place : place + length] = plan.track.values[plan.offset : plan.offset + length]
        values[place + length : place + length + gap * stride] = values[place + length - 1]
        rows[place // stride : place // stride + plan.count] = np.arange(row, row + plan.count)
    return values, frames, rows


def _step_statistics(plans: list[_Plan], start: np.ndarray, end: np.ndarray, begin: np.ndarray):
    """Median and maximum of the original station steps overlapping each window [start, end] (m).

    Step j (from station j to j + 1) overlaps when it ends after ``start`` and begins before
    ``end``. The steps of all segments are laid end to end (the step between two segments is
    in no window) and both statistics taken over all windows at once (:mod:`profiles.ranges`);
    ``begin``: the first window of each segment.
    """
    if len(plans) == 1:
        distance = np.asarray(plans[0].track.station_distance, dtype=float)
        return _local_steps(distance, start, end)
    distance = np.concatenate([plan.track.station_distance for plan in plans]).astype(float, copy=False)
    steps = np.diff(distance)
    lo = np.empty(start.size, dtype=np.int64)
    hi = np.empty(start.size, dtype=np.int64)
    base = 0
    for plan, first in zip(plans, begin.tolist(), strict=True):
        mine = slice(first, first + plan.count)
        own = np.asarray(plan.track.station_distance, dtype=float)
        lo[mine], hi[mine] = _overlapping_steps(own, start[mine], end[mine])
        lo[mine] += base
        hi[mine] += base
        base += own.size
    return range_median_and_maximum(steps, lo, hi)


def _overlapping_steps(station_distance: np.ndarray, start: np.ndarray, end: np.ndarray):
    """First and past-the-last step overlapping each stretch [start, end] (at least one step)."""
    last = station_distance.size - 2
    lo = np.clip(np.searchsorted(station_distance, start, side="right") - 1, 0, last)
    hi = np.clip(np.searchsorted(station_distance, end, side="left"), lo + 1, last + 1)
    return lo, hi


def _local_steps(station_distance: np.ndarray, start: np.ndarray, end: np.ndarray):
    """Median and maximum of the steps of one segment's stations overlapping each stretch
    [start, end] (m); see :func:`_step_statistics`."""
    station_distance = np.asarray(station_distance, dtype=float)
    steps = np.diff(station_distance)
    lo, hi = _overlapping_steps(station_distance, start, end)
    return range_median_and_maximum(steps, lo, hi)


def _rolloff_band(n: int, spacing: np.ndarray, local_nyquist: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """First and last harmonic of the band (1 - ROLLOFF_BAND) k_top < k <= k_top of windows of
    n samples at ``spacing``, k_top the lower of the local Nyquist wavenumber 1/local_nyquist
    and the grid's Nyquist wavenumber 1/(2 dx), in harmonics (empty: first > last)."""
    with np.errstate(divide="ignore"):
        top = np.minimum(n * spacing / local_nyquist, 0.5 * n)  # in harmonics
    high = np.minimum(np.floor(top + 1e-9).astype(np.int64), n // 2)
    low = np.floor((1.0 - ROLLOFF_BAND) * top + 1e-9).astype(np.int64)
    return low + 1, high


# --- assembling ----------------------------------------------------------------------------------

_ARRAYS = (
    ("line", object),
    ("segment", np.int64),
    ("track", np.int64),
    ("first_sample", np.int64),
    ("n_samples", np.int64),
    ("spacing", float),
    ("start", float),
    ("end", float),
    ("center", float),
    ("lon", float),
    ("lat", float),
    ("dominant_harmonic", np.int64),
    ("dominant_wavelength", float),
    ("variance_fraction", float),
    ("fisher_p_value", float),
    ("lag1", float),
    ("red_noise_significant", bool),
    ("local_spacing", float),
    ("local_spacing_max", float),
    ("local_nyquist", float),
    ("rolloff_share", float),
    ("spacing_risk", bool),
    ("rolloff_risk", bool),
    ("near_nyquist_risk", bool),
)
