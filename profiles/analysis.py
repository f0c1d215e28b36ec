"""Spectra of survey segments: resample a field on every segment and analyse it.

This is the step every command shares between the track geometry and the spectral core:
each segment of a line is resampled to a uniform spacing on its own (never across a gap), its
harmonic table is computed with Fisher's g test (white-noise null) and the AR(1) test
(red-noise null), and, as asked, a density estimate with confidence bounds (Welch or
multitaper on the resampled values, Lomb-Scargle on the original stations).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Literal, get_args

import numpy as np

from .errors import InputError, SpacingError
from .geometry import Segment, Segments
from .resample import Interpolation, UniformSegment, resample
from .spectral.harmonics import HarmonicTable, harmonic_table
from .spectral.psd import Spectrum, multitaper_psd, welch_psd
from .spectral.significance import (
    FisherTest,
    RedNoiseTest,
    fisher_from_variances,
    lag1_autocorrelation,
    red_noise_from_variances,
)

Method = Literal["harmonic", "welch", "multitaper", "lomb-scargle"]

#: Fewest resampled values a segment needs to be analysed.
MIN_SAMPLES = 16
#: Welch blocks per segment when no block length is given: a block of a quarter of the
#: segment gives seven blocks at 50 % overlap (about 13 degrees of freedom with a Hann taper).
DEFAULT_BLOCKS_PER_SEGMENT = 4


@dataclass(frozen=True, eq=False)
class SegmentSpectrum:
    """Spectral analysis of one field on one segment.

    Attributes
    ----------
    uniform : UniformSegment
        The resampled values analysed.
    harmonics : HarmonicTable
        Harmonic table of the resampled values (no taper unless asked).
    fisher : FisherTest
        Fisher's g test of the dominant harmonic; null hypothesis white noise.
    red_noise : RedNoiseTest
        Test of each harmonic against an AR(1) background; null hypothesis red noise.
    method : str
        The density method asked for.
    density : Spectrum or None
        Welch or multitaper density with confidence bounds (None for ``harmonic`` and
        ``lomb-scargle``).
    uneven : object or None
        Lomb-Scargle result on the original stations (``lomb-scargle`` only).
    """

    uniform: UniformSegment
    harmonics: HarmonicTable
    fisher: FisherTest
    red_noise: RedNoiseTest
    method: str
    density: Spectrum | None = None
    uneven: object | None = None

    @property
    def label(self) -> str:
        """``line/segment``."""
        return self.uniform.label

    @property
    def red_dominant_k(self) -> int | None:
        """Largest-variance harmonic flagged by the red-noise test (None when none is)."""
        flagged = np.flatnonzero(self.red_noise.significant)
        if flagged.size == 0:
            return None
        return int(flagged[np.argmax(self.harmonics.variance[flagged])])

    def significant_wavelengths(self) -> np.ndarray:
        """Wavelengths (m) of the red-noise-significant harmonics, strongest first."""
        flagged = np.flatnonzero(self.red_noise.significant)
        order = flagged[np.argsort(self.harmonics.variance[flagged])[::-1]]
        return self.harmonics.wavelength[order]

    def summary(self) -> dict:
        """One row of the per-segment summary (``profiles spectrum`` table, batch parts)."""
        fisher, table = self.fisher, self.harmonics
        strongest = self.red_dominant_k
        return {
            "line": self.uniform.line,
            "segment": self.uniform.number,
            "n": self.uniform.n,
            "spacing_km": self.uniform.spacing / 1e3,
            "dominant_wavelength_km": float(fisher.dominant_wavelength) / 1e3,
            "variance_fraction": float(table.variance_fraction[fisher.dominant_k]),
            "fisher_p_value": float(fisher.p_value),
            "white_noise_significant": bool(fisher.significant),
            "red_noise_lag1": float(self.red_noise.lag1),
            "red_noise_dominant_km": (
                float("nan") if strongest is None else float(table.wavelength[strongest]) / 1e3
            ),
            "red_noise_significant": strongest is not None,
            "n_red_significant": int(self.red_noise.significant.sum()),
        }

    def peak_harmonics(self, count: int = 3, *, separation: int = 2) -> np.ndarray:
        """The strongest red-noise-significant harmonics, at least ``separation`` + 1 apart
        (a peak that spreads over neighbouring harmonics is one peak)."""
        flagged = np.flatnonzero(self.red_noise.significant)
        chosen: list[int] = []
        for k in flagged[np.argsort(self.harmonics.variance[flagged])[::-1]]:
            if all(abs(int(k) - c) > separation for c in chosen):
                chosen.append(int(k))
            if len(chosen) == count:
                break
        return np.array(chosen, dtype=int)

    def plot_data(self, *, units: str, peaks: int = 3) -> dict:
        """Arguments of :func:`profiles.figures.spectra.spectrum_figure` (per cycle/km).

        The harmonic method shows the periodogram, s_k^2 / dk with dk = 1/(N dx), with the
        AR(1) background and its significance level on the same scale; the density methods
        show their estimate and its confidence bounds. The strongest red-noise-significant
        harmonics are labelled with their wavelength.
        """
        table = self.harmonics
        step = 1e3 / (table.n * table.spacing)  # dk in cycles per km
        wavelengths = self.harmonics.wavelength[self.peak_harmonics(peaks)]
        common = {
            "title": (
                f"{self.uniform.field} on {self.label}: {self.method}, "
                f"{self.uniform.n} samples at {self.uniform.spacing:.0f} m"
            ),
            "units": units,
            "peaks_per_km": [1e3 / w for w in wavelengths],
        }
        if self.density is not None:
            frame = self.density.to_frame()
            return {
                **common,
                "wavenumber_per_km": frame["wavenumber_per_km"].to_numpy(),
                "density": frame["psd_per_cycle_per_km"].to_numpy(),
                "lower": frame["psd_lower_per_cycle_per_km"].to_numpy(),
                "upper": frame["psd_upper_per_cycle_per_km"].to_numpy(),
            }
        if self.uneven is not None:
            frame = self.uneven.to_frame()
            return {
                **common,
                "wavenumber_per_km": frame["wavenumber_per_km"].to_numpy(),
                "density": frame["power"].to_numpy(),
                "ylabel": "Lomb-Scargle power (normalised)",
            }
        return {
            **common,
            "wavenumber_per_km": table.wavenumber * 1e3,
            "density": table.variance / step,
            "background": self.red_noise.background / step,
            "threshold": self.red_noise.threshold / step,
            "ylabel": f"periodogram ({units}² per cycle/km)",
        }

    def to_json(self, *, harmonics: bool = True) -> dict:
        """The segment's entry of the ``spectrum`` command's JSON document."""
        table = self.harmonics
        uniform = self.uniform
        entry = {
            "line": uniform.line,
            "segment": uniform.number,
            "field": uniform.field,
            "n": uniform.n,
            "spacing_km": uniform.spacing / 1e3,
            "start_km": uniform.start / 1e3,
            "variance": float(np.var(uniform.values, ddof=1)),
            "method": self.method,
        }
        if harmonics:
            frame = table.to_frame()
            entry["harmonics"] = [
                {
                    "k": int(row.harmonic),
                    "wavenumber_per_km": row.wavenumber_per_km,
                    "wavelength_km": row.wavelength_km,
                    "a": row.cosine,
                    "b": row.sine,
                    "amplitude": row.amplitude,
                    "phase_deg": row.phase_deg,
                    "variance": row.variance,
                    "variance_fraction": row.variance_fraction,
                }
                for row in frame.itertuples()
            ]
        fisher = self.fisher
        entry["fisher"] = {
            "null": fisher.null,
            "g": float(fisher.g),
            "m": int(fisher.m),
            "p_value": float(fisher.p_value),
            "g_critical": float(fisher.g_critical),
            "g_critical_approx": float(fisher.g_critical_approx),
            "alpha": float(fisher.alpha),
            "dominant_k": int(fisher.dominant_k),
            "dominant_wavelength_km": float(fisher.dominant_wavelength) / 1e3,
            "significant": bool(fisher.significant),
        }
        red = self.red_noise
        strongest = self.red_dominant_k
        entry["red_noise"] = {
            "null": red.null,
            "lag1": float(red.lag1),
            "alpha": float(red.alpha),
            "significant_k": [int(k) for k in red.significant_k],
            "dominant_k": strongest,
            "dominant_wavelength_km": (
                None if strongest is None else float(table.wavelength[strongest]) / 1e3
            ),
        }
        if self.density is not None:
            frame = self.density.to_frame()
            entry["psd"] = [
                {
                    "wavenumber_per_km": row.wavenumber_per_km,
                    "wavelength_km": row.wavelength_km,
                    "psd": row.psd_per_cycle_per_km,
                    "lower": row.psd_lower_per_cycle_per_km,
                    "upper": row.psd_upper_per_cycle_per_km,
                }
                for row in frame.itertuples()
            ]
            entry["psd_method"] = {
                "method": self.density.method,
                "confidence": self.density.confidence,
                "resolution_per_km": self.density.resolution * 1e3,
                "segment_length_km": (
                    None if self.density.segment_length is None else self.density.segment_length / 1e3
                ),
                "overlap": self.density.overlap,
                "n_segments": self.density.n_segments,
                "nw": self.density.nw,
                "n_tapers": self.density.n_tapers,
            }
        if self.uneven is not None:
            entry["psd"] = self.uneven.records()
        return entry


def resample_field(
    segments: Segments,
    field: str,
    *,
    spacing: float | None = None,
    interpolation: Interpolation = "linear",
    min_samples: int = MIN_SAMPLES,
) -> tuple[list[tuple[Segment, UniformSegment]], list[str]]:
    """Resample ``field`` on every segment; segments too short to analyse are reported.

    Returns
    -------
    pairs, warnings
        (segment, resampled) for every usable segment, and one warning per skipped segment.
    """
    pairs, warnings = [], []
    for segment in segments:
        try:
            uniform = resample(segment, field, spacing=spacing, interpolation=interpolation)
        except SpacingError as error:
            warnings.append(f"segment {segment.label}: not analysed ({error})")
            continue
        if uniform.n < min_samples:
            warnings.append(
                f"segment {segment.label}: {uniform.n} samples after resampling, "
                f"fewer than the {min_samples} a spectrum needs; not analysed"
            )
            continue
        pairs.append((segment, uniform))
    return pairs, warnings


def analyse_segment(
    segment: Segment,
    uniform: UniformSegment,
    *,
    method: Method = "harmonic",
    alpha: float = 0.05,
    detrend: Literal["linear", "mean"] = "linear",
    taper: str | None = None,
    segment_length: float | None = None,
    overlap: float = 0.5,
    nw: float = 4.0,
    confidence: float = 0.95,
) -> SegmentSpectrum:
    """Harmonic table, both significance tests and (as asked) a density of one segment.

    Parameters
    ----------
    segment : Segment
        The original stations (used by Lomb-Scargle).
    uniform : UniformSegment
        The same segment resampled (used by every other method).
    method : {"harmonic", "welch", "multitaper", "lomb-scargle"}
    alpha : float
        Significance level of Fisher's test and of the red-noise test.
    detrend : {"linear", "mean"}
    taper : str, optional
        Taper of the harmonic table (none by default, so its variance split is exact).
    segment_length : float, optional
        Welch block length (m); a quarter of the segment by default.
    overlap : float
        Welch overlap fraction.
    nw : float
        Multitaper time-bandwidth product.
    confidence : float
        Level of the density's confidence bounds.
    """
    if method not in get_args(Method):
        raise InputError(f"method must be one of {', '.join(get_args(Method))} (got {method!r})")
    values, spacing = uniform.values, uniform.spacing
    table = harmonic_table(values, spacing=spacing, detrend=detrend, taper=taper)
    untapered = table if taper is None else harmonic_table(values, spacing=spacing, detrend=detrend)
    fisher = fisher_from_variances(untapered.variance, n=uniform.n, spacing=spacing, alpha=alpha)
    # The same test as red_noise_test, on the variances already computed (one FFT per segment).
    red = red_noise_from_variances(
        untapered.variance,
        n=uniform.n,
        lag1=lag1_autocorrelation(values, detrend=detrend, estimator="corrected"),
        spacing=spacing,
        alpha=alpha,
        lag1_estimator="corrected",
    )
    density = uneven = None
    if method == "welch":
        length = segment_length or uniform.n * spacing / DEFAULT_BLOCKS_PER_SEGMENT
        density = welch_psd(
            values,
            spacing=spacing,
            segment_length=length,
            overlap=overlap,
            detrend=detrend,
            confidence=confidence,
        )
    elif method == "multitaper":
        density = multitaper_psd(values, spacing=spacing, nw=nw, detrend=detrend, confidence=confidence)
    elif method == "lomb-scargle":
        from .spectral.uneven import lomb_scargle

        uneven = lomb_scargle(segment.distance, segment.values[uniform.field])
    return SegmentSpectrum(uniform, table, fisher, red, method, density, uneven)


@dataclass(frozen=True, eq=False)
class SurveyCoherence:
    """Cross-spectrum of two fields over the survey's segments, and the load-model fit.

    Attributes
    ----------
    spectrum : profiles.cross.CrossSpectrum
    model : profiles.cross.LoadModelFit or None
        None when the fit was impossible (``model_note`` says why).
    input_field, output_field : str
    input_positive_down : bool
        Whether the input was read as depth, positive down.
    mean_depth : float
        Depth of the load in the model (m).
    spacing : float
        Common resampling spacing (m).
    segments : tuple of str
        Labels of the segments used.
    model_note : str
    """

    spectrum: object
    model: object | None
    input_field: str
    output_field: str
    input_positive_down: bool
    mean_depth: float
    spacing: float
    segments: tuple[str, ...]
    model_note: str = ""

    def model_admittance(self) -> np.ndarray | None:
        """The fitted model's admittance at the spectrum's wavenumbers."""
        if self.model is None:
            return None
        from .cross import uncompensated_admittance

        return uncompensated_admittance(
            self.spectrum.wavenumber,
            density_contrast=self.model.density_contrast,
            depth=self.mean_depth,
            input_positive_down=self.input_positive_down,
        )

    def to_json(self) -> dict:
        """``bands[...]`` and ``model{...}`` as the coherence command prints them."""
        spectrum = self.spectrum
        document = {
            "input": self.input_field,
            "output": self.output_field,
            "input_positive_down": self.input_positive_down,
            "method": spectrum.method,
            "n_estimates": float(spectrum.n_estimates),
            "alpha": float(spectrum.alpha),
            "spacing_km": self.spacing / 1e3,
            "segments": list(self.segments),
            "convention": "S_xy = E[conj(X) Y], X the input, Y the output; admittance "
            "S_xy / S_xx; negative phase: the output lags",
            "bands": spectrum.to_json_bands(),
        }
        if self.model is not None:
            document["model"] = {
                **self.model.to_json(),
                "assumptions": "uncompensated load (Parker 1972 first term), "
                "Z = 2 pi G drho exp(-k d), d the mean water depth",
            }
        else:
            document["model"] = None
            document["model_note"] = self.model_note
        return document


def survey_coherence(
    segments: Segments,
    *,
    input_field: str,
    output_field: str,
    spacing: float | None = None,
    method: Literal["welch", "multitaper"] = "welch",
    segment_length: float | None = None,
    nw: float = 4.5,
    alpha: float = 0.05,
    input_positive_down: bool | None = None,
    depth: float | None = None,
    min_wavelength: float | None = None,
    max_wavelength: float | None = None,
) -> SurveyCoherence:
    """Coherence and admittance of ``output_field`` against ``input_field``, averaged over
    every segment, and the uncompensated-load fit.

    Both fields are resampled onto one common grid per segment (spacing: the median of the
    segments' median station spacings unless given). The input is taken as depth, positive
    down, when ``input_positive_down`` is None and its name starts with ``depth``; the mean
    depth of the load is then the input's mean, unless ``depth`` is given. Welch blocks default
    to half the longest segment, so that each block spans many times 2 pi d.
    """
    from .cross import cross_spectrum, fit_uncompensated_load

    usable = [s for s in segments if s.n_stations >= MIN_SAMPLES]
    if not usable:
        raise InputError("no segment has enough stations for a cross-spectrum")
    if spacing is None:
        spacing = float(np.median([np.median(s.spacing) for s in usable]))
    inputs, outputs, labels = [], [], []
    for segment in usable:
        try:
            a = resample(segment, input_field, spacing=spacing)
            b = resample(segment, output_field, spacing=spacing)
        except SpacingError:
            continue
        if a.n >= MIN_SAMPLES:
            inputs.append(a.values)
            outputs.append(b.values)
            labels.append(segment.label)
    if input_positive_down is None:
        input_positive_down = input_field.lower().startswith("depth")
    if method == "welch" and segment_length is None:
        segment_length = 0.5 * max(v.size for v in inputs) * spacing
    spectrum = cross_spectrum(
        inputs, outputs, spacing=spacing, method=method, segment_length=segment_length, nw=nw, alpha=alpha
    )
    if depth is None:
        depth = float(np.mean(np.concatenate(inputs))) if input_positive_down else float("nan")
    model, note = None, ""
    if np.isfinite(depth) and depth > 0:
        try:
            model = fit_uncompensated_load(
                spectrum,
                depth=depth,
                input_positive_down=input_positive_down,
                min_wavelength=min_wavelength,
                max_wavelength=max_wavelength,
            )
        except InputError as error:
            note = str(error)
    else:
        note = "no mean water depth: give --depth (the input is not depth positive down)"
    return SurveyCoherence(
        spectrum, model, input_field, output_field, input_positive_down, depth, spacing, tuple(labels), note
    )
