"""Assembling the report: sections into one HTML file, and the tables, figures and summary
beside it.

``report.html`` is self-contained: the stylesheet is inline, every figure is a base64 PNG data
URI, and nothing refers to the network. The template (``report.html``) and the stylesheet
(``report.css``) ship as package data of :mod:`profiles.report`.
"""

from __future__ import annotations

import string
import sys
from importlib import resources

import pandas as pd

from .. import __version__
from . import sections as parts
from .html import esc
from .sections import safe_name

#: Tables written beside the report.
TABLES = (
    "segments.csv",
    "risky_stretches.csv",
    "alias_budget.csv",
    "breaks.csv",
    "stations.csv",
    "spectra.csv",
    "harmonics.csv",
    "psd.csv",
    "windows.csv",
    "lines.csv",
    "fabric.csv",
    "coherence.csv",
    "source_depth.csv",
)
#: The report, its summary, the configuration that repeats the run, and the GIS layers.
DOCUMENTS = ("report.html", "summary.json", "config.toml", "profiles.gpkg")


def figure_names(config) -> tuple[str, ...]:
    """Figure files the report may write for a configuration (under ``figures/``)."""
    names = []
    for item in config.fields:
        stem = safe_name(item.name)
        names += [f"figures/map_{stem}.png", f"figures/spectra_{stem}.png", f"figures/fabric_{stem}.png"]
    if config.coherence is not None:
        names.append("figures/coherence.png")
    return tuple(names)


def report_outputs(config) -> tuple[str, ...]:
    """Every output name of a report run, known before anything is computed."""
    return DOCUMENTS + TABLES + figure_names(config)


def _template(name: str) -> str:
    return resources.files("profiles.report").joinpath(name).read_text(encoding="utf-8")


def provenance(results, *, command: str | None) -> list[tuple[str, str]]:
    """Inputs with their SHA-256 digests, software versions, the command line."""
    import matplotlib
    import numpy
    import pyproj
    import scipy

    from .summary import sha256

    pairs = [(f"input {p.name}", f"{p} (SHA-256 {sha256(p)})") for p in results.config.inputs]
    pairs += [
        ("profiles", __version__),
        ("Python", sys.version.split()[0]),
        ("numpy, scipy, pandas", f"{numpy.__version__}, {scipy.__version__}, {pd.__version__}"),
        ("pyproj, matplotlib", f"{pyproj.__version__}, {matplotlib.__version__}"),
    ]
    if command:
        pairs.append(("command", command))
    return pairs


def render_sections(results, figures: parts.FigureSet, *, config_text: str, command: str | None,
                    quiet: bool = True):
    """Every section, in the report's order (sections with nothing to show are left out)."""
    from ..progress import progress

    makers = (
        parts.summary_section,
        parts.rows_section,
        parts.audit_section,
        parts.map_section,
        parts.spectra_section,
        parts.comparison_section,
        parts.coherence_section,
        parts.source_depth_section,
        parts.warnings_section,
        parts.methods_section,
    )
    out = [make(results, figures)
           for make in progress(makers, description="report sections", unit="section", quiet=quiet)]
    out.append(parts.config_section(results, figures, config_text=config_text,
                                    provenance=provenance(results, command=command)))
    out.append(parts.cautions_section(results, figures))
    return [section for section in out if section is not None]


def render_report(
    results, *, config_text: str, command: str | None = None, quiet: bool = True
) -> tuple[str, dict[str, bytes]]:
    """The report's HTML and its figures as PNG files (``{"figures/NAME.png": bytes}``)."""
    figures = parts.FigureSet()
    sections = render_sections(results, figures, config_text=config_text, command=command, quiet=quiet)
    nav = "<ul>" + "".join(f'<li><a href="#{esc(s.key)}">{esc(s.title)}</a></li>' for s in sections) + "</ul>"
    segments = results.segments
    subtitle = (f"{len(set(s.line for s in segments))} lines, {len(segments)} segments, "
                f"{', '.join(f.name for f in results.fields)}")
    text = string.Template(_template("report.html")).substitute(
        title=esc(results.config.name),
        subtitle=esc(subtitle),
        version=esc(__version__),
        css=_template("report.css"),
        nav=nav,
        sections="\n".join(s.render() for s in sections),
    )
    return text, figures.files


