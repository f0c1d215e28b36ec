"""Stretches of homogeneous station spacing within a segment (pure arrays).

A line logged every 250 m and then every 1 km has no gap, so it stays one segment, but its two
parts alias very differently. This module finds such change points in the station spacing.

Rule (a change-point rule of our own, documented in docs/aliasing-budget.md)
---------------------------------------------------------------------------
Work on the logarithm of the step lengths, so that a change from 250 m to 1 km counts as much
as one from 1 km to 4 km.

1. **Abrupt changes.** At every station j (between step j - 1 and step j) take the median log
   step of the ``window_steps`` steps before it and of the ``window_steps`` steps after it
   (fewer near the ends of the segment, but at least three). Stations where the two medians
   differ by more than ``log(factor)`` are candidates. Each run of consecutive candidates
   holds one change; it is placed at the candidate station that splits the steps from
   ``window_steps`` before the run to ``window_steps`` after it with the least sum of
   absolute deviations from the two sides' medians (a least-absolute-deviation change point).
2. **Drifts.** A slow change (say 1 % per step) never makes neighbouring medians differ by
   the factor, so each stretch is then split by binary segmentation: at the station that
   maximises the mean-shift statistic of its log steps
   ``|S_j - (j/n) S_n| / sqrt(j (n - j) / n)`` (S the cumulative sum, j steps on the left of
   n), kept if the medians of the two parts differ by more than ``log(factor)``, and again
   within each part (Scott and Knott 1974, Biometrics 30, 507-512, for binary segmentation).
3. Stretches of fewer than ``min_steps`` steps are merged into the neighbour whose median log
   step is closer, the shortest first, until none is left (unless the whole segment is
   shorter); then neighbours whose medians differ by no more than the factor are joined, the
   closest pair first.

Medians make the rule indifferent to isolated long or short steps (a missed fix, a doubled
one) and to jitter: a uniformly logged line whose steps scatter by +-30 % stays one stretch.
"""

from __future__ import annotations

from dataclasses import dataclass
from itertools import pairwise

import numpy as np
import pandas as pd

from .errors import InputError

#: Default steps on each side whose median is compared.
WINDOW_STEPS = 10
#: Default ratio of median spacings that counts as a change.
SPACING_FACTOR = 1.5
#: Default fewest steps in a stretch (shorter ones are merged into a neighbour).
MIN_STEPS = 5
#: Fewest steps on each side of a station for it to be a change point.
MIN_WINDOW = 3


@dataclass(frozen=True)
class StretchSplit:
    """Stretches of homogeneous spacing of one segment.

    Stretch ``i`` runs from station ``first[i]`` to station ``last[i]`` (inclusive); consecutive
    stretches share their boundary station (``last[i] == first[i + 1]``), so every step belongs
    to exactly one stretch.

    Attributes
    ----------
    first, last : ndarray of int
        Station positions (into the input distance array) of each stretch's ends.
    spacing : ndarray
        Median step of each stretch (m).
    start, end : ndarray
        Distance of each stretch's first and last station (m).
    factor : float
        Ratio of medians that counted as a change.
    window_steps : int
        Steps compared on each side.
    """

    first: np.ndarray
    last: np.ndarray
    spacing: np.ndarray
    start: np.ndarray
    end: np.ndarray
    factor: float
    window_steps: int

    def __len__(self) -> int:
        return int(self.first.size)

    @property
    def n_steps(self) -> np.ndarray:
        """Steps in each stretch."""
        return self.last - self.first

    def to_frame(self) -> pd.DataFrame:
        """One row per stretch: ``first_station``, ``last_station``, ``n_steps``, ``start_km``,
        ``end_km``, ``spacing_km``."""
        return pd.DataFrame(
            {
                "first_station": self.first,
                "last_station": self.last,
                "n_steps": self.n_steps,
                "start_km": self.start / 1e3,
                "end_km": self.end / 1e3,
                "spacing_km": self.spacing / 1e3,
            }
        )

    def __str__(self) -> str:
        parts = [
            f"{s / 1e3:.3f}-{e / 1e3:.3f} km every {dx:.1f} m"
            for s, e, dx in zip(self.start, self.end, self.spacing, strict=True)
        ]
        return f"{len(self)} stretches of homogeneous spacing: " + "; ".join(parts)


