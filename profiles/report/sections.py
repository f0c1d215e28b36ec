"""The sections of the report, one small function each.

Every function takes the job's results (:class:`profiles.report.job.SurveyResults`) and a
:class:`FigureSet` and returns a :class:`~profiles.report.html.Section`, or None when it has
nothing to show. Numbers come from the result objects; figures from :mod:`profiles.figures`.
No section computes a spectrum or a fit.
"""

from __future__ import annotations

import re

import numpy as np
import pandas as pd

from ..compare import MIN_STRAIGHTNESS, OUTLIER_WIDTHS
from .html import (
    Section,
    definitions,
    esc,
    formula,
    image,
    items,
    note,
    paragraph,
    preformatted,
)
from .html import table as data_table
from .summary import attention, found, window_counts

#: The cautions, word for word as in the README.
CAUTIONS = (
    "The results describe the profile as it was sampled: a wavelength the stations could not "
    "resolve is not in them, and aliased energy can look like signal.",
    "The spacing audit here is about spectral aliasing. It is not a search for hazards to "
    "navigation; do not use it for navigation or charting.",
    "Whether a survey is adequate for safety of navigation is decided under the applicable "
    "hydrographic survey standards and local regulations by a qualified surveyor.",
    "Depth-to-source and density estimates depend on the assumptions of their models, which are "
    "stated beside each result.",
)

#: Model assumptions stated beside each estimate.
LOAD_MODEL_ASSUMPTIONS = (
    "Assumes an uncompensated load (no isostatic root) of one density contrast at one mean depth, "
    "the linear term of Parker's (1972) series, and structures crossed at right angles: along an "
    "oblique line the along-track wavenumber is only part of the true one, the model then "
    "attenuates too little and the fitted density contrast comes out too low."
)
SOURCE_DEPTH_ASSUMPTIONS = (
    "Assumes a statistical ensemble of sources at one mean depth whose spectrum falls as "
    "exp(−2 h k_angular) (Spector and Grant 1970), crossed at right angles to strike; depth is "
    "below the observation level (sea surface or flight height). Isotropic 2-D sources seen on a "
    "profile, source thickness and fractal source distributions bias it (shallower)."
)
FABRIC_ASSUMPTIONS = (
    "Assumes one perfectly lineated fabric (crests of one strike, one true wavelength) sampled by "
    "straight lines; each segment's wavelength is known to half a harmonic spacing."
)


class FigureSet:
    """Figures of the report: rendered once to PNG, embedded, and kept for writing as files."""

    def __init__(self):
        self.files: dict[str, bytes] = {}

    def add(self, name: str, figure, *, alt: str, caption: str) -> str:
        """Render ``figure`` as ``figures/<name>.png`` and return its embedded HTML."""
        from ..figures.render import figure_bytes

        return self.add_png(name, figure_bytes(figure, "png"), alt=alt, caption=caption)

    def add_png(self, name: str, data: bytes, *, alt: str, caption: str) -> str:
        """Keep PNG bytes as ``figures/<name>.png`` and return their embedded HTML."""
        self.files[f"figures/{name}.png"] = data
        return image(data, alt=alt, caption=caption)


def safe_name(name: str) -> str:
    """A field name made safe for a file name."""
    return re.sub(r"[^A-Za-z0-9_.-]+", "_", name)


def _km(metres) -> str:
    return "–" if metres is None else f"{metres / 1e3:g} km"


def _fields_text(results) -> str:
    return ", ".join(
        f"{f.name} ({f.config.kind.replace('_', ' ')}, {f.config.units})" for f in results.fields
    )


# --------------------------------------------------------------------------------------------
# Sections
# --------------------------------------------------------------------------------------------


