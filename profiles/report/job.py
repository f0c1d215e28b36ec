"""The whole job on one survey: every analysis the report shows, as result objects.

:func:`run_survey` reads the survey as its configuration says and calls the library, step
by step; it computes nothing itself. The steps, and the library calls they make:

1. reading and segments: :func:`profiles.read.read_surveys`,
   :func:`profiles.geometry.build_segments`;
2. per field, the spacing audit and its aliasing budget: :func:`profiles.spacing.audit_spacing`
   (with the field, and the fall-off form :func:`profiles.falloff.model_for_kind` gives its
   kind), and the budget's infill stretches with their tracks:
   :func:`profiles.infill.infill_stretches`;
3. per field, the spectra of every segment, the sliding windows, the line table and the
   fabric fit, with one frozen set of options: :func:`profiles.compare.compare_survey` (over
   :func:`profiles.analysis.analyse_segment`, :func:`profiles.windows.along_track_windows`,
   :func:`profiles.compare.line_table` and :func:`profiles.compare.fit_survey_fabric`);
4. per potential field where asked, the depth to source of every segment:
   :func:`profiles.spectral.slope.source_depth`;
5. for the configured pair of fields, the cross-spectrum and the load model:
   :func:`profiles.analysis.survey_coherence`.

Every warning is kept with the step and field it came from, and where it is about.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from typing import TYPE_CHECKING

import numpy as np

from ..errors import ProfilesError
from ..progress import Steps

if TYPE_CHECKING:
    from ..config import FieldConfig, SurveyConfig


@dataclass(frozen=True)
class Notice:
    """A warning of the job, with where it arose.

    Attributes
    ----------
    step : str
        ``reading``, ``segments``, ``spacing``, ``comparison``, ``source depth`` or
        ``coherence``.
    field : str
        The field concerned, or ``""`` for the survey as a whole.
    message : str
        One line, as the library wrote it.
    where : str
        The lines, segments and stretches (km from the line start) it is about, when the
        message itself does not name them.
    """

    step: str
    field: str
    message: str
    where: str = ""

    def to_json(self) -> dict:
        return {"step": self.step, "field": self.field, "message": self.message, "where": self.where}

    def __str__(self) -> str:
        text = f"{self.field}: {self.message}" if self.field else self.message
        return f"{text} ({self.where})" if self.where else text


def stretches_text(frame, *, limit: int = 12) -> str:
    """``L08/1 100.0-139.9 km; ...`` from a table with line, segment, start_km, end_km."""
    parts = [f"{r.line}/{r.segment} {r.start_km:.1f}–{r.end_km:.1f} km" for r in frame.itertuples()]
    if len(parts) > limit:
        parts = [*parts[:limit], f"and {len(parts) - limit} more"]
    return "; ".join(parts)


def risky_windows_text(windows, *, limit: int = 12) -> str:
    """Where windows are at aliasing risk: runs of overlapping risky windows per segment, with
    their reasons, e.g. ``L08/1 64.8-174.9 km (spacing)``."""
    frame = windows.to_frame()
    frame = frame[frame["aliasing_risk"].to_numpy(dtype=bool)]
    runs: list[list] = []  # [label, start_km, end_km, reasons]
    for row in frame.itertuples():
        label = f"{row.line}/{row.segment}"
        if runs and runs[-1][0] == label and row.start_km <= runs[-1][2]:
            runs[-1][2] = max(runs[-1][2], row.end_km)
            runs[-1][3].update(row.reasons)
        else:
            runs.append([label, row.start_km, row.end_km, set(row.reasons)])
    parts = [f"{label} {start:.1f}–{end:.1f} km ({', '.join(sorted(reasons))})"
             for label, start, end, reasons in runs]
    if len(parts) > limit:
        parts = [*parts[:limit], f"and {len(parts) - limit} more"]
    return "; ".join(parts)


@dataclass(frozen=True, eq=False)
class SourceDepth:
    """Depth-to-source fit of one segment, or why there is none.

    Attributes
    ----------
    line : str
    segment : int
    fit : DepthFit or None
    reason : str
        Empty, or why there is no fit or why the fit gives no depth (a slope that rises).
    """

    line: str
    segment: int
    fit: object | None
    reason: str = ""


@dataclass(frozen=True, eq=False)
class FieldResults:
    """Everything computed for one field.

    Attributes
    ----------
    config : FieldConfig
    audit : SpacingAudit
        With its aliasing budget (``audit.budget``).
    comparison : SurveyComparison
        From :func:`profiles.compare.compare_survey`: the line table, every segment with its
        spectra, the windows and the fabric fit.
    source_depths : tuple of SourceDepth
        Empty unless the configuration asks for it.
    infill : InfillStretches or None
        Stretches spaced more coarsely than the aliasing budget recommends, with their tracks
        (:func:`profiles.infill.infill_stretches`); None without a shortest wavelength.
    """

    config: FieldConfig
    audit: object
    comparison: object
    source_depths: tuple[SourceDepth, ...] = ()
    infill: object | None = None

    @property
    def name(self) -> str:
        return self.config.name

    @property
    def spectra(self) -> tuple:
        """The SegmentSpectrum of every analysed segment."""
        return tuple(result for _, result in self.comparison.spectra)

    @property
    def segments(self) -> tuple:
        """The analysed segments."""
        return tuple(segment for segment, _ in self.comparison.spectra)

    @property
    def windows(self):
        """The WindowTable, or None when no window could be made."""
        windows = self.comparison.windows
        return windows if windows is not None and len(windows) else None

    @property
    def fit(self):
        """The FabricFit, or None."""
        return self.comparison.fabric

    def window_frame(self):
        """The windows table with the aliasing budget's columns where the budget has a target
        (:func:`profiles.infill.window_frame`), or None when no window could be made."""
        from ..infill import window_frame

        windows = self.windows
        return None if windows is None else window_frame(windows, self.audit.budget)

    def line_table(self):
        """The line table with ``in_fit``, ``excluded_because``, ``predicted_wavelength_km``
        and ``misfit_km`` (the fabric fit's apparent wavelength at each segment's azimuth)."""
        frame = self.comparison.table.to_frame()
        labels = [f"{a}/{b}" for a, b in zip(frame["line"], frame["segment"], strict=True)]
        why = {}
        for text in self.comparison.fabric_left_out:
            label, _, reason = text.partition(": ")
            why[label] = reason
        fit = self.fit
        used = set(fit.lines) if fit is not None else set()
        frame["in_fit"] = [label in used for label in labels]
        frame["excluded_because"] = [
            why.get(label, "" if label in used else "no fabric fit") for label in labels
        ]
        if fit is not None:
            predicted = fit.predicted_wavelength(frame["azimuth_deg"].to_numpy()) / 1e3
            frame["predicted_wavelength_km"] = predicted
            frame["misfit_km"] = frame["dominant_wavelength_km"] - predicted
        else:
            frame["predicted_wavelength_km"] = np.nan
            frame["misfit_km"] = np.nan
        return frame

    def dominant_wavelengths(self) -> np.ndarray:
        """Dominant wavelengths (km) of the segments whose peak stands above red noise."""
        frame = self.comparison.table.to_frame()
        significant = frame["red_noise_significant"].to_numpy(dtype=bool)
        return frame["dominant_wavelength_km"].to_numpy(dtype=float)[significant]

    def depths(self) -> list[float]:
        """Source depths (km) of the segments where the fit gives one."""
        return [d.fit.depth / 1e3 for d in self.source_depths if d.fit is not None and not d.reason]


@dataclass(frozen=True, eq=False)
class CoherenceResults:
    """Cross-spectrum of the configured pair and, for bathymetry against free-air gravity,
    the uncompensated-load fit.

    Attributes
    ----------
    input, output : FieldConfig
    coherence : SurveyCoherence or None
        From :func:`profiles.analysis.survey_coherence`; None when it could not be computed.
    reason : str
        Why the spectrum or the load fit is missing (empty otherwise).
    """

    input: FieldConfig
    output: FieldConfig
    coherence: object | None
    reason: str = ""

    @property
    def spectrum(self):
        """The CrossSpectrum, or None."""
        return None if self.coherence is None else self.coherence.spectrum

    @property
    def load(self):
        """The LoadModelFit, or None (also when the pair is not bathymetry and free-air gravity)."""
        if self.coherence is None or not self.load_model_applies:
            return None
        return self.coherence.model

    @property
    def load_model_applies(self) -> bool:
        """The uncompensated-load model relates free-air gravity to bathymetry only."""
        return self.input.kind == "bathymetry" and self.output.anomaly == "free_air"

    def model_admittance(self):
        """The fitted model at the spectrum's wavenumbers, or None."""
        return self.coherence.model_admittance() if self.load is not None else None