def _side_medians(log_step: np.ndarray, window: int, min_window: int) -> tuple[np.ndarray, np.ndarray]:
    """Median log step of up to ``window`` steps before and after every station (NaN where
    fewer than ``min_window`` exist)."""
    from numpy.lib.stride_tricks import sliding_window_view

    m = log_step.size
    before = np.full(m + 1, np.nan)
    after = np.full(m + 1, np.nan)
    if m >= window:
        # np.median of every window (steps i .. i + window - 1), from the sorted windows: the
        # middle value, or the mean of the two middle ones (a small sort beats a partition)
        ordered = np.sort(sliding_window_view(log_step, window), axis=1)
        half = window // 2
        full = ordered[:, half] if window % 2 else (ordered[:, half - 1] + ordered[:, half]) / 2.0
        before[window:] = full
        after[: m - window + 1] = full
    # Near the ends the windows are shorter (at least min_window steps).
    for j in range(min(window, m + 1)):
        if j >= min_window:
            before[j] = np.median(log_step[:j])
    for j in range(max(m - window + 1, 0), m + 1):
        if m - j >= min_window:
            after[j] = np.median(log_step[j:])
    return before, after


def homogeneous_stretches(
    distance: np.ndarray,
    *,
    factor: float = SPACING_FACTOR,
    window_steps: int = WINDOW_STEPS,
    min_steps: int = MIN_STEPS,
) -> StretchSplit:
    """Split a segment where its station spacing changes markedly (see the module notes).

    Parameters
    ----------
    distance : ndarray
        Along-line distance of each station (m), strictly increasing.
    factor : float
        Ratio of the median spacing after a station to that before it (or the inverse) above
        which the station is a change point; greater than 1 (default 1.5).
    window_steps : int
        Steps on each side whose median is compared (default 10).
    min_steps : int
        Fewest steps in a stretch; shorter ones are merged into a neighbour (default 10).

    Returns
    -------
    StretchSplit

    Examples
    --------
    Forty steps of 250 m, then forty of 1 km:

    >>> distance = np.concatenate([np.arange(41) * 250.0, 10_000.0 + np.arange(1, 41) * 1000.0])
    >>> split = homogeneous_stretches(distance)
    >>> split.first.tolist(), split.last.tolist(), split.spacing.tolist()
    ([0, 40], [40, 80], [250.0, 1000.0])
    """
    distance = np.asarray(distance, dtype=float)
    if distance.ndim != 1 or distance.size < 2:
        raise InputError("distance: need a one-dimensional array of at least two stations")
    step = np.diff(distance)
    if not np.all(step > 0):
        raise InputError("distance: must increase strictly (merge repeated stations first)")
    if not factor > 1:
        raise InputError(f"factor: the spacing ratio that counts as a change must exceed 1 (got {factor})")
    if int(window_steps) < MIN_WINDOW or int(min_steps) < 1:
        raise InputError(
            f"window_steps must be at least {MIN_WINDOW} and min_steps at least 1 "
            f"(got {window_steps} and {min_steps})"
        )
    window_steps, min_steps = int(window_steps), int(min_steps)
    log_step = np.log(step)
    before, after = _side_medians(log_step, window_steps, MIN_WINDOW)
    score = np.abs(after - before)
    candidate = np.isfinite(score) & (score > np.log(factor))
    cuts = _locate_changes(candidate, log_step, window_steps)
    bounds = np.concatenate([[0], cuts, [step.size]]).astype(np.intp)
    bounds = _split_drifts(bounds, log_step, np.log(factor), min_steps)
    bounds = _merge_short(bounds, log_step, min_steps)
    bounds = _merge_similar(bounds, log_step, np.log(factor))
    first, last = bounds[:-1], bounds[1:]
    spacing = np.array([np.median(step[a:b]) for a, b in zip(first, last, strict=True)])
    return StretchSplit(
        first=first,
        last=last,
        spacing=spacing,
        start=distance[first],
        end=distance[last],
        factor=float(factor),
        window_steps=window_steps,
    )