def summary_section(results, figures: FigureSet) -> Section:
    """What was found and what needs attention, first."""
    accounting = results.survey.accounting
    segments = results.segments
    length = sum(s.length for s in segments) / 1e3
    lines = list(dict.fromkeys(s.line for s in segments))
    facts = definitions([
        ("survey", results.config.name),
        ("input", ", ".join(str(p.name) for p in results.config.inputs)),
        ("rows", str(accounting)),
        ("lines", f"{len(lines)} ({', '.join(lines)})"),
        ("segments", f"{len(segments)}, {length:.1f} km in all"),
        ("fields", _fields_text(results)),
        ("methods", f"each segment resampled at its median station spacing; density by "
                    f"{results.config.spectrum_method}; tests at alpha = {results.config.alpha:g}"),
    ])
    findings = found(results)
    concerns = attention(results)
    body = [facts, "<h3>What was found</h3>"]
    body.append(items(findings, css="found") if findings else paragraph("Nothing significant."))
    body.append("<h3>What needs attention</h3>")
    body.append(items(concerns, css="attention") if concerns else paragraph("Nothing."))
    count = len(results.notices)
    body.append(paragraph(
        f"{count} warning(s) in all, each with its location, under Warnings. Read the Cautions at "
        "the end before using these results."
    ))
    return Section("summary", "Summary", "\n".join(body))


def rows_section(results, figures: FigureSet) -> Section:
    """Row accounting: every input row used, merged or dropped, with the reasons."""
    accounting = results.survey.accounting
    counts = pd.DataFrame(
        [{"read": accounting.read, "used": accounting.used, "merged": accounting.merged,
          "dropped": accounting.n_dropped}]
    )
    stations = results.survey.stations
    other = stations[stations["status"] != "used"][["source", "row", "line", "status", "reason"]]
    body = [
        paragraph("Every data row of the input ends used, merged into the station before it "
                  "(same position), or dropped with its reason; read = used + merged + dropped."),
        data_table(counts),
        "<h3>Rows merged or dropped</h3>",
        data_table(other.assign(source=[str(s).rsplit("/", 1)[-1] for s in other["source"]]),
              max_rows=200),
        paragraph("File rows are numbered from 1, the header being row 1. stations.csv lists "
                  "every row with its status."),
    ]
    return Section("rows", "Row accounting", "\n".join(body))


