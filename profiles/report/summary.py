"""What the job found and what needs attention, in words and as ``summary.json``.

Keys of ``summary.json`` (units in the names; ``docs/user-guide.md`` lists them too):

``profiles_version``, ``survey``
    Version of profiles, survey name.
``inputs``
    ``[{path, sha256}]``: the survey files and their SHA-256 digests.
``rows``
    Row accounting: ``{read, used, merged, dropped: {reason: count}}``.
``lines``, ``n_segments``, ``total_length_km``
    Lines analysed, segments, summed segment length.
``spectrum_method``, ``alpha``
    Density method, false-alarm probability of the tests.
``fields``
    Per field: ``kind``, ``units``, ``shortest_wavelength_km``, ``segments_analysed``,
    ``segments_with_peak`` (dominant harmonic above red noise),
    ``dominant_wavelength_median_km`` and ``dominant_wavelength_range_km`` (``[shortest,
    longest]``) over those segments, ``segments`` (``[{line, segment, dominant_wavelength_km,
    red_noise_significant, in_fit}]``), ``fabric`` (``{wavelength_km, strike_deg,
    wavelength_err_km, strike_err_deg, n_segments, rms_misfit_km}`` or null),
    ``fabric_note``, ``segments_at_aliasing_risk`` (labels), ``risky_stretches``
    (``[{line, segment, start_km, end_km, lon, lat, spacing_km, n_steps}]``), ``infill``
    (stretches spaced more coarsely than the aliasing budget recommends: ``[{line, segment,
    start_km, end_km, lon, lat, spacing_km, recommended_spacing_km, alias_contamination}]``),
    ``windows``
    (``{count, at_aliasing_risk, reasons: {spacing, rolloff, near-nyquist}, window_km,
    step_km}`` or null), ``source_depth`` (``[{line, segment, depth_km, depth_err_km,
    note}]``, depth null where the fit gives none, or null when not asked for).
``coherence``
    ``{input, output, method, spacing_km, n_estimates, coherence_threshold, coherent_wavelengths_km,
    coherent_bands_km (runs of at least two consecutive coherent wavenumbers, [shortest,
    longest]), density_contrast_kg_m3, density_contrast_err_kg_m3, load_depth_km}`` or null.
``attention``
    Sentences: what needs the user's attention.
``warnings``
    ``[{step, field, message, where}]``: every warning with the step that raised it and the
    lines, segments and stretches it is about.
``outputs``
    The files written beside the report.
"""

from __future__ import annotations

import hashlib
from pathlib import Path

import numpy as np

from .. import __version__
from ..tables import clean, records

#: Keys of summary.json, in order.
SUMMARY_KEYS = (
    "profiles_version",
    "survey",
    "inputs",
    "rows",
    "lines",
    "n_segments",
    "total_length_km",
    "spectrum_method",
    "alpha",
    "fields",
    "coherence",
    "attention",
    "warnings",
    "outputs",
)
#: Keys of each entry of ``fields``.
FIELD_KEYS = (
    "kind",
    "units",
    "shortest_wavelength_km",
    "segments_analysed",
    "segments_with_peak",
    "dominant_wavelength_median_km",
    "dominant_wavelength_range_km",
    "segments",
    "fabric",
    "fabric_note",
    "segments_at_aliasing_risk",
    "risky_stretches",
    "infill",
    "windows",
    "source_depth",
)


def sha256(path: str | Path) -> str:
    """SHA-256 digest of a file, hex."""
    digest = hashlib.sha256()
    with open(path, "rb") as stream:
        for block in iter(lambda: stream.read(1 << 20), b""):
            digest.update(block)
    return digest.hexdigest()


def at_risk(field) -> list[str]:
    """Labels of the segments whose spacing audit flags aliasing risk."""
    table = field.audit.segments
    flags = table["aliasing_risk"].fillna(False).astype(bool).to_numpy()
    return [f"{line}/{number}" for line, number in zip(table["line"][flags], table["segment"][flags],
                                                       strict=True)]