def _absolute_deviation(values: np.ndarray) -> float:
    return float(np.sum(np.abs(values - np.median(values)))) if values.size else 0.0


def _locate_changes(candidate: np.ndarray, log_step: np.ndarray, window: int) -> np.ndarray:
    """One change point per run of candidate stations: the station of the run that splits the
    steps from ``window`` before the run to ``window`` after it with the least sum of absolute
    deviations from the medians of the two sides."""
    where = np.flatnonzero(candidate)
    if where.size == 0:
        return where
    breaks = np.flatnonzero(np.diff(where) > 1)
    run_first = where[np.concatenate([[0], breaks + 1])]
    run_last = where[np.concatenate([breaks, [where.size - 1]])]
    cuts = []
    for first, last in zip(run_first, run_last, strict=True):
        lo, hi = max(first - window, 0), min(last + window, log_step.size)
        stations = np.arange(first, last + 1)
        costs = [_absolute_deviation(log_step[lo:j]) + _absolute_deviation(log_step[j:hi]) for j in stations]
        cuts.append(int(stations[int(np.argmin(costs))]))
    return np.asarray(cuts, dtype=np.intp)


def _split_drifts(bounds: np.ndarray, log_step: np.ndarray, threshold: float, min_steps: int) -> np.ndarray:
    """Binary segmentation of every stretch on the mean shift of its log steps, a split kept
    where the medians of the two parts differ by more than ``threshold``."""
    pending = list(zip(bounds[:-1].tolist(), bounds[1:].tolist(), strict=True))
    kept = {int(bounds[0]), int(bounds[-1])}
    while pending:
        a, b = pending.pop()
        kept.update((a, b))
        n = b - a
        if n < 2 * min_steps:
            continue
        values = log_step[a:b]
        cumulative = np.cumsum(values)
        j = np.arange(min_steps, n - min_steps + 1)
        statistic = np.abs(cumulative[j - 1] - j / n * cumulative[-1]) / np.sqrt(j * (n - j) / n)
        split = int(j[np.argmax(statistic)])
        if abs(np.median(values[:split]) - np.median(values[split:])) > threshold:
            pending.extend([(a, a + split), (a + split, b)])
    return np.asarray(sorted(kept), dtype=np.intp)


def _merge_short(bounds: np.ndarray, log_step: np.ndarray, min_steps: int) -> np.ndarray:
    """Remove boundaries until every stretch has at least ``min_steps`` steps (or one is left).

    The shortest stretch goes first; it joins the neighbour whose median log step is closer.
    """
    bounds = list(bounds)
    while len(bounds) > 2:
        sizes = np.diff(bounds)
        shortest = int(np.argmin(sizes))
        if sizes[shortest] >= min_steps:
            break
        own = np.median(log_step[bounds[shortest] : bounds[shortest + 1]])
        left = right = np.inf
        if shortest > 0:
            left = abs(own - np.median(log_step[bounds[shortest - 1] : bounds[shortest]]))
        if shortest < len(sizes) - 1:
            right = abs(own - np.median(log_step[bounds[shortest + 1] : bounds[shortest + 2]]))
        # Joining the left neighbour removes the stretch's first boundary, the right its last.
        del bounds[shortest if left <= right else shortest + 1]
    return np.asarray(bounds, dtype=np.intp)


def _merge_similar(bounds: np.ndarray, log_step: np.ndarray, threshold: float) -> np.ndarray:
    """Join neighbouring stretches whose median log steps differ by at most ``threshold``."""
    bounds = list(bounds)
    while len(bounds) > 2:
        medians = [np.median(log_step[a:b]) for a, b in pairwise(bounds)]
        differences = np.abs(np.diff(medians))
        closest = int(np.argmin(differences))
        if differences[closest] > threshold:
            break
        del bounds[closest + 1]
    return np.asarray(bounds, dtype=np.intp)


def stretches_text(count: int) -> str:
    """``"1 stretch"`` or ``"3 stretches"``, for messages."""
    return f"{count} stretch" if count == 1 else f"{count} stretches"