def audit_section(results, figures: FigureSet) -> Section:
    """Per-segment spacing statistics, aliasing risk per field, risky stretches, breaks."""
    first = results.fields[0].audit.segments
    columns = ["line", "segment", "n_stations", "start_km", "end_km", "length_km", "azimuth_deg",
               "spacing_min_km", "spacing_median_km", "spacing_max_km", "nyquist_wavelength_km",
               "nyquist_wavelength_worst_km"]
    frame = first[columns].copy()
    flags = [(f.name, f.audit.segments["aliasing_risk"].fillna(False).astype(bool).to_numpy())
             for f in results.fields]
    frame["aliasing_risk_for"] = [", ".join(name for name, flag in flags if flag[i]) or "none"
                                  for i in range(len(frame))]
    frame["at_risk"] = [any(flag[i] for _, flag in flags) for i in range(len(frame))]
    targets = ", ".join(f"{f.name} {_km(f.config.shortest_wavelength)}" for f in results.fields)
    body = [
        paragraph("Station spacing of every segment. The Nyquist wavelength is twice the median "
                  "spacing (twice the longest step for the worst case); a segment is at aliasing "
                  "risk when a step is longer than half the shortest wavelength asked for the "
                  f"field ({targets})."),
        data_table(frame.drop(columns=["at_risk"]), digits={"azimuth_deg": 1},
                   highlight=frame["at_risk"].to_numpy(), mark="risk"),
        paragraph("Rows at aliasing risk are marked. segments.csv adds the 95th percentile of the "
                  "spacing, the straightness (chord over length), the flags of every field and the "
                  "aliasing budget's recommended spacing and fitted fall-off."),
        "<h3>Risky stretches</h3>",
    ]
    stretches = []
    for field in results.fields:
        risky = field.audit.risky_stretches
        if len(risky):
            stretches.append(risky.assign(field=field.name)[["field", *risky.columns]])
    body.append(data_table(pd.concat(stretches, ignore_index=True), digits={"lon": 4, "lat": 4})
                if stretches else paragraph("None: every step is shorter than half the target."))
    body.append(paragraph("lon and lat are the middle of the stretch; spacing_km its longest step."))
    budgets = [f for f in results.fields if f.audit.budget is not None]
    if budgets:
        body.append("<h3>Aliasing budget</h3>")
        body.append(paragraph(
            "Each segment is split into stretches of homogeneous spacing; the fall-off of the "
            "spectrum (a power law for bathymetry, an exponential for potential fields) is fitted "
            "on its best-sampled stretches, and every stretch gets the aliased power at the "
            "shortest wavelength over the true power there (alias_contamination) and the spacing "
            "that keeps it under the tolerance. Stretches coarser than that are infill "
            "candidates. Details: docs/aliasing-budget.md."))
        frame = budgets[0].audit.budget.segments[["line", "segment"]].copy()
        for field in budgets:
            table = field.audit.budget.segments
            frame[f"{field.name}_recommended_spacing_km"] = table["recommended_spacing_km"].to_numpy()
        body.append(data_table(frame, digits=3, caption="Recommended spacing per segment and field"))
        body.append(paragraph("segments.csv gives the basis of each recommendation (the tolerance, "
                              "or the noise floor below which finer spacing only samples noise) and "
                              "the fitted fall-off."))
        infill = [f.audit.budget.infill().assign(field=f.name) for f in budgets]
        infill = pd.concat([t for t in infill if len(t)], ignore_index=True) if any(
            len(t) for t in infill) else pd.DataFrame()
        body.append("<h4>Infill candidates</h4>")
        if len(infill):
            body.append(data_table(infill[["field", "line", "segment", "start_km", "end_km", "lon", "lat",
                                           "spacing_km", "recommended_spacing_km",
                                           "alias_contamination"]],
                                   digits={"lon": 4, "lat": 4}))
        else:
            body.append(paragraph("None: the aliasing budget finds no stretch spaced more coarsely "
                                  "than it recommends."))
        body.append(paragraph("alias_budget.csv lists every stretch of every field; profiles.gpkg "
                              "holds the infill candidates as the line layers infill_FIELD, and the "
                              "maps draw them on a grey halo with ticks at their ends."))
        body.extend(_window_budget(budgets))
    body.append("<h3>Breaks (gaps and sharp turns)</h3>")
    breaks = results.segments.breaks
    body.append(data_table(breaks.rename(columns={"size": "size (km or deg)"}), digits=2)
                if len(breaks) else paragraph("None."))
    return Section("audit", "Spacing audit", "\n".join(body))


def _share(value) -> str:
    """A fraction for a table: three significant figures, ∞ where unbounded, – where unknown."""
    value = float(value)
    if np.isnan(value):
        return "–"
    return "∞" if np.isinf(value) else f"{value:.3g}"