def infill_records(field) -> list[dict] | None:
    """Stretches coarser than the aliasing budget recommends, or None without a budget."""
    budget = field.audit.budget
    if budget is None:
        return None
    columns = ["line", "segment", "start_km", "end_km", "lon", "lat", "spacing_km",
               "recommended_spacing_km", "alias_contamination"]
    return records(budget.infill()[columns])


def window_counts(windows) -> dict | None:
    """Counts of windows and of aliasing reasons, or None without windows."""
    if windows is None:
        return None
    return {
        "count": len(windows),
        "at_aliasing_risk": int(windows.aliasing_risk.sum()),
        "reasons": {
            "spacing": int(windows.spacing_risk.sum()),
            "rolloff": int(windows.rolloff_risk.sum()),
            "near-nyquist": int(windows.near_nyquist_risk.sum()),
        },
        "window_km": windows.settings.window / 1e3,
        "step_km": windows.settings.step / 1e3,
    }


def median_dominant(field) -> float:
    """Median dominant wavelength (km) over the segments with a peak above red noise."""
    values = field.dominant_wavelengths()
    return float(np.median(values)) if values.size else float("nan")


def dominant_range(field) -> list[float] | None:
    """Shortest and longest dominant wavelength (km) over the segments with a peak."""
    values = field.dominant_wavelengths()
    return [float(values.min()), float(values.max())] if values.size else None


def coherent_wavelengths(spectrum) -> list[float]:
    """Wavelengths (km) where the squared coherence is above its significance level."""
    return [float(w) for w in 1e-3 / spectrum.wavenumber[spectrum.coherent]]


def coherent_bands(spectrum, *, min_count: int = 2) -> list[tuple[float, float, int]]:
    """Runs of at least ``min_count`` consecutive coherent wavenumbers, as (shortest km,
    longest km, count); isolated ones are about as many as chance gives (alpha of all)."""
    mask = np.concatenate([[False], np.asarray(spectrum.coherent, bool), [False]])
    edges = np.flatnonzero(np.diff(mask.astype(np.int8)))
    out = []
    for first, stop in zip(edges[::2], edges[1::2], strict=True):
        if stop - first >= min_count:
            wavelength = 1e-3 / spectrum.wavenumber[first:stop]
            out.append((float(wavelength.min()), float(wavelength.max()), int(stop - first)))
    return out


def found(results) -> list[tuple[str, str]]:
    """What the job found, as (subject, sentence) pairs, most important first."""
    out = []
    for field in results.fields:
        table = field.line_table()
        peaks = int(table["red_noise_significant"].sum())
        values = field.dominant_wavelengths()
        text = f"{peaks} of {len(table)} segments have a dominant wavelength above red noise"
        if values.size:
            text += (f", from {values.min():.1f} to {values.max():.1f} km along the lines "
                     "(apparent wavelengths: they depend on each line's azimuth)")
        text += "."
        if field.fit is not None:
            fit = field.fit
            error = (f" ± {fit.wavelength_err / 1e3:.2f}" if np.isfinite(fit.wavelength_err) else "")
            strike_error = (f" ± {fit.strike_err_deg:.1f}" if np.isfinite(fit.strike_err_deg) else "")
            text += (f" Fabric fit: true wavelength {fit.wavelength / 1e3:.2f}{error} km, strike "
                     f"{fit.strike_deg:.1f}{strike_error}° from {fit.n_segments} segments.")
        elif field.comparison.fabric_note:
            text += f" No fabric fit: {field.comparison.fabric_note}."
        out.append((field.name, text))
        if field.source_depths:
            depths = field.depths()
            if depths:
                out.append((field.name, f"Depth to source (Spector and Grant model) on {len(depths)} "
                            f"segments: {min(depths):.2f} to {max(depths):.2f} km below the "
                            f"observation level, median {float(np.median(depths)):.2f} km."))
    coherence = results.coherence
    if coherence is not None and coherence.spectrum is not None:
        spectrum = coherence.spectrum
        band = coherent_wavelengths(spectrum)
        bands = coherent_bands(spectrum)
        subject = f"{coherence.output.name} against {coherence.input.name}"
        text = (f"squared coherence above its {100 * (1 - spectrum.alpha):g} % level "
                f"({spectrum.coherence_threshold:.3f}) at {len(band)} of "
                f"{spectrum.wavenumber.size} wavenumbers")
        if bands:
            text += ": coherent from " + ", ".join(f"{lo:.1f} to {hi:.1f} km" for lo, hi, _ in bands)
            isolated = len(band) - sum(count for _, _, count in bands)
            if isolated:
                text += (f", and {isolated} isolated wavenumbers (chance alone gives about "
                         f"{spectrum.alpha * spectrum.wavenumber.size:.0f})")
        text += "."
        if coherence.load is not None:
            load = coherence.load
            text += (f" Uncompensated load: density contrast {load.density_contrast:.0f} ± "
                     f"{load.density_contrast_err:.0f} kg/m³ at a load depth of "
                     f"{load.depth / 1e3:.2f} km.")
        out.append((subject, text))
    return out