@dataclass(frozen=True, eq=False)
class SurveyResults:
    """The job's results.

    Attributes
    ----------
    config : SurveyConfig
        The configuration as run, with the window, step and load depth the run used filled
        in, so that it repeats the run exactly.
    survey : Survey
        Every input row with its status and reason, after segmentation.
    segments : Segments
    fields : tuple of FieldResults
    coherence : CoherenceResults or None
    notices : tuple of Notice
    """

    config: SurveyConfig
    survey: object
    segments: object
    fields: tuple[FieldResults, ...]
    coherence: CoherenceResults | None
    notices: tuple[Notice, ...] = field(default=())

    def field_results(self, name: str) -> FieldResults:
        for item in self.fields:
            if item.name == name:
                return item
        raise KeyError(name)


def run_survey(config: SurveyConfig, *, quiet: bool = True) -> SurveyResults:
    """Run every analysis of the report on the survey the configuration describes.

    Parameters
    ----------
    config : SurveyConfig
        From :func:`profiles.config.load_config` (and command-line changes).
    quiet : bool
        No progress bar (one is drawn on stderr only when it is a terminal anyway).

    Returns
    -------
    SurveyResults

    Raises
    ------
    InputError
        Unreadable survey, unknown lines, no usable segment, no field to analyse.
    """
    from ..columns import ColumnNames
    from ..errors import InputError
    from ..geometry import build_segments
    from ..read import read_surveys

    if not config.fields:
        raise InputError(f"{config.source}: no field to analyse; add a [fields.NAME] table")
    if not config.inputs:
        raise InputError(f"{config.source}: no survey file; give SURVEY files or [survey] inputs")
    notices: list[Notice] = []
    names = config.field_names
    total = 2 + len(names) + (1 if config.coherence else 0)
    with Steps(total, description="report", quiet=quiet) as steps:
        survey = read_surveys(
            [str(p) for p in config.inputs],
            columns=ColumnNames(**config.columns),
            fields=names,
            crs=config.crs,
            layer=config.layer,
        )
        notices += [Notice("reading", "", m) for m in survey.warnings]
        steps.advance("reading")
        kind, value = config.gap
        segments = build_segments(
            survey,
            gap_multiple=value if kind == "multiple" else 5.0,
            gap_length=value if kind == "length" else None,
            turn_angle=config.turn_angle,
            turn_distance=config.turn_distance,
        )
        notices += [Notice("segments", "", m) for m in segments.warnings]
        if config.lines:
            segments = segments.select(config.lines)
        if len(segments) == 0:
            names = ", ".join(str(p) for p in config.inputs)
            raise InputError(f"{names}: no segment with two or more stations")
        steps.advance("segments")

        results = []
        for item in config.fields:
            results.append(_field(config, item, segments, notices))
            steps.advance(f"{item.name}")
        settings = next((r.windows.settings for r in results if r.windows is not None), None)
        if settings is not None:
            config = config.with_changes(window=settings.window, step=settings.step)
        coherence = None
        if config.coherence is not None:
            coherence, config = _coherence(config, segments, notices)
            steps.advance("coherence")
    return SurveyResults(
        config=config,
        survey=segments.survey,
        segments=segments,
        fields=tuple(results),
        coherence=coherence,
        notices=tuple(dict.fromkeys(notices)),
    )