def _window_budget(budgets) -> list[str]:
    """The aliasing budget of the along-track windows: a summary per field and the windows
    spaced more coarsely than recommended (HTML parts)."""
    rows, coarse = [], []
    for field in budgets:
        frame = field.window_frame()
        if frame is None or "alias_contamination" not in frame:
            continue
        value = frame["alias_contamination"].to_numpy(dtype=float)
        budgeted = ~np.isnan(value)
        exceeds = frame["exceeds_recommendation"].eq(True).to_numpy()
        dominant = frame["dominant_alias_contamination"].to_numpy(dtype=float)[budgeted]
        fraction = frame["aliased_variance_fraction"].to_numpy(dtype=float)[budgeted]
        rows.append({
            "field": field.name,
            "windows": len(frame),
            "budgeted": int(budgeted.sum()),
            "alias_contamination_median": _share(np.median(value[budgeted]) if budgeted.any() else np.nan),
            "alias_contamination_max": _share(value[budgeted].max() if budgeted.any() else np.nan),
            "over_tolerance": int((value[budgeted] > field.audit.budget.tolerance).sum()),
            "coarser_than_recommended": int(exceeds.sum()),
            "dominant_alias_contamination_max": _share(dominant.max() if dominant.size else np.nan),
            "aliased_variance_fraction_median": _share(np.median(fraction) if fraction.size else np.nan),
        })
        if exceeds.any():
            chosen = frame[exceeds].assign(field=field.name)
            chosen = chosen.assign(**{name: [_share(v) for v in chosen[name]] for name in (
                "alias_contamination", "dominant_alias_contamination", "aliased_variance_fraction")})
            coarse.append(chosen[["field", "line", "segment", "start_km", "end_km", "local_spacing_km",
                                  "recommended_spacing_km", "alias_contamination", "dominant_wavelength_km",
                                  "dominant_alias_contamination", "aliased_variance_fraction"]])
    if not rows:
        return []
    tolerances = ", ".join(f"{f.name} {f.audit.budget.tolerance:g}" for f in budgets)
    out = [
        "<h4>Windows</h4>",
        paragraph("Every along-track window budgeted at its local median station spacing with its "
                  "segment's fall-off: the aliased power over the true power at the shortest "
                  "wavelength (alias_contamination) and at the window's own dominant wavelength "
                  "(dominant_alias_contamination), and the aliased share of its variance. "
                  f"over_tolerance counts windows above the alias tolerance ({tolerances}); "
                  "coarser_than_recommended those whose local spacing exceeds their segment's "
                  "recommended spacing. ∞: the wavelength is not resolved at that spacing. "
                  "windows.csv and the windows_FIELD layers give every window's values with their "
                  "low-high ranges."),
        data_table(pd.DataFrame(rows)),
    ]
    if coarse:
        out.append(data_table(pd.concat(coarse, ignore_index=True), digits=3, max_rows=40,
                              caption="Windows spaced more coarsely than recommended"))
    return out


def spectra_section(results, figures: FigureSet) -> Section:
    """Spectra of every segment, per field, with the dominant wavelengths and tests."""
    from ..figures.spectra import overlaid_spectra_figure

    body = [paragraph(
        "Every segment resampled at its median station spacing (never across a gap) and analysed "
        f"by {results.config.spectrum_method}; shaded bands are 95 % confidence intervals. The "
        "dominant wavelength is the harmonic with the most variance; "
        "Fisher's p-value tests it against white noise, which overstates significance for red "
        "profiles, so the verdict that counts is the red-noise (AR(1)) one. beta is the power-law "
        "exponent of the spectrum, P ∝ k^(−beta)."
    )]
    for field in results.fields:
        plots = field.comparison.overlay()
        body.append(f"<h3>{esc(field.name)}</h3>")
        if plots:
            figure = overlaid_spectra_figure(plots, units=field.config.units,
                                             title=f"{field.name}: spectra of every segment")
            body.append(figures.add(f"spectra_{safe_name(field.name)}", figure,
                                    alt=f"spectra of {field.name}",
                                    caption=f"Spectra of {field.name}, segment by segment "
                                            f"(wavenumber below, wavelength above)."))
        frame = field.comparison.table.to_frame()[
            ["line", "segment", "length_km", "dominant_wavelength_km", "second_wavelength_km",
             "fisher_p_value", "red_noise_significant", "beta", "beta_err"]].copy()
        frame.insert(len(frame.columns) - 2, "lag1", [float(r.red_noise.lag1) for r in field.spectra])
        frame["fisher_p_value"] = [f"{p:.2e}" for p in frame["fisher_p_value"]]
        body.append(data_table(frame, digits={"lag1": 3, "beta": 2, "beta_err": 2}))
    return Section("spectra", "Spectra", "\n".join(body))