def attention(results) -> list[str]:
    """What needs the user's attention, as sentences naming lines and distances."""
    out = []
    accounting = results.survey.accounting
    if accounting.n_dropped:
        reasons = "; ".join(f"{reason}: {count}" for reason, count in sorted(accounting.dropped.items()))
        out.append(f"{accounting.n_dropped} of {accounting.read} input rows were dropped ({reasons}); "
                   "see the row accounting.")
    breaks = results.segments.breaks
    for row in breaks.itertuples():
        if row.kind == "gap":
            out.append(f"Line {row.line} has a gap of {row.size:.2f} km after {row.distance_km:.2f} km "
                       f"(row {row.row}); it is analysed as two segments.")
        else:
            out.append(f"Line {row.line} turns by {row.size:.0f}° at {row.distance_km:.2f} km "
                       f"(row {row.row}); it is analysed as two segments.")
    stretches: dict[tuple, list[str]] = {}
    for field in results.fields:
        target = field.config.shortest_wavelength
        for row in field.audit.risky_stretches.itertuples():
            key = (row.line, row.segment, row.start_km, row.end_km, row.lat, row.lon, row.spacing_km)
            stretches.setdefault(key, []).append(f"{field.name} ({target / 1e3:g} km)")
    for (line, _, start, end, lat, lon, step), names in stretches.items():
        out.append(f"Line {line} from {start:.1f} to {end:.1f} km (middle near {lat:.3f}°, {lon:.3f}°) "
                   f"has station steps up to {step:.2f} km, longer than half the shortest wavelength "
                   f"of {', '.join(names)}: those wavelengths alias there.")
    infill: dict[tuple, list[str]] = {}
    for field in results.fields:
        if field.audit.budget is None:
            continue
        for row in field.audit.budget.infill().itertuples():
            key = (row.line, row.segment, row.start_km, row.end_km, row.spacing_km)
            infill.setdefault(key, []).append(f"{field.name} {row.recommended_spacing_km:.2f} km")
    for (line, _, start, end, step), names in infill.items():
        out.append(f"Infill candidate: line {line} from {start:.1f} to {end:.1f} km is logged every "
                   f"{step:.2f} km, coarser than the aliasing budget recommends ({', '.join(names)}).")
    for field in results.fields:
        name = field.name
        counts = window_counts(field.windows)
        if counts and counts["at_aliasing_risk"]:
            from .job import risky_windows_text

            reasons = ", ".join(f"{k} {v}" for k, v in counts["reasons"].items() if v)
            out.append(f"{name}: {counts['at_aliasing_risk']} of {counts['count']} windows at aliasing "
                       f"risk ({reasons}): {risky_windows_text(field.windows)}.")
        table = field.line_table()
        silent = table[~table["red_noise_significant"]]
        if len(silent):
            labels = ", ".join(f"{r.line}/{r.segment}" for r in silent.itertuples())
            out.append(f"{name}: the strongest harmonic does not stand above red noise on {labels}.")
        left_out = table[table["excluded_because"].str.startswith("misfit")]
        for row in left_out.itertuples():
            out.append(f"{name}: segment {row.line}/{row.segment} was left out of the fabric fit "
                       f"({row.excluded_because}).")
    coherence = results.coherence
    if coherence is not None and coherence.reason:
        out.append(f"coherence of {coherence.output.name} against {coherence.input.name}: "
                   f"{coherence.reason}.")
    return out