def _field(config, item, segments, notices) -> FieldResults:
    """The audit, comparison (spectra, windows, fabric) and source depth of one field."""
    from ..compare import compare_survey
    from ..falloff import model_for_kind
    from ..infill import infill_stretches
    from ..spacing import audit_spacing

    name = item.name
    audit = audit_spacing(
        segments,
        shortest_wavelength=item.shortest_wavelength,
        longest_wavelength=item.longest_wavelength,
        field=name,
        model=model_for_kind(item.kind),
    )
    where = stretches_text(audit.risky_stretches)
    infill = stretches_text(audit.budget.infill()) if audit.budget is not None else ""
    for message in audit.warnings:
        about = where if "stretches have station spacing" in message else (
            infill if "more coarsely than recommended" in message else "")
        notices.append(Notice("spacing", name, message, about))
    comparison = compare_survey(
        segments,
        field=name,
        method=config.spectrum_method,
        nw=config.nw,
        alpha=config.alpha,
        band=item.fabric_band,
        exclude=item.fabric_exclude,
        shortest_wavelength=item.shortest_wavelength,
        window=config.window,
        step=config.step,
        spacing=config.spacing,
        interpolation=config.interpolation,
        segment_length=config.welch_block,
        confidence=config.confidence,
    )
    windows = comparison.windows
    risky = risky_windows_text(windows) if windows is not None and len(windows) else ""
    for message in comparison.warnings:
        about = risky if "aliasing risk" in message else ""
        notices.append(Notice("comparison", name, message, about))
    result = FieldResults(config=item, audit=audit, comparison=comparison,
                          infill=infill_stretches(audit.budget, segments))
    if item.source_depth:
        result = replace(result, source_depths=_source_depths(result.spectra, notices, name))
    return result