def map_section(results, figures: FigureSet) -> Section | None:
    """The wavelength map of every field, sliding-window counts and the windows at risk."""
    from ..figures.map import draw_map, render

    shown = [f for f in results.fields if f.windows is not None]
    if not shown:
        return None
    first = shown[0].windows.settings
    body = [paragraph(
        f"Windows of {first.window / 1e3:g} km every {first.step / 1e3:g} km along every segment "
        "(never across a gap). Each gives its dominant wavelength (harmonics 2 and up), its "
        "verdict against red noise, the local station spacing and the aliasing reasons: spacing "
        "(a step longer than half the shortest wavelength), rolloff (variance not decayed near the "
        "local Nyquist wavenumber) and near-nyquist (a peak close to the local Nyquist wavelength)."
    )]
    rows = []
    for field in shown:
        counts = window_counts(field.windows)
        frame = field.windows.to_frame()
        significant = frame["red_noise_significant"].to_numpy(dtype=bool)
        wavelengths = frame["dominant_wavelength_km"].to_numpy()[significant]
        rows.append({
            "field": field.name,
            "windows": counts["count"],
            "above_red_noise": int(significant.sum()),
            "median_dominant_wavelength_km": float(np.median(wavelengths)) if wavelengths.size
            else float("nan"),
            "at_aliasing_risk": counts["at_aliasing_risk"],
            "spacing": counts["reasons"]["spacing"],
            "rolloff": counts["reasons"]["rolloff"],
            "near-nyquist": counts["reasons"]["near-nyquist"],
        })
    body.append(data_table(pd.DataFrame(rows), digits=2))
    for field in shown:
        body.append(f"<h3>{esc(field.name)}</h3>")
        data = render(draw_map(field.windows, field=field.name, infill=field.infill), "png")
        caption = (f"Dominant wavelength of {field.name} in each window along the tracks; faded where "
                   "no peak stands above red noise, cased where a window is at aliasing risk")
        if field.infill is not None and len(field.infill):
            caption += (f"; on a grey halo with end ticks, the {len(field.infill)} infill stretch(es) "
                        f"spaced more coarsely than recommended for at most "
                        f"{100 * field.infill.tolerance:g} % aliased power at "
                        f"{field.infill.shortest_wavelength / 1e3:g} km")
        body.append(figures.add_png(
            f"map_{safe_name(field.name)}", data, alt=f"wavelength map of {field.name}",
            caption=caption + "."))
        frame = field.windows.to_frame()
        risky = frame[frame["aliasing_risk"].to_numpy(dtype=bool)]
        body.append(f"<h4>{esc(field.name)}: windows at aliasing risk</h4>")
        body.append(data_table(risky[["line", "segment", "start_km", "end_km", "lon", "lat",
                                 "dominant_wavelength_km", "local_spacing_km",
                                 "local_spacing_max_km", "local_nyquist_km", "reasons"]],
                          digits={"lon": 4, "lat": 4}, max_rows=40)
                    if len(risky) else paragraph("None."))
    body.append(paragraph("windows.csv holds every window of every field, with the aliasing "
                          "budget's columns where the field has a shortest wavelength; profiles.gpkg "
                          "holds the stations, segments, windows, warnings and infill stretches as "
                          "GIS layers."))
    return Section("map", "Wavelength map and windows", "\n".join(body))


