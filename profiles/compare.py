"""Comparing survey lines: one row per segment, and the fabric fit across azimuths.

The line table puts every segment's geometry, spacing, dominant wavelength (with Fisher's
white-noise p-value and the red-noise verdict), second strongest significant wavelength,
spectral slope and share at aliasing risk side by side, all computed with one frozen set of
options so that differences between lines are not artefacts of the processing.

The fabric fit (:func:`profiles.fabric.fit_fabric`) uses one wavelength per straight segment:
the dominant red-noise-significant harmonic, or the strongest significant one inside a band the
user names (the usual case: a seamount or a regional trend can dominate a line whose fabric
peak is weaker). Each wavelength's uncertainty is half the harmonic spacing at that
wavelength, lambda^2 / (2 L) for a segment of length L, which weights the fit.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
import pandas as pd

from .analysis import SegmentSpectrum
from .errors import InputError, ProfilesError
from .geometry import Segment
from .spectral.slope import power_law_fit

LINE_COLUMNS = (
    "line",
    "segment",
    "azimuth_deg",
    "length_km",
    "straightness",
    "spacing_median_km",
    "nyquist_wavelength_km",
    "dominant_wavelength_km",
    "fisher_p_value",
    "red_noise_significant",
    "second_wavelength_km",
    "beta",
    "beta_err",
    "aliasing_share",
)
#: Segments less straight than this (chord over length) have no single azimuth for the
#: fabric fit.
MIN_STRAIGHTNESS = 0.95


@dataclass(frozen=True)
class LineTable:
    """One row per segment; see :data:`LINE_COLUMNS`.

    Attributes
    ----------
    frame : pandas.DataFrame
    field : str
    alpha : float
    """

    frame: pd.DataFrame
    field: str
    alpha: float

    def to_frame(self) -> pd.DataFrame:
        """The table (lengths in km)."""
        return self.frame.copy()

    def __str__(self) -> str:
        return f"line comparison of {self.field}: {len(self.frame)} segments"


def _peak_in_band(result: SegmentSpectrum, band: tuple[float, float] | None) -> int | None:
    """Strongest red-noise-significant harmonic, inside ``band`` (m) when given."""
    table = result.harmonics
    flagged = np.flatnonzero(result.red_noise.significant)
    if band is not None:
        lo, hi = sorted(band)
        flagged = flagged[(table.wavelength[flagged] >= lo) & (table.wavelength[flagged] <= hi)]
    if flagged.size == 0:
        return None
    return int(flagged[np.argmax(table.variance[flagged])])


def line_table(
    pairs: Sequence[tuple[Segment, SegmentSpectrum]],
    *,
    field: str,
    alpha: float,
    aliasing_share: dict[str, float] | None = None,
) -> LineTable:
    """Compare segments.

    Parameters
    ----------
    pairs : sequence of (Segment, SegmentSpectrum)
        Each segment with its analysis; the analysis should carry a density (multitaper by
        default) for the slope; without one the periodogram of the harmonic table is used.
    field : str
    alpha : float
        Level the verdicts used.
    aliasing_share : dict, optional
        ``"line/segment"`` -> share (0..1) of the segment's windows at aliasing risk.

    Returns
    -------
    LineTable
    """
    rows = []
    for segment, result in pairs:
        table = result.harmonics
        fisher = result.fisher
        peaks = result.peak_harmonics(2)
        dominant = int(fisher.dominant_k)
        second = next((int(k) for k in peaks if int(k) != dominant), None)
        if result.density is not None:
            wavenumber, density = result.density.wavenumber, result.density.psd
        else:
            wavenumber, density = table.wavenumber, table.variance
        try:
            slope = power_law_fit(wavenumber, density)
            beta, beta_err = slope.beta, slope.beta_err
        except InputError:
            beta = beta_err = float("nan")
        steps = segment.spacing
        rows.append(
            {
                "line": segment.line,
                "segment": segment.number,
                "azimuth_deg": segment.azimuth_deg,
                "length_km": segment.length / 1e3,
                "straightness": segment.straightness,
                "spacing_median_km": float(np.median(steps)) / 1e3,
                "nyquist_wavelength_km": 2.0 * float(np.median(steps)) / 1e3,
                "dominant_wavelength_km": float(table.wavelength[dominant]) / 1e3,
                "fisher_p_value": float(fisher.p_value),
                "red_noise_significant": bool(result.red_noise.significant[dominant]),
                "second_wavelength_km": (
                    float("nan") if second is None else float(table.wavelength[second]) / 1e3
                ),
                "beta": beta,
                "beta_err": beta_err,
                "aliasing_share": (aliasing_share or {}).get(segment.label, float("nan")),
            }
        )
    return LineTable(pd.DataFrame(rows, columns=list(LINE_COLUMNS)), field, alpha)


@dataclass(frozen=True)
class FabricInput:
    """The wavelengths that went into a fabric fit, and the segments left out (with why)."""

    labels: tuple[str, ...]
    azimuth_deg: np.ndarray
    wavelength: np.ndarray
    wavelength_err: np.ndarray
    left_out: tuple[str, ...]


def fabric_input(
    pairs: Sequence[tuple[Segment, SegmentSpectrum]],
    *,
    band: tuple[float, float] | None = None,
    exclude: Sequence[str] = (),
) -> FabricInput:
    """One apparent wavelength per straight segment with a significant peak (in ``band``).

    ``exclude`` holds line ids or ``line/segment`` labels to leave out.
    """
    labels, azimuth, wavelength, error, left_out = [], [], [], [], []
    for segment, result in pairs:
        if segment.line in exclude or segment.label in exclude:
            left_out.append(f"{segment.label}: excluded by request")
            continue
        if segment.straightness < MIN_STRAIGHTNESS:
            left_out.append(f"{segment.label}: not straight (straightness {segment.straightness:.2f})")
            continue
        k = _peak_in_band(result, band)
        if k is None:
            where = "" if band is None else (f" between {min(band) / 1e3:g} and {max(band) / 1e3:g} km")
            left_out.append(f"{segment.label}: no red-noise-significant peak{where}")
            continue
        length = result.uniform.n * result.uniform.spacing
        value = float(result.harmonics.wavelength[k])
        labels.append(segment.label)
        azimuth.append(segment.azimuth_deg)
        wavelength.append(value)
        error.append(value**2 / (2.0 * length))
    return FabricInput(
        tuple(labels), np.array(azimuth), np.array(wavelength), np.array(error), tuple(left_out)
    )


#: A segment whose wavenumber misfit exceeds this many harmonic half-widths is left out of
#: the fabric fit (and named), one at a time, while more than three segments remain.
OUTLIER_WIDTHS = 3.0


def fit_survey_fabric(
    pairs: Sequence[tuple[Segment, SegmentSpectrum]],
    *,
    band: tuple[float, float] | None = None,
    exclude: Sequence[str] = (),
    reject_outliers: bool = True,
):
    """Fit the fabric's true wavelength and strike to the segments' apparent wavelengths.

    With ``reject_outliers``, while some segment misfits by more than :data:`OUTLIER_WIDTHS`
    harmonic half-widths in wavenumber (1 / (2 L) for a segment of length L) and more than
    three segments remain, the segment whose removal lets the others fit best is left out
    (and named) if it misfits that fit by more than the same amount. Such a
    segment usually carries another feature (a seamount, a regional trend) or crosses the
    fabric so obliquely that its apparent wavelength is longer than the segment resolves.

    Returns
    -------
    (FabricFit, FabricInput)

    Raises
    ------
    InputError
        Fewer than two usable segments, azimuths spanning less than 20 degrees, or a segment
        along the strike (the message names it; leave it out with ``exclude`` or choose a
        ``band``).
    """
    from .fabric import fit_fabric

    chosen = fabric_input(pairs, band=band, exclude=exclude)
    left_out = list(chosen.left_out)
    keep = np.ones(len(chosen.labels), bool)

    def fit(mask):
        labels = [label for label, k in zip(chosen.labels, mask, strict=True) if k]
        if len(labels) < 2:
            detail = "; ".join(left_out) or "no segments"
            raise InputError(
                f"fabric fit needs two or more straight segments with a significant "
                f"peak; found {len(labels)} ({detail})"
            )
        return fit_fabric(
            chosen.azimuth_deg[mask],
            chosen.wavelength[mask],
            wavelength_err=chosen.wavelength_err[mask],
            lines=labels,
        )

    def misfit(result, mask):
        # misfit in wavenumber, in harmonic half-widths 1/(2L) = err / lambda^2
        observed = chosen.wavelength[mask]
        predicted = np.asarray(result.predicted_wavelength(chosen.azimuth_deg[mask]), dtype=float)
        width = chosen.wavelength_err[mask] / observed**2
        return np.abs(1.0 / observed - 1.0 / predicted) / width

    result = fit(keep)
    while reject_outliers and keep.sum() > 3 and misfit(result, keep).max() > OUTLIER_WIDTHS:
        # Leave each segment out in turn; the one whose removal lets the others fit best is
        # the most inconsistent (an outlier bends a fit that includes it, so its own
        # residual in the full fit need not be the largest).
        best = None
        for position in np.flatnonzero(keep):
            trial = keep.copy()
            trial[position] = False
            try:
                candidate = fit(trial)
            except InputError:
                continue
            rest = float(np.sum(misfit(candidate, trial) ** 2))
            if best is None or rest < best[0]:
                best = (rest, position, candidate)
        if best is None:
            break
        _, position, candidate = best
        alone = np.zeros_like(keep)
        alone[position] = True
        width = float(misfit(candidate, alone)[0])
        if width <= OUTLIER_WIDTHS:
            break
        keep[position] = False
        result = candidate
        left_out.append(
            f"{chosen.labels[position]}: misfit of {width:.1f} harmonic half-widths "
            f"(apparent {chosen.wavelength[position] / 1e3:.2f} km)"
        )
    fit = result
    used = FabricInput(
        tuple(np.array(chosen.labels)[keep]),
        chosen.azimuth_deg[keep],
        chosen.wavelength[keep],
        chosen.wavelength_err[keep],
        tuple(left_out),
    )
    return fit, used


@dataclass(frozen=True, eq=False)
class SurveyComparison:
    """Everything ``profiles compare`` reports.

    Attributes
    ----------
    table : LineTable
    spectra : tuple of (Segment, SegmentSpectrum)
    fabric : FabricFit or None
        None when the fit was refused (``fabric_note`` says why).
    fabric_note : str
    fabric_left_out : tuple of str
        Segments left out of the fabric fit, each with its reason.
    windows : WindowTable or None
        The windows behind ``aliasing_share``.
    warnings : tuple of str
    """

    table: LineTable
    spectra: tuple
    fabric: object | None
    fabric_note: str
    fabric_left_out: tuple[str, ...]
    windows: object | None
    warnings: tuple[str, ...]

    def to_json(self) -> dict:
        """``segments[...]`` and ``fabric{...}`` (null with ``fabric_note`` when refused)."""
        from .tables import records

        document = {
            "field": self.table.field,
            "alpha": self.table.alpha,
            "segments": records(self.table.frame),
        }
        document["fabric"] = self.fabric.to_json() if self.fabric is not None else None
        if self.fabric is None:
            document["fabric_note"] = self.fabric_note
        document["fabric_left_out"] = list(self.fabric_left_out)
        return document

    def overlay(self) -> list[dict]:
        """Items for :func:`profiles.figures.spectra.overlaid_spectra_figure` (per cycle/km)."""
        items = []
        for _, result in self.spectra:
            if result.density is None:
                continue
            frame = result.density.to_frame()
            items.append(
                {
                    "label": result.label,
                    "wavenumber_per_km": frame["wavenumber_per_km"].to_numpy(),
                    "density": frame["psd_per_cycle_per_km"].to_numpy(),
                    "lower": frame["psd_lower_per_cycle_per_km"].to_numpy(),
                    "upper": frame["psd_upper_per_cycle_per_km"].to_numpy(),
                }
            )
        return items


def compare_survey(
    segments,
    *,
    field: str,
    method: str = "multitaper",
    nw: float = 4.0,
    alpha: float = 0.05,
    band: tuple[float, float] | None = None,
    exclude: Sequence[str] = (),
    shortest_wavelength: float | None = None,
    window: float | None = None,
    step: float | None = None,
    spacing: float | None = None,
    interpolation: str = "linear",
    segment_length: float | None = None,
    overlap: float = 0.5,
    confidence: float = 0.95,
) -> SurveyComparison:
    """Analyse every segment with one frozen set of options and compare them.

    Parameters
    ----------
    segments : profiles.geometry.Segments
    field : str
    method : {"multitaper", "welch"}
        Density for the overlaid spectra and the slope.
    nw, alpha
        Multitaper NW; significance level of both tests.
    band : (shortest, longest) wavelength in m, optional
        Fabric peaks are looked for in this band.
    exclude : sequence of str
        Lines or ``line/segment`` labels left out of the fabric fit.
    shortest_wavelength, window, step : float, optional
        Windows (m) behind the aliasing share; see :func:`profiles.windows.along_track_windows`.
    spacing, interpolation : optional
        Resampling (see :func:`profiles.analysis.resample_field`); each segment's median
        station step by default.
    segment_length, overlap, confidence : optional
        Welch block (m) and overlap, and the density's confidence level (see
        :func:`profiles.analysis.analyse_segment`).
    """
    from .analysis import analyse_segment, resample_field
    from .windows import along_track_windows

    pairs, warnings = resample_field(segments, field, spacing=spacing, interpolation=interpolation)
    if not pairs:
        raise InputError(f"no segment of {field} is long enough to compare")
    options = dict(
        method=method,
        nw=nw,
        alpha=alpha,
        segment_length=segment_length,
        overlap=overlap,
        confidence=confidence,
    )
    spectra = [(segment, analyse_segment(segment, uniform, **options)) for segment, uniform in pairs]
    windows = None
    share: dict[str, float] = {}
    try:
        windows = along_track_windows(
            [u for _, u in pairs],
            window=window,
            step=step,
            shortest_wavelength=shortest_wavelength,
            alpha=alpha,
        )
    except ProfilesError as error:
        warnings.append(f"no windows for the aliasing share ({error})")
    if windows is not None and len(windows):
        labels = np.array(
            [f"{line}/{number}" for line, number in zip(windows.line, windows.segment, strict=True)]
        )
        risk = windows.aliasing_risk
        for label in np.unique(labels):
            share[str(label)] = float(risk[labels == label].mean())
        warnings.extend(windows.warnings)
    table = line_table(spectra, field=field, alpha=alpha, aliasing_share=share)
    fabric, note, left_out = None, "", ()
    try:
        fabric, used = fit_survey_fabric(spectra, band=band, exclude=exclude)
        left_out = used.left_out
    except InputError as error:
        note = str(error)
        warnings.append(f"fabric not fitted: {note}")
    return SurveyComparison(table, tuple(spectra), fabric, note, tuple(left_out), windows, tuple(warnings))
