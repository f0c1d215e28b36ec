"""Sliding windows along each resampled segment: dominant wavelength, significance, aliasing.

Every uniformly resampled segment (:class:`profiles.resample.UniformSegment`) is cut into
windows of ``window`` metres that start every ``step`` metres; windows never leave their
segment, so they never cross a gap or a sharp turn. All windows of a segment are analysed
together: one strided view (``numpy.lib.stride_tricks.sliding_window_view``, the windows are
never copied), their least-squares slopes from sums over the blocks they share
(:func:`profiles.spectral.preprocess.window_slopes`), one batched real FFT with the mean and
line removed in the transform (:func:`profiles.spectral.harmonics.detrended_harmonics`),
and the significance tests of :mod:`profiles.spectral.significance` on the whole batch
(the lag-1 coefficient from the variances, :func:`~profiles.spectral.significance.lag1_from_harmonics`;
the red-noise test at the dominant harmonic only,
:func:`~profiles.spectral.significance.red_noise_at`). No Python loop runs per window.

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
from .resample import UniformSegment
from .spectral.harmonics import detrended_harmonics
from .spectral.preprocess import Detrend, check_option, check_probability, window_slopes
from .spectral.significance import fisher_m, fisher_p_value, lag1_from_harmonics, red_noise_at

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
    # Every vertex's path and its place in the path, then its fractional sample position.
    path = np.repeat(np.arange(which.size), kept + 2)
    place = np.arange(offsets[-1]) - offsets[path]
    where = (first[path] + place - 1).astype(float)  # the samples first, first + 1, ...
    rows = np.flatnonzero(thinned)
    if rows.size and room > 0:  # as inside[linspace(0, inside.size - 1, room).round()]
        grid = np.linspace(0.0, (inside[rows] - 1).astype(float), room, axis=1).round().astype(np.intp)
        cells = offsets[rows][:, None] + 1 + np.arange(room)
        where[cells] = (first[rows][:, None] + grid).astype(float)
    where[offsets[:-1]] = lower
    where[offsets[1:] - 1] = upper
    # _at on the tracks laid end to end: positions clamped per track, then shifted to it.
    size = n[path]
    position = np.clip(where, 0.0, size - 1.0)
    left = np.minimum(np.floor(position).astype(np.intp), np.maximum(size - 2, 0))
    right = np.minimum(left + 1, size - 1)
    weight = position - left
    shift = base[slot][path]
    lon = np.concatenate([tracks[i].lon for i in used.tolist()])
    lat = np.concatenate([tracks[i].lat for i in used.tolist()])
    left += shift
    right += shift
    step = lon[right] - lon[left]
    step = (step + 180.0) % 360.0 - 180.0
    path_lon = lon[left] + weight * step
    path_lat = lat[left] + weight * (lat[right] - lat[left])
    # numpy.unwrap per path: unchanged (p[1:] + 0.0) unless a step reaches 180 degrees.
    jump = ~(np.abs(np.diff(path_lon)) < 180.0)
    jump[offsets[1:-1] - 1] = False  # steps between paths do not count
    heads = path_lon[offsets[:-1]]
    path_lon += 0.0  # as p[1:] + 0.0 in numpy.unwrap (no negative zeros), the first kept
    path_lon[offsets[:-1]] = heads
    for i in np.unique(path[1:][jump]).tolist():
        here = slice(offsets[i], offsets[i + 1])
        path_lon[here] = np.unwrap(path_lon[here], period=360.0)
    return np.column_stack([path_lon, path_lat]), offsets


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
    parts, warnings, too_coarse = [], [], []
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
        stride = max(1, round(settings.step / track.spacing))
        parts.append(_segment_windows(track, index, n=n, stride=stride, settings=settings))
    if len(too_coarse) == len(tracks):
        raise SpacingError(too_coarse[0])
    warnings.extend(f"{message}; no window there" for message in too_coarse)
    table = _assemble(parts, settings, tracks)
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


# --- one segment, all windows at once ------------------------------------------------------------


def _segment_windows(track: UniformSegment, index: int, *, n: int, stride: int, settings: WindowSettings):
    """Every window of one segment, as a dict of equal-length arrays (private)."""
    from numpy.lib.stride_tricks import sliding_window_view

    count = (track.n - n) // stride + 1
    offset = (track.n - n - (count - 1) * stride) // 2
    first = offset + stride * np.arange(count)
    # A strided view: the windows are never copied. The mean and line of every window are
    # removed inside its transform, and the lag-1 coefficient comes from the variances.
    frames = sliding_window_view(track.values, n)[offset :: stride][:count]
    slope = None
    if settings.detrend == "linear":  # from sums over blocks the overlapping windows share
        slope = window_slopes(track.values[offset:], length=n, step=stride)[:count]
    harmonics = detrended_harmonics(frames, detrend=settings.detrend, slope=slope, peak_from=2)
    variance = harmonics.variance
    dx = track.spacing
    m = fisher_m(n)
    dominant = harmonics.peak_harmonic
    peak = variance[np.arange(count), dominant]
    total = harmonics.total_variance
    tested = total - variance[:, -1] if n % 2 == 0 else total  # Fisher's m leaves out Nyquist
    lag1 = lag1_from_harmonics(harmonics, estimator="corrected")
    flat = total > 0
    with np.errstate(invalid="ignore", divide="ignore"):
        fraction = np.where(flat, peak / np.where(flat, total, 1.0), np.nan)
        g = np.where(tested > 0, peak / np.where(tested > 0, tested, 1.0), 0.0)
    p_value = np.where(flat, fisher_p_value(np.clip(g, 0.0, 1.0), m=m), np.nan)
    significant = red_noise_at(peak, harmonic=dominant, total=total, lag1=lag1, n=n,
                               alpha=settings.alpha) & flat

    start = track.start + first * dx
    end = start + (n - 1) * dx
    centre_index = first + 0.5 * (n - 1)
    lon = _at(track.lon, centre_index, period=360.0)
    lat = _at(track.lat, centre_index)
    median_step, max_step = _local_steps(track.station_distance, start, end)
    nyquist = 2.0 * median_step
    share = _rolloff_share(variance, total, n=n, spacing=dx, local_nyquist=nyquist)
    wavelength = n * dx / dominant
    target = settings.shortest_wavelength
    return {
        "line": np.full(count, track.line, dtype=object),
        "segment": np.full(count, track.number, dtype=np.int64),
        "track": np.full(count, index, dtype=np.int64),
        "first_sample": first.astype(np.int64),
        "n_samples": np.full(count, n, dtype=np.int64),
        "spacing": np.full(count, dx),
        "start": start,
        "end": end,
        "center": 0.5 * (start + end),
        "lon": (lon + 180.0) % 360.0 - 180.0,
        "lat": lat,
        "dominant_harmonic": dominant.astype(np.int64),
        "dominant_wavelength": wavelength,
        "variance_fraction": fraction,
        "fisher_p_value": p_value,
        "lag1": lag1,
        "red_noise_significant": significant,
        "local_spacing": median_step,
        "local_spacing_max": max_step,
        "local_nyquist": nyquist,
        "rolloff_share": share,
        "spacing_risk": (max_step > 0.5 * target) if target is not None else np.zeros(count, bool),
        "rolloff_risk": share > settings.rolloff_share,
        "near_nyquist_risk": wavelength < settings.near_nyquist_factor * nyquist,
    }


def _local_steps(station_distance: np.ndarray, start: np.ndarray, end: np.ndarray):
    """Median and maximum of the station steps overlapping each stretch [start, end] (m).

    Step j (from station j to j + 1) overlaps when it ends after ``start`` and begins before
    ``end``.
    """
    steps = np.diff(np.asarray(station_distance, dtype=float))
    lo = np.clip(np.searchsorted(station_distance, start, side="right") - 1, 0, steps.size - 1)
    hi = np.clip(np.searchsorted(station_distance, end, side="left"), lo + 1, steps.size)
    return _range_median(steps, lo, hi), _range_reduce(np.maximum, steps, lo, hi)


def _range_reduce(ufunc: np.ufunc, values: np.ndarray, lo: np.ndarray, hi: np.ndarray) -> np.ndarray:
    """``ufunc.reduce(values[lo_i:hi_i])`` for every i (lo_i < hi_i), each value read once.

    As in :func:`_range_count`, the distinct ends of all ranges cut ``values`` into pieces
    that no range end falls inside; one ``reduceat`` reduces every piece, and each range is
    then the reduction of its run of pieces (:func:`_reduce_runs`), a few per range however
    much the ranges overlap. For an exact reduction such as ``maximum`` the result is the
    same number as reducing the range directly.
    """
    ends = np.unique(np.concatenate([lo, hi]))
    starts = ends[ends < values.size]
    pieces = ufunc.reduceat(values, starts)
    return _reduce_runs(ufunc, pieces, np.searchsorted(starts, lo), np.searchsorted(starts, hi))


def _reduce_runs(ufunc: np.ufunc, values: np.ndarray, lo: np.ndarray, hi: np.ndarray) -> np.ndarray:
    """``ufunc.reduce(values[lo_i:hi_i])`` for every i (lo_i < hi_i), in one ``reduceat``.

    The bounds are interleaved, so the even results are the ranges wanted. A range that
    ends at the end of ``values`` is cut one short (``reduceat`` needs indices inside the
    array) and its last value put back afterwards.
    """
    size = values.size
    at_end = hi >= size
    bounds = np.column_stack([lo, np.minimum(hi, size - 1)]).ravel()
    result = ufunc.reduceat(values, bounds)[::2]
    # reduceat gives values[lo] alone where lo == size - 1: already complete.
    put_back = at_end & (lo < size - 1)
    result[put_back] = ufunc(result[put_back], values[size - 1])
    return result


def _range_count(flags: np.ndarray, lo: np.ndarray, hi: np.ndarray) -> np.ndarray:
    """Number of true ``flags[lo_i:hi_i]`` for every i, each flag read once.

    ``flags`` may have more axes (one count per column then, shape (lo.size, ...)). The
    distinct ends of all ranges cut ``flags`` into pieces that no range end falls inside; one
    ``add.reduceat`` counts every piece, and a running total over the pieces gives each
    range's count as the difference of two totals (integers: exact).
    """
    ends = np.sort(np.concatenate([lo, hi]))
    starts = ends[np.concatenate([[True], ends[1:] != ends[:-1]]) & (ends < flags.shape[0])]
    totals = np.zeros((starts.size + 1, *flags.shape[1:]), dtype=np.int64)
    np.cumsum(np.add.reduceat(flags.view(np.uint8), starts, axis=0, dtype=np.int32), axis=0, out=totals[1:])
    # A range end equal to flags.shape[0] finds the last total (up to the end).
    return totals[np.searchsorted(starts, hi)] - totals[np.searchsorted(starts, lo)]


#: Largest matrix (cells) :func:`_range_select` builds at once; more rows are done in blocks.
_MEDIAN_CELLS = 1 << 23


def _range_select(values: np.ndarray, lo: np.ndarray, hi: np.ndarray, rank: np.ndarray,
                  *, following: bool = False):
    """The ``rank_i``-th smallest (from 0) of ``values[lo_i:hi_i]`` for every i, no loop.

    Each range is copied into a row of one matrix, shifted so that the value wanted has the
    same column in every row: cells before a range hold -inf, cells after it +inf. One
    ``partition`` at that column then gives every value wanted, and with ``following`` also
    the next larger one (the smallest right of that column; +inf if the range has no more).
    Above ``_MEDIAN_CELLS`` cells the rows are split into two blocks (recursively), each
    with its own width.
    """
    from numpy.lib.stride_tricks import sliding_window_view

    if lo.size == 0:
        return (np.zeros(0), np.zeros(0)) if following else np.zeros(0)
    count = hi - lo
    column = int(rank.max())
    lead = column - rank  # -inf cells before each range
    stop = lead + count  # +inf cells from here
    width = int(stop.max()) + 1
    if count.size > 1 and count.size * width > _MEDIAN_CELLS:
        half = count.size // 2
        parts = (_range_select(values, lo[:half], hi[:half], rank[:half], following=following),
                 _range_select(values, lo[half:], hi[half:], rank[half:], following=following))
        if following:
            return tuple(np.concatenate(pair) for pair in zip(*parts, strict=True))
        return np.concatenate(parts)
    first = lo - lead
    cells = np.arange(width)
    if first.min() >= 0 and first.max() + width <= values.size:
        matrix = sliding_window_view(values, width)[first]
    else:  # rows that reach past either end read clipped indices there (cells masked below)
        matrix = np.take(values, first[:, None] + cells, mode="clip")
    head = int(lead.max())
    if head:
        matrix[:, :head][cells[:head] < lead[:, None]] = -np.inf
    tail = int(stop.min())
    matrix[:, tail:][cells[tail:] >= stop[:, None]] = np.inf
    matrix.partition(column, axis=1)
    if following:
        return matrix[:, column].copy(), matrix[:, column + 1 :].min(axis=1)
    return matrix[:, column].copy()


#: Ranges sampled to place the band of :func:`_range_median`.
_BAND_SAMPLES = 32
#: Groups of ranges (by the rank wanted) for one selection each in :func:`_range_median`.
_RANK_GROUPS = 8


def _range_median(values: np.ndarray, lo: np.ndarray, hi: np.ndarray) -> np.ndarray:
    """Median of ``values[lo_i:hi_i]`` for every i (lo_i < hi_i), exactly.

    Ranges of overlapping windows share most of their values, and copying every range whole
    (to partition it) touches each value several times. Along a track the middle values of
    neighbouring windows differ little, so:

    1. a band [low, high] of values is placed from a sample of the ranges: the lowest and
       highest of their values a few ranks either side of their middle, found exactly;
    2. the positions of the values inside the band are listed in position order, so that
       a range's values inside the band are a contiguous stretch of that list; its count
       below the band comes from :func:`_range_count`;
    3. where both middle values of a range lie inside the band (its rank minus the count
       below the band falls inside its stretch), :func:`_range_select` finds them in the
       stretch, a few times shorter than the range; the few ranges whose middle falls
       outside the band get the whole-range selection.

    The median of an even count is the mean of the two middle values, as ``numpy.median``
    gives it.
    """
    if lo.size == 0:
        return np.zeros(0)
    count = hi - lo
    rank = (count - 1) // 2  # the lower middle value; the upper one is rank + 1 when even
    even = (count % 2 == 0).astype(np.int64)
    sample = np.unique(np.linspace(0, lo.size - 1, min(lo.size, _BAND_SAMPLES)).astype(np.int64))
    margin = np.maximum(2, count[sample] // 32)
    low = _range_select(values, lo[sample], hi[sample], np.maximum(rank[sample] - margin, 0)).min()
    high = _range_select(values, lo[sample], hi[sample],
                         np.minimum(rank[sample] + even[sample] + margin, count[sample] - 1)).max()
    # Positions of the values in the band; counts of the values below it per range.
    below = values < low
    in_band = values <= high
    in_band &= ~below
    band = np.flatnonzero(in_band)
    first, stop = np.searchsorted(band, lo), np.searchsorted(band, hi)
    local = rank - _range_count(below, lo, hi)  # rank minus the count below
    inside = (local >= 0) & (local + even < stop - first)
    lower = np.empty(lo.size)
    upper = np.empty(lo.size)
    good = np.flatnonzero(inside)
    if good.size and high == low:  # equal steps (regular stations): nothing to select
        lower[good] = upper[good] = low
    elif good.size:
        inner = values[band]
        # Ranges sorted by the rank wanted and selected in groups, so that the alignment
        # of _range_select wastes few cells.
        for group in np.array_split(good[np.argsort(local[good], kind="stable")], _RANK_GROUPS):
            if group.size:
                lower[group], upper[group] = _range_select(inner, first[group], stop[group],
                                                           local[group], following=True)
    bad = np.flatnonzero(~inside)
    if bad.size:
        lower[bad], upper[bad] = _range_select(values, lo[bad], hi[bad], rank[bad], following=True)
    return np.where(even == 1, 0.5 * (lower + upper), lower)


def _rolloff_share(variance: np.ndarray, total: np.ndarray, *, n: int, spacing: float, local_nyquist):
    """Share of the variance in (1 - ROLLOFF_BAND) k_top < k <= k_top, k_top the lower of the
    local Nyquist wavenumber 1/local_nyquist and the grid's Nyquist wavenumber 1/(2 dx)."""
    count, width = variance.shape
    with np.errstate(divide="ignore"):
        top = np.minimum(n * spacing / local_nyquist, 0.5 * n)  # in harmonics
    high = np.minimum(np.floor(top + 1e-9).astype(np.int64), width - 1)
    low = np.floor((1.0 - ROLLOFF_BAND) * top + 1e-9).astype(np.int64)
    some = high > low
    band = np.zeros(count)
    if some.all() and np.ptp(low) == 0 and np.ptp(high) == 0:  # one band for every window
        band = variance[:, low[0] + 1 : high[0] + 1].sum(axis=1)
    elif some.any():
        # Only the columns some band reaches, copied once, so that the sums (one reduceat,
        # the same additions in the same order) do not read the rest of every row.
        rows = np.flatnonzero(some)
        left, right = int(low[rows].min()) + 1, int(high[rows].max()) + 1
        part = variance[rows, left:right]
        base = np.arange(rows.size) * (right - left) - left
        band[rows] = _reduce_runs(np.add, part.reshape(-1), base + low[rows] + 1, base + high[rows] + 1)
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.where(total > 0, band / np.where(total > 0, total, 1.0), 0.0)


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


def _assemble(parts: list[dict], settings: WindowSettings, tracks) -> WindowTable:
    columns = {
        name: (np.concatenate([p[name] for p in parts]).astype(kind) if parts else np.zeros(0, kind))
        for name, kind in _ARRAYS
    }
    return WindowTable(**columns, settings=settings, tracks=tracks)


