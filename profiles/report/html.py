"""Small HTML builders for the report: escaped text, tables, embedded figures, sections.

Everything returns strings of HTML. Text is always escaped; figures are embedded as base64
PNG data URIs, so the report is one self-contained file that needs no network.
"""

from __future__ import annotations

import base64
import html
import math
from dataclasses import dataclass

import numpy as np
import pandas as pd


def esc(text) -> str:
    """Escaped text."""
    return html.escape(str(text), quote=True)


@dataclass(frozen=True)
class Section:
    """One section of the report.

    Attributes
    ----------
    key : str
        The section's id (anchor), e.g. ``"summary"``.
    title : str
        Heading.
    body : str
        HTML of the section's content.
    """

    key: str
    title: str
    body: str

    def render(self) -> str:
        return (
            f'<section id="{esc(self.key)}">\n<h2>{esc(self.title)}</h2>\n{self.body}\n</section>'
        )


def paragraph(text: str, *, css: str | None = None) -> str:
    """A paragraph of escaped text."""
    attribute = f' class="{esc(css)}"' if css else ""
    return f"<p{attribute}>{esc(text)}</p>"


def items(entries, *, css: str | None = None) -> str:
    """A bulleted list of escaped entries (strings) or of ``(strong, rest)`` pairs."""
    attribute = f' class="{esc(css)}"' if css else ""
    lines = []
    for entry in entries:
        if isinstance(entry, tuple):
            strong, rest = entry
            lines.append(f"<li><strong>{esc(strong)}</strong> {esc(rest)}</li>")
        else:
            lines.append(f"<li>{esc(entry)}</li>")
    return f"<ul{attribute}>\n" + "\n".join(lines) + "\n</ul>"


def definitions(pairs) -> str:
    """A two-column key/value table from ``(name, value)`` pairs."""
    rows = "\n".join(f"<tr><th>{esc(k)}</th><td>{esc(v)}</td></tr>" for k, v in pairs)
    return f'<table class="facts">\n{rows}\n</table>'


def formula(text: str) -> str:
    """A displayed formula (plain text with Unicode symbols)."""
    return f'<div class="formula">{esc(text)}</div>'


def preformatted(text: str) -> str:
    """Preformatted, escaped text (configuration, tables)."""
    return f"<pre>{esc(text)}</pre>"


def note(text: str) -> str:
    """A highlighted remark."""
    return f'<p class="note">{esc(text)}</p>'


def cell(value, *, digits: int = 3) -> str:
    """One table cell's text: floats to ``digits`` decimals, NaN as an en dash, yes/no."""
    if value is None:
        return "–"
    if isinstance(value, bool | np.bool_):
        return "yes" if value else "no"
    if isinstance(value, int | np.integer):
        return str(int(value))
    if isinstance(value, float | np.floating):
        if not math.isfinite(float(value)):
            return "–" if math.isnan(float(value)) else ("∞" if value > 0 else "−∞")
        return f"{float(value):.{digits}f}"
    if isinstance(value, list | tuple):
        return ", ".join(str(v) for v in value) or "–"
    text = str(value)
    return text if text else "–"


def table(
    frame: pd.DataFrame,
    *,
    digits: dict[str, int] | int = 3,
    caption: str | None = None,
    highlight=None,
    mark: str = "flag",
    max_rows: int | None = None,
) -> str:
    """A DataFrame as an HTML table.

    Parameters
    ----------
    frame : DataFrame
        Column names are used as headers (units are in them).
    digits : int or dict
        Decimals of float columns (a dict gives them per column; default 3).
    caption : str, optional
    highlight : str or array of bool, optional
        A boolean column (or one flag per row); rows where it is True are marked.
    mark : str
        CSS class of marked rows: ``"flag"`` (kept, chosen) or ``"risk"`` (at risk).
    max_rows : int, optional
        Show at most this many rows, and say how many were left out (the CSV has them all).
    """
    if frame.empty:
        return paragraph("(none)", css="empty")
    shown = frame if max_rows is None else frame.head(max_rows)
    # Headers may break after an underscore, so that long names with units stay narrow.
    head = "".join(f"<th>{esc(column).replace('_', '_<wbr>')}</th>" for column in shown.columns)
    numeric = {c for c in shown.columns if pd.api.types.is_numeric_dtype(shown[c])}
    body = []
    if highlight is None:
        marks = np.zeros(len(shown), bool)
    elif isinstance(highlight, str):
        marks = shown[highlight].to_numpy(dtype=bool)
    else:
        marks = np.asarray(highlight, dtype=bool)[: len(shown)]
    for flagged, row in zip(marks, shown.itertuples(index=False), strict=True):
        cells = []
        for column, value in zip(shown.columns, row, strict=True):
            places = digits.get(column, 3) if isinstance(digits, dict) else digits
            css = ' class="num"' if column in numeric else ""
            cells.append(f"<td{css}>{esc(cell(value, digits=places))}</td>")
        body.append((f'<tr class="{esc(mark)}">' if flagged else "<tr>") + "".join(cells) + "</tr>")
    caption_html = f"<caption>{esc(caption)}</caption>" if caption else ""
    more = ""
    if max_rows is not None and len(frame) > max_rows:
        more = paragraph(f"… and {len(frame) - max_rows} more rows (all of them are in the CSV file).",
                         css="more")
    return (
        f'<div class="scroll"><table class="data">{caption_html}<thead><tr>{head}</tr></thead>'
        f"<tbody>\n" + "\n".join(body) + f"\n</tbody></table></div>{more}"
    )


def png_data_uri(data: bytes) -> str:
    """A PNG as a ``data:`` URI."""
    return "data:image/png;base64," + base64.b64encode(data).decode("ascii")


def image(data: bytes, *, alt: str, caption: str) -> str:
    """An embedded PNG with its caption."""
    return (
        f'<figure><img src="{png_data_uri(data)}" alt="{esc(alt)}">'
        f"<figcaption>{esc(caption)}</figcaption></figure>"
    )
