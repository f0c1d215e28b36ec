"""Station-spacing audit: spacing statistics, Nyquist wavelengths and risky stretches.

A profile sampled every dx resolves wavelengths down to the Nyquist wavelength 2 dx (Shannon
1949, "Communication in the presence of noise", Proc. IRE 37, 10-21); shorter wavelengths
fold back onto longer ones (aliasing). The audit reports, per segment, the Nyquist wavelength
for the median spacing (2 x median) and for the worst step (2 x maximum), and, against a
target shortest wavelength L the user must resolve, every stretch whose steps exceed L / 2.

Two samples per wavelength is the theoretical minimum; common practice asks for four to five
or more per shortest wavelength of interest (common practice, no single published source).
With a field, the audit also draws up the **aliasing budget** (:func:`alias_budget`): each
segment is split into stretches of homogeneous spacing (:mod:`profiles.stretches`), the
spectrum's fall-off is fitted on the segment's best-sampled stretches (:mod:`profiles.falloff`),
and every stretch gets the aliased power at the target wavelength, the aliased share of its
variance and the spacing that would keep the aliased power under a tolerance
(:mod:`profiles.budget`; docs/aliasing-budget.md).

The audit is about spectral aliasing only. It does not judge whether a survey is adequate for
navigation or charting: that is decided under the applicable hydrographic survey standards by a
qualified surveyor.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, field, replace

import numpy as np
import pandas as pd

from .budget import DEFAULT_TOLERANCE, aliased_variance_fraction, contamination, recommended_spacing
from .errors import InputError
from .falloff import MIN_SAMPLES, FalloffKind, FalloffModel, fit_falloff_many, piece_spectra
from .geometry import Segment, Segments
from .stretches import homogeneous_stretches, stretches_text
from .tables import clean, records

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
#: Columns of the aliasing budget's stretches of homogeneous spacing.
BUDGET_STRETCH_COLUMNS = (
    "line",
    "segment",
    "stretch",
    "start_km",
    "end_km",
    "lon",
    "lat",
    "n_stations",
    "spacing_km",
    "fitted_on",
    "alias_contamination",
    "alias_contamination_low",
    "alias_contamination_high",
    "aliased_variance_fraction",
    "recommended_spacing_km",
    "recommendation_basis",
    "exceeds_recommendation",
)
#: Columns the budget adds to the segments table (CSV); JSON nests the fall-off instead.
BUDGET_SEGMENT_COLUMNS = (
    "recommended_spacing_km",
    "recommendation_basis",
    "falloff_model",
    "falloff_beta",
    "falloff_beta_err",
    "falloff_depth_km",
    "falloff_depth_err_km",
    "falloff_noise_floor_per_cycle_per_km",
)
#: Columns :meth:`AliasBudget.for_windows` gives every along-track window.
WINDOW_BUDGET_COLUMNS = (
    "alias_contamination",
    "alias_contamination_low",
    "alias_contamination_high",
    "dominant_alias_contamination",
    "dominant_alias_contamination_low",
    "dominant_alias_contamination_high",
    "aliased_variance_fraction",
    "recommended_spacing_km",
    "exceeds_recommendation",
)
#: Stretches whose spacing is within this factor of the finest one count as best sampled.
BEST_SAMPLED_FACTOR = 1.25


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
    budget : AliasBudget or None
        The aliasing budget, when the audit ran with a field.
    """

    segments: pd.DataFrame
    risky_stretches: pd.DataFrame
    shortest_wavelength: float | None
    longest_wavelength: float | None
    warnings: tuple[str, ...]
    budget: AliasBudget | None = None

    def segments_table(self) -> pd.DataFrame:
        """The segments, with the budget's columns (:data:`BUDGET_SEGMENT_COLUMNS`) when there
        is a budget: the table written as segments.csv."""
        if self.budget is None:
            return self.segments
        return self.segments.merge(self.budget.segments, on=["line", "segment"], how="left")

    def to_json(self) -> dict:
        """Segments and risky stretches as lists of records (JSON-ready); with a budget, each
        segment also has ``recommended_spacing_km``, ``recommendation_basis`` and ``falloff``
        (:meth:`profiles.falloff.FalloffModel.to_json`, or None), and ``stretches`` lists the
        budget's stretches."""
        segments = records(self.segments)
        document = {"segments": segments, "risky_stretches": records(self.risky_stretches)}
        if self.budget is not None:
            table = self.budget.segments.set_index(["line", "segment"])
            for record in segments:
                key = (record["line"], record["segment"])
                record["recommended_spacing_km"] = clean(float(table.loc[key, "recommended_spacing_km"]))
                record["recommendation_basis"] = table.loc[key, "recommendation_basis"]
                falloff = self.budget.falloff(*key)
                record["falloff"] = falloff.to_json() if falloff is not None else None
            document["stretches"] = records(self.budget.stretches)
            document["budget"] = self.budget.settings_json()
        return document

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