def _tables(results) -> dict[str, pd.DataFrame]:
    """The CSV tables, each with a ``field`` column where fields differ."""

    def stack(frames):
        frames = list(frames)
        filled = [f for f in frames if len(f)]
        if filled:
            return pd.concat(filled, ignore_index=True)
        return frames[0].iloc[0:0] if frames else pd.DataFrame()

    def tagged(frame, name, **extra):
        frame = frame.copy()
        for key, value in reversed(list({"field": name, **extra}.items())):
            frame.insert(0, key, value)
        return frame

    out = {
        "segments": stack(tagged(f.audit.segments_table(), f.name) for f in results.fields),
        "risky_stretches": stack(tagged(f.audit.risky_stretches, f.name) for f in results.fields),
        "alias_budget": stack(tagged(f.audit.budget.stretches, f.name)
                              for f in results.fields if f.audit.budget is not None),
        "breaks": results.segments.breaks,
        "stations": results.survey.stations,
        "spectra": stack(tagged(f.comparison.table.to_frame(), f.name) for f in results.fields),
        "harmonics": stack(
            tagged(r.harmonics.to_frame(), f.name, line=r.uniform.line, segment=r.uniform.number)
            for f in results.fields for r in f.spectra
        ),
        "psd": stack(
            tagged(r.density.to_frame(), f.name, line=r.uniform.line, segment=r.uniform.number)
            for f in results.fields for r in f.spectra if r.density is not None
        ),
        "windows": stack(
            tagged(f.window_frame().assign(reasons=lambda t: t["reasons"].map(" ".join)), f.name)
            for f in results.fields if f.windows is not None
        ),
        "lines": stack(tagged(f.line_table(), f.name) for f in results.fields),
        "fabric": stack(tagged(f.fit.to_frame(), f.name) for f in results.fields if f.fit is not None),
        "source_depth": stack(
            tagged(d.fit.to_frame(), f.name, line=d.line, segment=d.segment)
            for f in results.fields for d in f.source_depths if d.fit is not None
        ),
    }
    coherence = results.coherence
    if coherence is not None and coherence.spectrum is not None:
        frame = coherence.spectrum.to_frame()
        frame.insert(0, "output", coherence.output.name)
        frame.insert(0, "input", coherence.input.name)
        out["coherence"] = frame
    else:
        out["coherence"] = pd.DataFrame()
    return out


def geopackage_layers(results) -> dict:
    """Layers of ``profiles.gpkg``: ``stations`` (every input row), then per field
    ``segments_FIELD`` (spacing audit), ``windows_FIELD`` (with the aliasing budget's columns
    where the field has a shortest wavelength), ``warnings_FIELD`` (one point per aliasing
    reason of a window at risk) and, where the field has a shortest wavelength, ``infill_FIELD``
    (stretches spaced more coarsely than the budget recommends, empty when there is none),
    built by :mod:`profiles.gis`."""
    from ..gis import infill_layer, segment_layer, station_layer, warning_layer, window_layer

    layers = {"stations": station_layer(results.survey)}
    for field in results.fields:
        stem = safe_name(field.name)
        layers[f"segments_{stem}"] = segment_layer(results.segments, field.audit)
        if field.windows is not None:
            layers[f"windows_{stem}"] = window_layer(field.windows, field.audit.budget)
            layers[f"warnings_{stem}"] = warning_layer(field.windows)
        if field.infill is not None:
            layers[f"infill_{stem}"] = infill_layer(field.infill)
    return layers


def write_geopackage(path, results):
    """Write :func:`geopackage_layers` into one GeoPackage at ``path`` (EPSG:4326)."""
    from ..gis import write_layers

    return write_layers(path, geopackage_layers(results))


def write_report(results, folder, *, command: str | None = None, quiet: bool = True) -> dict:
    """Write the report, tables, figures, configuration and summary into an OutputFolder.

    Parameters
    ----------
    results : SurveyResults
        From :func:`profiles.report.job.run_survey`.
    folder : OutputFolder
        Declared with :func:`report_outputs` of the same configuration.
    command : str, optional
        The command line, recorded in the report.
    quiet : bool
        No progress bar (one is drawn on stderr only when it is a terminal anyway).

    Returns
    -------
    dict
        The summary document (as written to ``summary.json``).
    """
    from .summary import summary_document

    config_text = results.config.to_toml(relative_to=folder.folder)
    html, figures = render_report(results, config_text=config_text, command=command, quiet=quiet)
    for name, frame in _tables(results).items():
        folder.csv(f"{name}.csv", frame)
    for name, data in figures.items():
        folder.bytes(name, data)
    folder.bytes("config.toml", config_text.encode("utf-8"))
    folder.with_writer("profiles.gpkg", lambda path: write_geopackage(path, results))
    written = [p.relative_to(folder.folder).as_posix() for p in folder.written]
    outputs = sorted({*written, "report.html", "summary.json"})
    document = summary_document(results, outputs=outputs)
    folder.json("summary.json", document)
    folder.bytes("report.html", html.encode("utf-8"))
    return document