def comparison_section(results, figures: FigureSet) -> Section:
    """The line table and the fabric fit of every field."""
    from ..figures.compare import fabric_figure

    body = [paragraph(
        "A lineated fabric of true wavelength L striking at s appears on a straight line of "
        "azimuth t at the apparent wavelength"), formula("λ_apparent = L / |sin(t − s)|"),
        paragraph(
            "fitted in wavenumber by least squares to one wavelength per straight segment (chord "
            f"over length at least {MIN_STRAIGHTNESS:g}): its strongest harmonic above red noise, "
            "weighted by half the harmonic spacing, λ² / (2 L) for a segment of length L. While "
            "more than three remain, the segment worst fitted is left out and the fit repeated when "
            f"it misses by more than {OUTLIER_WIDTHS:g} half-widths 1 / (2 L) in wavenumber."),
        note(FABRIC_ASSUMPTIONS)]
    fits = []
    for field in results.fields:
        body.append(f"<h3>{esc(field.name)}</h3>")
        if field.fit is not None:
            fit = field.fit
            fits.append({"field": field.name, **fit.to_json(), "note": fit.note})
            body.append(paragraph(str(fit)))
            body.append(figures.add(f"fabric_{safe_name(field.name)}", fabric_figure(
                fit, title=f"{field.name}: dominant wavelength against line azimuth"),
                alt=f"fabric fit of {field.name}",
                caption=f"Dominant wavelength of the segments in the fit against azimuth, and the "
                        f"fitted curve, for {field.name}."))
        else:
            body.append(note(f"No fabric fit: {field.comparison.fabric_note}"))
        shown = field.line_table()[["line", "segment", "azimuth_deg", "length_km",
                                  "dominant_wavelength_km", "red_noise_significant",
                                  "predicted_wavelength_km", "misfit_km", "aliasing_share", "in_fit",
                                  "excluded_because"]]
        body.append(data_table(shown, digits={"azimuth_deg": 1, "aliasing_share": 2}, highlight="in_fit"))
    if fits:
        body.insert(4, data_table(pd.DataFrame(fits), digits=2, caption="Fabric fits"))
    body.append(paragraph("Highlighted rows entered the fit. The dominant wavelength shown is each "
                          "segment's largest harmonic; the fit uses the strongest one above red "
                          "noise. aliasing_share is the share of the segment's windows at aliasing "
                          "risk. lines.csv holds every column."))
    return Section("comparison", "Line comparison and fabric", "\n".join(body))


def coherence_section(results, figures: FigureSet) -> Section | None:
    """Coherence and admittance of the configured pair, and the load model."""
    from ..figures.compare import coherence_figure

    coherence = results.coherence
    if coherence is None:
        return None
    pair = results.config.coherence
    first, second = coherence.input, coherence.output
    if pair.method == "welch":
        how = ("Welch blocks of " + (f"{pair.block / 1e3:g} km" if pair.block else "half the longest "
               "segment") + " at 50 % overlap")
    else:
        how = f"multitaper, NW = {pair.nw:g}"
    averaged = ""
    if coherence.coherence is not None:
        averaged = (f" over {len(coherence.coherence.segments)} segments resampled every "
                    f"{coherence.coherence.spacing:.1f} m")
    body = [paragraph(f"{second.name} (output, Y) against {first.name} (input, X){averaged}: {how}."),
        formula("S_xy = E[X* Y],  γ² = |S_xy|² / (S_xx S_yy),  Z = S_xy / S_xx"),
        paragraph("A negative phase means the output lags the input along the track. The squared "
                  "coherence of two unrelated fields exceeds 1 − α^(1/(n − 1)) with probability α "
                  "for n independent estimates."),
    ]
    spectrum = coherence.spectrum
    if spectrum is None:
        body.append(note(f"No cross-spectrum: {coherence.reason}"))
        return Section("coherence", "Coherence and admittance", "\n".join(body))
    body.append(paragraph(str(spectrum)))
    load = coherence.load
    units = f"{second.units} per {first.units}"
    if load is not None:
        body.append(formula("Z(k) = ± 2π G Δρ exp(−k_angular d),  k_angular = 2π k"))
        body.append(definitions([
            ("density contrast", f"{load.density_contrast:.0f} ± {load.density_contrast_err:.0f} kg/m³"),
            ("load depth d", f"{load.depth / 1e3:.3f} km"),
            ("band", f"{1e-3 / load.band[1]:.1f} to {1e-3 / load.band[0]:.1f} km, "
                     f"{load.n_used} coherent wavenumbers"),
        ]))
        body.append(note(LOAD_MODEL_ASSUMPTIONS))
    elif coherence.reason:
        body.append(note(coherence.reason))
    body.append(figures.add("coherence", coherence_figure(
        spectrum, model=load, model_admittance=coherence.model_admittance(),
        title=f"{second.name} against {first.name}", units=units),
        alt="coherence and admittance",
        caption="Squared coherence with its zero-coherence level (top); real part of the admittance, "
                "coherent wavenumbers with error bars, and the load model (bottom)."))
    frame = spectrum.to_frame()
    coherent = frame[spectrum.coherent]
    body.append(data_table(coherent, digits=4, caption="Coherent wavenumbers (coherence.csv has all)"))
    return Section("coherence", "Coherence and admittance", "\n".join(body))