def _source_depths(spectra, notices, name) -> tuple[SourceDepth, ...]:
    """Depth to source on every segment, from its density (or its periodogram)."""
    from ..spectral.slope import source_depth

    out = []
    for result in spectra:
        if result.density is not None:
            wavenumber, density = result.density.wavenumber, result.density.psd
        else:  # the periodogram of the harmonic table: s_k^2 / dk
            table = result.harmonics
            wavenumber, density = table.wavenumber, table.variance * (table.n * table.spacing)
        try:
            fit = source_depth(wavenumber, density)
        except ProfilesError as error:
            out.append(SourceDepth(result.uniform.line, result.uniform.number, None, str(error)))
            notices.append(Notice("source depth", name, f"segment {result.label}: no fit ({error})"))
            continue
        reason = ""
        if not fit.depth > 0:
            reason = ("the spectrum does not fall with wavenumber in the band fitted, so the slope "
                      "gives no depth")
            notices.append(Notice("source depth", name, f"segment {result.label}: {reason}"))
        out.append(SourceDepth(result.uniform.line, result.uniform.number, fit, reason))
    return tuple(out)


def _coherence(config, segments, notices):
    """Cross-spectrum of the configured pair over every segment both fields have."""
    from ..analysis import survey_coherence

    pair = config.coherence
    first, second = config.field_config(pair.input), config.field_config(pair.output)
    positive_down = first.positive_down if first.kind == "bathymetry" else False
    try:
        coherence = survey_coherence(
            segments,
            input_field=pair.input,
            output_field=pair.output,
            method=pair.method,
            segment_length=pair.block,
            nw=pair.nw,
            alpha=config.alpha,
            input_positive_down=positive_down,
            depth=pair.load_depth,
            min_wavelength=second.shortest_wavelength,
        )
    except ProfilesError as error:
        notices.append(Notice("coherence", pair.output, f"no cross-spectrum: {error}"))
        return CoherenceResults(first, second, None, str(error)), config
    results = CoherenceResults(first, second, coherence)
    reason = ""
    if results.load_model_applies and coherence.model is None:
        reason = f"no load-model fit: {coherence.model_note}"
        notices.append(Notice("coherence", pair.output, reason))
    elif results.load_model_applies and pair.load_depth is None and np.isfinite(coherence.mean_depth):
        config = config.with_changes(coherence=replace(pair, load_depth=float(coherence.mean_depth)))
    return replace(results, reason=reason), config
