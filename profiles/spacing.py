"""Station-spacing audit: spacing statistics, Nyquist wavelengths and risky stretches.

A profile sampled every dx resolves wavelengths down to the Nyquist wavelength 2 dx (Shannon
1949, "Communication in the presence of noise", Proc. IRE 37, 10-21); shorter wavelengths
fold back onto longer ones (aliasing). The audit reports, per segment, the Nyquist wavelength
for the median spacing (2 x median) and for the worst step (2 x maximum), and, against a
target shortest wavelength L the user must resolve, every stretch whose steps exceed L / 2.

Two samples per wavelength is the theoretical minimum; common practice asks for four to five
or more per shortest wavelength of interest (common practice, no single published source).
The audit is about spectral aliasing only. It does not judge whether a survey is adequate for
navigation or charting: that is decided under the applicable hydrographic survey standards by a
qualified surveyor.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from .geometry import Segment, Segments
from .tables import records

SEGMENT_COLUMNS = (
    "line",
    "segment",
    "n_stations",
    "start_km",
    "end_km",
    "length_km",
    "azimuth_deg",
    "straightness",
    "spacing_min_km",
    "spacing_median_km",
    "spacing_p95_km",
    "spacing_max_km",
    "nyquist_wavelength_km",
    "nyquist_wavelength_worst_km",
    "aliasing_risk",
    "too_short",
)
STRETCH_COLUMNS = ("line", "segment", "start_km", "end_km", "lon", "lat", "spacing_km", "n_steps")


def nyquist_wavelength(spacing: float | np.ndarray) -> float | np.ndarray:
    """Nyquist wavelength 2 dx (m) of a spacing dx (m) (Shannon 1949)."""
    return 2.0 * np.asarray(spacing, dtype=float) if np.ndim(spacing) else 2.0 * float(spacing)


@dataclass(frozen=True)
class SpacingAudit:
    """Result of :func:`audit_spacing`.

    Attributes
    ----------
    segments : pandas.DataFrame
        One row per segment, columns :data:`SEGMENT_COLUMNS` (lengths in km).
    risky_stretches : pandas.DataFrame
        One row per run of consecutive steps longer than half the shortest wavelength,
        columns :data:`STRETCH_COLUMNS`; ``lon``/``lat`` are the middle of the stretch and
        ``spacing_km`` its longest step. Empty without a target.
    shortest_wavelength, longest_wavelength : float or None
        The targets (m) the audit ran with.
    warnings : tuple of str
    """

    segments: pd.DataFrame
    risky_stretches: pd.DataFrame
    shortest_wavelength: float | None
    longest_wavelength: float | None
    warnings: tuple[str, ...]

    def to_json(self) -> dict:
        """Segments and risky stretches as lists of records (JSON-ready)."""
        return {
            "segments": records(self.segments),
            "risky_stretches": records(self.risky_stretches),
        }

    def __str__(self) -> str:
        risky = int(self.segments["aliasing_risk"].fillna(False).astype(bool).sum())
        return (
            f"spacing audit: {len(self.segments)} segments, {risky} at aliasing risk, "
            f"{len(self.risky_stretches)} risky stretches"
        )


def segment_statistics(segment: Segment) -> dict:
    """Spacing statistics of one segment (lengths in m)."""
    steps = segment.spacing
    return {
        "spacing_min": float(steps.min()),
        "spacing_median": float(np.median(steps)),
        "spacing_p95": float(np.percentile(steps, 95)),
        "spacing_max": float(steps.max()),
    }


def risky_steps(segment: Segment, shortest_wavelength: float) -> list[tuple[int, int]]:
    """Runs ``(first_step, last_step)`` of steps longer than half the shortest wavelength."""
    over = segment.spacing > shortest_wavelength / 2.0
    if not over.any():
        return []
    edges = np.diff(np.concatenate([[0], over.astype(np.int8), [0]]))
    starts = np.flatnonzero(edges == 1)
    stops = np.flatnonzero(edges == -1) - 1
    return list(zip(starts.tolist(), stops.tolist(), strict=True))


def audit_spacing(
    segments: Segments,
    *,
    shortest_wavelength: float | None = None,
    longest_wavelength: float | None = None,
) -> SpacingAudit:
    """Audit station spacing of every segment against the wavelengths the user needs.

    Parameters
    ----------
    segments : Segments
        From :func:`profiles.geometry.build_segments`.
    shortest_wavelength : float, optional
        Shortest wavelength to resolve (m). Steps longer than half of it are aliasing risks.
    longest_wavelength : float, optional
        Longest wavelength asked about (m). Segments shorter than two cycles of it are flagged
        ``too_short``.

    Returns
    -------
    SpacingAudit
    """
    rows, stretches, warnings = [], [], []
    for segment in segments:
        stats = segment_statistics(segment)
        runs = risky_steps(segment, shortest_wavelength) if shortest_wavelength else []
        too_short = bool(segment.length < 2.0 * longest_wavelength) if longest_wavelength else None
        rows.append(
            {
                "line": segment.line,
                "segment": segment.number,
                "n_stations": segment.n_stations,
                "start_km": segment.start / 1e3,
                "end_km": segment.end / 1e3,
                "length_km": segment.length / 1e3,
                "azimuth_deg": segment.azimuth_deg,
                "straightness": segment.straightness,
                "spacing_min_km": stats["spacing_min"] / 1e3,
                "spacing_median_km": stats["spacing_median"] / 1e3,
                "spacing_p95_km": stats["spacing_p95"] / 1e3,
                "spacing_max_km": stats["spacing_max"] / 1e3,
                "nyquist_wavelength_km": nyquist_wavelength(stats["spacing_median"]) / 1e3,
                "nyquist_wavelength_worst_km": nyquist_wavelength(stats["spacing_max"]) / 1e3,
                "aliasing_risk": bool(runs) if shortest_wavelength else None,
                "too_short": too_short,
            }
        )
        for first, last in runs:
            start, end = segment.distance[first], segment.distance[last + 1]
            middle = 0.5 * (start + end)
            stretches.append(
                {
                    "line": segment.line,
                    "segment": segment.number,
                    "start_km": start / 1e3,
                    "end_km": end / 1e3,
                    "lon": float(
                        np.interp(middle, segment.distance, np.unwrap(segment.lon, period=360)) + 180.0
                    )
                    % 360.0
                    - 180.0,
                    "lat": float(np.interp(middle, segment.distance, segment.lat)),
                    "spacing_km": float(segment.spacing[first : last + 1].max()) / 1e3,
                    "n_steps": last - first + 1,
                }
            )
        if too_short:
            warnings.append(
                f"segment {segment.label} is {segment.length / 1e3:.3f} km long, shorter "
                f"than two cycles of the longest wavelength asked for "
                f"({longest_wavelength / 1e3:.3f} km)"
            )
    if shortest_wavelength is None:
        warnings.append(
            "no shortest wavelength given: the audit reports Nyquist wavelengths only; "
            "give --shortest-wavelength to find stretches at aliasing risk"
        )
    elif stretches:
        warnings.append(
            f"{len(stretches)} stretches have station spacing above half the shortest "
            f"wavelength ({shortest_wavelength / 2e3:.3f} km): wavelengths near "
            f"{shortest_wavelength / 1e3:.3f} km alias there"
        )
    table = pd.DataFrame(rows, columns=list(SEGMENT_COLUMNS))
    risky = pd.DataFrame(stretches, columns=list(STRETCH_COLUMNS))
    return SpacingAudit(table, risky, shortest_wavelength, longest_wavelength, tuple(warnings))