def summary_document(results, *, outputs: list[str]) -> dict:
    """The ``summary.json`` document (see the module notes for its keys)."""
    fields = {}
    for field in results.fields:
        table = field.line_table()
        fit = field.fit
        target = field.config.shortest_wavelength
        depths = None
        if field.config.source_depth:
            depths = [
                {"line": d.line, "segment": d.segment,
                 "depth_km": None if d.fit is None or d.reason else d.fit.depth / 1e3,
                 "depth_err_km": None if d.fit is None or d.reason else d.fit.depth_err / 1e3,
                 "note": d.reason}
                for d in field.source_depths
            ]
        fields[field.name] = {
            "kind": field.config.kind,
            "units": field.config.units,
            "shortest_wavelength_km": None if target is None else target / 1e3,
            "segments_analysed": len(table),
            "segments_with_peak": int(table["red_noise_significant"].sum()),
            "dominant_wavelength_median_km": median_dominant(field),
            "dominant_wavelength_range_km": dominant_range(field),
            "segments": records(table[["line", "segment", "dominant_wavelength_km",
                                       "red_noise_significant", "in_fit"]]),
            "fabric": None if fit is None else fit.to_json(),
            "fabric_note": field.comparison.fabric_note,
            "segments_at_aliasing_risk": at_risk(field),
            "risky_stretches": records(field.audit.risky_stretches),
            "infill": infill_records(field),
            "windows": window_counts(field.windows),
            "source_depth": depths,
        }
    coherence = None
    if results.coherence is not None and results.coherence.spectrum is not None:
        spectrum = results.coherence.spectrum
        load = results.coherence.load
        coherence = {
            "input": results.coherence.input.name,
            "output": results.coherence.output.name,
            "method": spectrum.method,
            "spacing_km": results.coherence.coherence.spacing / 1e3,
            "n_estimates": spectrum.n_estimates,
            "coherence_threshold": spectrum.coherence_threshold,
            "coherent_wavelengths_km": coherent_wavelengths(spectrum),
            "coherent_bands_km": [[lo, hi] for lo, hi, _ in coherent_bands(spectrum)],
            "density_contrast_kg_m3": None if load is None else load.density_contrast,
            "density_contrast_err_kg_m3": None if load is None else load.density_contrast_err,
            "load_depth_km": None if load is None else load.depth / 1e3,
        }
    segments = results.segments
    document = {
        "profiles_version": __version__,
        "survey": results.config.name,
        "inputs": [{"path": str(p), "sha256": sha256(p)} for p in results.config.inputs],
        "rows": results.survey.accounting.to_json(),
        "lines": list(dict.fromkeys(s.line for s in segments)),
        "n_segments": len(segments),
        "total_length_km": sum(s.length for s in segments) / 1e3,
        "spectrum_method": results.config.spectrum_method,
        "alpha": results.config.alpha,
        "fields": fields,
        "coherence": coherence,
        "attention": attention(results),
        "warnings": [n.to_json() for n in results.notices],
        "outputs": list(outputs),
    }
    assert tuple(document) == SUMMARY_KEYS
    return clean(document)
