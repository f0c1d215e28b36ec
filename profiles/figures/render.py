"""Rendering matplotlib figures to bytes (PNG, SVG) without a display.

Every figure of ``profiles`` is drawn on the Agg canvas and handed to the safe writers of
:mod:`profiles.outputs` as bytes, so that no half-written image is ever left behind.
"""

from __future__ import annotations

import io


def new_figure(width: float, height: float):
    """A matplotlib Figure on the Agg canvas (no pyplot state, no display needed)."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    figure = Figure(figsize=(width, height), dpi=110, layout="constrained")
    FigureCanvasAgg(figure)
    return figure


def figure_bytes(figure, fmt: str) -> bytes:
    """The figure as PNG or SVG bytes.

    SVG output carries no date and a fixed hash salt for its element ids, so reruns give
    identical files.
    """
    import matplotlib

    buffer = io.BytesIO()
    metadata = {"Date": None} if fmt == "svg" else {"Software": None}
    with matplotlib.rc_context({"svg.hashsalt": "profiles"}):
        figure.savefig(buffer, format=fmt, metadata=metadata)
    return buffer.getvalue()