def source_depth_section(results, figures: FigureSet) -> Section | None:
    """Depth to source per segment, for the fields that ask for it."""
    asked = [f for f in results.fields if f.config.source_depth]
    if not asked:
        return None
    body = [formula("ln P(k) ≈ A − 2 h k_angular,  h = −slope / 2"), note(SOURCE_DEPTH_ASSUMPTIONS)]
    for field in asked:
        rows = []
        for depth in field.source_depths:
            fit = depth.fit
            rows.append({"line": depth.line, "segment": depth.segment,
                         "depth_km": np.nan if fit is None or depth.reason else fit.depth / 1e3,
                         "depth_err_km": np.nan if fit is None or depth.reason else fit.depth_err / 1e3,
                         "band_min_per_km": np.nan if fit is None else fit.band_min * 1e3,
                         "band_max_per_km": np.nan if fit is None else fit.band_max * 1e3,
                         "n_bins": 0 if fit is None else fit.n_bins,
                         "note": depth.reason or (fit.band_rule + " band")})
        body.append(f"<h3>{esc(field.name)}</h3>")
        body.append(data_table(pd.DataFrame(rows), digits=3))
    return Section("source-depth", "Depth to source", "\n".join(body))


def warnings_section(results, figures: FigureSet) -> Section:
    """Every warning with its step, field and location."""
    frame = pd.DataFrame([n.to_json() for n in results.notices],
                         columns=["step", "field", "message", "where"])
    body = [paragraph("Each message names the file and row, or the line, segment and distance, it "
                      "is about. docs/interpreting.md explains each kind and what to do about it."),
            data_table(frame)]
    return Section("warnings", "Warnings", "\n".join(body))