def position_at(segment: Segment, distance: float) -> tuple[float, float]:
    """Longitude and latitude (degrees) at an along-line distance (m) within a segment,
    interpolated linearly between stations (longitude unwrapped across the antimeridian)."""
    lon = np.interp(distance, segment.distance, np.unwrap(segment.lon, period=360.0))
    lat = np.interp(distance, segment.distance, segment.lat)
    return float((lon + 180.0) % 360.0 - 180.0), float(lat)


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
    field: str | None = None,
    model: FalloffKind = "power-law",
    tolerance: float = DEFAULT_TOLERANCE,
    band: tuple[float, float] | None = None,
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
    field : str, optional
        With a field, the aliasing budget is drawn up too (:func:`alias_budget`).
    model, tolerance, band
        Passed to :func:`alias_budget`.

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
            lon, lat = position_at(segment, 0.5 * (start + end))
            stretches.append(
                {
                    "line": segment.line,
                    "segment": segment.number,
                    "start_km": start / 1e3,
                    "end_km": end / 1e3,
                    "lon": lon,
                    "lat": lat,
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
    audit = SpacingAudit(table, risky, shortest_wavelength, longest_wavelength, tuple(warnings))
    if field is None:
        return audit
    budget = alias_budget(
        segments, field, shortest_wavelength=shortest_wavelength, model=model, tolerance=tolerance, band=band
    )
    return replace(audit, budget=budget, warnings=audit.warnings + budget.warnings)


# --------------------------------------------------------------------------------------------
# Aliasing budget
# --------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class AliasBudget:
    """Aliasing budget of one field over the segments of a survey.

    Attributes
    ----------
    field : str
        The field budgeted.
    model : str
        Fall-off form: ``"power-law"`` or ``"exponential"``.
    tolerance : float
        Largest acceptable aliased power at the target, a fraction.
    shortest_wavelength : float or None
        The target wavelength L (m); without it only the aliased variance is budgeted.
    stretches : pandas.DataFrame
        One row per stretch of homogeneous spacing, columns :data:`BUDGET_STRETCH_COLUMNS`:
        ``alias_contamination`` (and ``_low``, ``_high``) is the aliased power at L over the
        true power there; ``aliased_variance_fraction`` the variance folded into the band
        over the variance resolved in it; ``recommended_spacing_km`` the spacing that keeps
        the contamination under the tolerance (the segment's, as the fall-off is fitted per
        segment); ``exceeds_recommendation`` whether the stretch is coarser than that (an
        infill candidate); ``fitted_on`` whether the fall-off was fitted on it.
    segments : pandas.DataFrame
        One row per segment: ``line``, ``segment`` and :data:`BUDGET_SEGMENT_COLUMNS`.
    falloffs : dict
        ``{(line, segment): FalloffModel or None}`` (None where no fit was possible).
    warnings : tuple of str
    """

    field: str
    model: str
    tolerance: float
    shortest_wavelength: float | None
    stretches: pd.DataFrame
    segments: pd.DataFrame
    falloffs: dict = field(repr=False)
    warnings: tuple[str, ...] = ()

    def falloff(self, line: str, segment: int) -> FalloffModel | None:
        """The fall-off fitted on a segment (None if none could be fitted)."""
        return self.falloffs.get((line, segment))

    def infill(self) -> pd.DataFrame:
        """The stretches whose spacing exceeds the recommended spacing."""
        return self.stretches[self.stretches["exceeds_recommendation"].eq(True)]

    def for_windows(self, windows: pd.DataFrame, *, spacing_column: str = "local_spacing_km") -> pd.DataFrame:
        """The budget's columns for along-track windows, aligned with ``windows``' index.

        ``windows`` needs ``line``, ``segment``, ``start_km``, ``end_km``,
        ``dominant_wavelength_km`` and the spacing column (km; by default the local median
        station spacing of :mod:`profiles.windows`). Each window is budgeted with its segment's
        fall-off, one vectorised call per segment. Columns :data:`WINDOW_BUDGET_COLUMNS`:
        the contamination at the target wavelength and at the window's dominant wavelength
        (each with its low-high range), the aliased variance fraction of the window, the
        segment's recommended spacing and whether the window's spacing exceeds it. NaN (None
        for the flag) where the segment has no fall-off.
        """
        out = pd.DataFrame(np.nan, index=windows.index, columns=list(WINDOW_BUDGET_COLUMNS))
        out["exceeds_recommendation"] = None
        recommended = self.segments.set_index(["line", "segment"])["recommended_spacing_km"]
        for (line, number), rows in windows.groupby(["line", "segment"], sort=False):
            falloff = self.falloff(line, number)
            if falloff is None:
                continue
            dx = rows[spacing_column].to_numpy(dtype=float) * 1e3
            length = (rows["end_km"] - rows["start_km"]).to_numpy(dtype=float) * 1e3
            out.loc[rows.index, "aliased_variance_fraction"] = aliased_variance_fraction(
                spacing=dx, length=length, falloff=falloff
            )
            dominant = contamination(
                rows["dominant_wavelength_km"].to_numpy(dtype=float) * 1e3, spacing=dx, falloff=falloff
            )
            out.loc[rows.index, "dominant_alias_contamination"] = dominant.value
            out.loc[rows.index, "dominant_alias_contamination_low"] = dominant.low
            out.loc[rows.index, "dominant_alias_contamination_high"] = dominant.high
            if self.shortest_wavelength:
                target = contamination(self.shortest_wavelength, spacing=dx, falloff=falloff)
                out.loc[rows.index, "alias_contamination"] = target.value
                out.loc[rows.index, "alias_contamination_low"] = target.low
                out.loc[rows.index, "alias_contamination_high"] = target.high
                spacing = float(recommended.get((line, number), np.nan))
                out.loc[rows.index, "recommended_spacing_km"] = spacing
                if np.isfinite(spacing):
                    out.loc[rows.index, "exceeds_recommendation"] = [bool(v) for v in dx / 1e3 > spacing]
        return out

    def settings_json(self) -> dict:
        """What the budget ran with: field, model, tolerance, target wavelength (km)."""
        return {
            "field": self.field,
            "model": self.model,
            "alias_tolerance": self.tolerance,
            "shortest_wavelength_km": None
            if self.shortest_wavelength is None
            else self.shortest_wavelength / 1e3,
        }

    def to_frame(self) -> pd.DataFrame:
        """The stretches table."""
        return self.stretches

    def __str__(self) -> str:
        fitted = sum(f is not None for f in self.falloffs.values())
        return (
            f"aliasing budget of {self.field}: {len(self.stretches)} stretches in "
            f"{len(self.segments)} segments ({fitted} with a fall-off), "
            f"{len(self.infill())} coarser than recommended"
        )


def best_sampled(spacing: np.ndarray, n_steps: np.ndarray, *, min_samples: int = MIN_SAMPLES) -> np.ndarray:
    """Indices of the best-sampled stretches: those with at least ``min_samples`` stations
    whose spacing is within :data:`BEST_SAMPLED_FACTOR` of the finest such stretch."""
    long_enough = np.flatnonzero(np.asarray(n_steps) + 1 >= min_samples)
    if long_enough.size == 0:
        return long_enough
    finest = np.min(spacing[long_enough])
    return long_enough[spacing[long_enough] <= BEST_SAMPLED_FACTOR * finest]


def segment_falloffs(
    segments: Sequence[Segment], field: str, splits: Sequence, *, model: FalloffKind, band
) -> list[tuple[FalloffModel | None, np.ndarray, str]]:
    """Fit the fall-off of ``field`` on the best-sampled stretches of each segment's split.

    The station values of each chosen stretch are taken in order as samples at the stretch's
    mean spacing (its length over its steps) and the pieces of a segment are fitted together
    (:func:`profiles.falloff.fit_falloff`); the fits of all segments run at once
    (:func:`profiles.falloff.fit_falloff_many`). The pieces are not interpolated onto a grid:
    linear interpolation between irregular stations averages neighbours and so damps signal
    and noise towards the Nyquist wavenumber (by up to a factor of three in power on average,
    and completely halfway between stations), which the fit would read as fall-off. The price
    is a warp of the distance axis by the local departures from the mean spacing, which moves
    wavenumbers by as much (a few per cent within a homogeneous stretch); for a power law that
    changes the level, not the slope.

    Returns
    -------
    list of (falloff, chosen, problem)
        Per segment: the model (None when it cannot be fitted), the indices of the stretches
        used, and the reason when there is no model.
    """
    found: list = [None] * len(segments)
    sets, fitted = [], []
    for number, (segment, split) in enumerate(zip(segments, splits, strict=True)):
        chosen = best_sampled(split.spacing, split.n_steps)
        if chosen.size == 0:
            found[number] = (None, chosen, f"no stretch has the {MIN_SAMPLES} stations a fall-off fit needs")
            continue
        values = segment.values[field]
        pieces = [values[split.first[i] : split.last[i] + 1] for i in chosen]
        spacings = [float((split.end[i] - split.start[i]) / split.n_steps[i]) for i in chosen]
        try:
            sets.append(piece_spectra(pieces, spacing=spacings))
        except InputError as error:
            found[number] = (None, chosen, str(error))
            continue
        fitted.append((number, chosen))
    for (number, chosen), falloff in zip(fitted, fit_falloff_many(sets, model=model, band=band), strict=True):
        failed = isinstance(falloff, InputError)
        found[number] = (None, chosen, str(falloff)) if failed else (falloff, chosen, "")
    return found


def alias_budget(
    segments: Segments,
    field: str,
    *,
    shortest_wavelength: float | None = None,
    model: FalloffKind = "power-law",
    tolerance: float = DEFAULT_TOLERANCE,
    band: tuple[float, float] | None = None,
) -> AliasBudget:
    """Aliasing budget of ``field``: fall-off per segment, contamination per stretch.

    Parameters
    ----------
    segments : Segments
    field : str
        Field to budget; its values must be finite at every station (read the survey with
        the field requested).
    shortest_wavelength : float, optional
        Target wavelength L (m) at which the contamination and the recommended spacing are
        reported.
    model : {"power-law", "exponential"}
        Fall-off form: exponential for potential fields.
    tolerance : float
        Largest acceptable contamination, a fraction (default 0.01).
    band : (longest, shortest), optional
        Wavelengths (m) bounding the fit; default the automatic rule of
        :mod:`profiles.falloff`.

    Returns
    -------
    AliasBudget
    """
    if not 0.0 < float(tolerance) < 1.0:
        raise InputError(f"--alias-tolerance: must be a fraction between 0 and 1 (got {tolerance})")
    rows, segment_rows, falloffs, warnings = [], [], {}, []
    for segment in segments:
        if field not in segment.values:
            known = ", ".join(segment.values) or "none"
            raise InputError(f"field {field!r}: not in the survey; fields: {known}")
        if not np.all(np.isfinite(segment.values[field])):
            raise InputError(
                f"field {field!r}: has missing values; read the survey with this field requested"
            )
    splits = [homogeneous_stretches(segment.distance) for segment in segments]
    fits = segment_falloffs(list(segments), field, splits, model=model, band=band)
    for segment, split, (falloff, chosen, problem) in zip(segments, splits, fits, strict=True):
        falloffs[(segment.line, segment.number)] = falloff
        recommendation = None
        if falloff is None:
            warnings.append(f"segment {segment.label}: no aliasing budget for {field} ({problem})")
        elif not falloff.falls_off:
            warnings.append(
                f"segment {segment.label}: {field}: {falloff.message}; no spacing can be recommended"
            )
        if falloff is not None and shortest_wavelength:
            recommendation = recommended_spacing(shortest_wavelength, falloff=falloff, tolerance=tolerance)
            if recommendation.message and falloff.falls_off:
                warnings.append(f"segment {segment.label}: {field}: {recommendation.message}")
        segment_rows.append(_segment_row(segment, falloff, recommendation))
        rows.extend(_stretch_rows(segment, split, chosen, falloff, recommendation, shortest_wavelength))
    stretches = pd.DataFrame(rows, columns=list(BUDGET_STRETCH_COLUMNS))
    table = pd.DataFrame(segment_rows, columns=["line", "segment", *BUDGET_SEGMENT_COLUMNS])
    coarse = stretches[stretches["exceeds_recommendation"].eq(True)]
    if len(coarse):
        warnings.append(
            f"{stretches_text(len(coarse))} of {field} {'is' if len(coarse) == 1 else 'are'} spaced more "
            "coarsely than recommended for at most "
            f"{100 * tolerance:g} % aliased power at {shortest_wavelength / 1e3:.4g} km"
        )
    return AliasBudget(
        field, model, float(tolerance), shortest_wavelength, stretches, table, falloffs, tuple(warnings)
    )


def _segment_row(segment: Segment, falloff: FalloffModel | None, recommendation) -> dict:
    spacing = float(recommendation.spacing) if recommendation is not None else np.nan
    basis = recommendation.basis.item() if recommendation is not None else None
    fields = {}
    if falloff is not None:
        fields = {
            "falloff_model": falloff.model,
            "falloff_beta": falloff.beta,
            "falloff_beta_err": falloff.shape_err if falloff.model == "power-law" else None,
            "falloff_depth_km": falloff.depth / 1e3 if falloff.depth is not None else None,
            "falloff_depth_err_km": falloff.shape_err / 1e3 if falloff.model == "exponential" else None,
            "falloff_noise_floor_per_cycle_per_km": falloff.noise_floor / 1e3,
        }
    return {
        "line": segment.line,
        "segment": segment.number,
        "recommended_spacing_km": spacing / 1e3,
        "recommendation_basis": basis,
        **fields,
    }


def _stretch_rows(segment, split, chosen, falloff, recommendation, shortest_wavelength) -> list[dict]:
    n = len(split)
    nan = np.full(n, np.nan)
    value = low = high = fraction = nan
    if falloff is not None:
        lengths = split.end - split.start
        fraction = np.atleast_1d(
            aliased_variance_fraction(spacing=split.spacing, length=lengths, falloff=falloff)
        )
        if shortest_wavelength:
            budget = contamination(shortest_wavelength, spacing=split.spacing, falloff=falloff)
            value, low, high = budget.value, budget.low, budget.high
    recommended = float(recommendation.spacing) if recommendation is not None else np.nan
    basis = recommendation.basis.item() if recommendation is not None else None
    rows = []
    for i in range(n):
        lon, lat = position_at(segment, 0.5 * (split.start[i] + split.end[i]))
        rows.append(
            {
                "line": segment.line,
                "segment": segment.number,
                "stretch": i + 1,
                "start_km": split.start[i] / 1e3,
                "end_km": split.end[i] / 1e3,
                "lon": lon,
                "lat": lat,
                "n_stations": int(split.n_steps[i] + 1),
                "spacing_km": split.spacing[i] / 1e3,
                "fitted_on": bool(i in chosen),
                "alias_contamination": value[i],
                "alias_contamination_low": low[i],
                "alias_contamination_high": high[i],
                "aliased_variance_fraction": fraction[i],
                "recommended_spacing_km": recommended / 1e3,
                "recommendation_basis": basis,
                "exceeds_recommendation": (
                    bool(split.spacing[i] > recommended) if np.isfinite(recommended) else None
                ),
            }
        )
    return rows