METHODS = (
    ("Along-track distance",
     "Geodesics on the WGS84 ellipsoid between consecutive stations (Karney 2013, J. Geodesy 87, "
     "43–55; pyproj.Geod). Lines split at gaps (a step over 5 times the median, locally too) and "
     "at sharp turns. Details: docs/geometry-and-spacing.md.",
     "d = Σ geodesic(station_i, station_i+1)"),
    ("Spacing audit",
     "A spacing dx resolves wavelengths down to the Nyquist wavelength 2 dx (Shannon 1949, Proc. "
     "IRE 37, 10–21); shorter ones fold back (alias) to longer ones.",
     "λ_Nyquist = 2 dx;  at risk where dx > λ_shortest / 2;  k_alias = |k − n/dx|, n = round(k dx)"),
    ("Resampling",
     "Linear interpolation on geodesic distance within a segment; a polyphase anti-alias low-pass "
     "(Kaiser window) before coarsening (Crochiere and Rabiner 1983).",
     "y(j dx), j = 0 … N − 1"),
    ("Harmonic table",
     "Finite Fourier series of the detrended segment; the variances of the harmonics add up to the "
     "sample variance (Parseval). Details: docs/methods-spectral.md.",
     "s_k² = N / (2 (N − 1)) (a_k² + b_k²),  wavelength N dx / k"),
    ("Fisher's g test (white-noise null)",
     "Fisher (1929), Proc. R. Soc. A 125, 54–59: exact tail probability of the largest share.",
     "g = max s_k² / Σ s_k²,  P(g > x) = Σ_j (−1)^(j−1) C(m, j) (1 − j x)^(m−1)"),
    ("Red-noise test (AR(1) null)",
     "Gilman, Fuglister and Mitchell (1963); Torrence and Compo (1998), BAMS 79, 61–78.",
     "P_k = (1 − r²) / (1 + r² − 2 r cos(2π k / N)),  threshold P_k χ²_2(1 − α) / 2"),
    ("Density estimates",
     "Welch (1967) averaged tapered blocks; Thomson (1982) multitaper with DPSS tapers and "
     "adaptive weights; χ² confidence intervals with equivalent degrees of freedom (Percival and "
     "Walden 1993).",
     "P(k) in units² per cycle/km;  interval [ν P / χ²_ν((1+c)/2), ν P / χ²_ν((1−c)/2)]"),
    ("Along-track windows",
     "Windows never leave their segment; one batched FFT per segment. Details: "
     "docs/windows-and-map.md.",
     "resolution 1 / W;  dominant wavelength W / k, k ≥ 2"),
    ("Fabric fit",
     "Apparent wavelength on an oblique line, the lineated limit of Goff and Jordan (1988), fitted "
     "by least squares in wavenumber. Details: docs/methods-cross.md.",
     "1 / λ_apparent = |sin(t − s)| / L"),
    ("Coherence and admittance",
     "Averaged cross-spectra; zero-coherence level after Carter, Knapp and Nuttall (1973); gain "
     "error after Bendat and Piersol. Details: docs/methods-cross.md.",
     "γ² = |S_xy|² / (S_xx S_yy),  c_α = 1 − α^(1/(n−1)),  Z = S_xy / S_xx"),
    ("Uncompensated load",
     "Linear term of Parker (1972), Geophys. J. R. astr. Soc. 31, 447–455; Watts (2001), "
     "Isostasy and Flexure of the Lithosphere, ch. 5; G = 6.67430e-11 m³ kg⁻¹ s⁻² (CODATA 2018).",
     "Z(k) = 2π G Δρ exp(−k_angular d)"),
    ("Depth to source",
     "Spector and Grant (1970), Geophysics 35, 293–302. Details: docs/methods-spectral.md.",
     "ln P = A − 2 h k_angular,  k_angular = 2π k"),
)


def methods_section(results, figures: FigureSet) -> Section:
    """Methods, with formulas and published sources, short."""
    body = []
    for title, text, equation in METHODS:
        body.append(f"<h3>{esc(title)}</h3>")
        body.append(formula(equation))
        body.append(paragraph(text))
    body.append(paragraph("docs/interpreting.md explains how to read every result and warning; "
                          "docs/user-guide.md walks through a whole survey."))
    return Section("methods", "Methods", "\n".join(body))


def config_section(results, figures: FigureSet, *, config_text: str, provenance) -> Section:
    """The configuration as run, and the software and inputs it ran on."""
    body = [
        paragraph("The configuration the run used, every default filled in; it is also written "
                  "beside this report as config.toml. To repeat the run exactly:"),
        preformatted("profiles report --config config.toml --out another_folder"),
        preformatted(config_text),
        "<h3>Inputs and software</h3>",
        definitions(provenance),
    ]
    return Section("config", "Configuration and provenance", "\n".join(body))


def cautions_section(results, figures: FigureSet) -> Section:
    """The cautions, and the assumptions of every model estimate."""
    body = [items(CAUTIONS, css="cautions"), "<h3>Model assumptions</h3>",
            items([("Fabric fit.", FABRIC_ASSUMPTIONS), ("Density contrast.", LOAD_MODEL_ASSUMPTIONS),
                   ("Depth to source.", SOURCE_DEPTH_ASSUMPTIONS)])]
    return Section("cautions", "Cautions", "\n".join(body))

