"""Spectrum plots: log-log PSD against wavenumber, confidence band, wavelength axis on top.

Drawing only: every number comes from a result object of :mod:`profiles.spectral`.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np

from .render import new_figure


def _inverse(values):
    """1/x guarded for the secondary wavelength axis (k <= 0 maps to inf, no warnings)."""
    values = np.asarray(values, dtype=float)
    out = np.full(values.shape, np.inf)
    np.divide(1.0, values, out=out, where=values > 0)
    return out


def wavelength_axis(ax) -> None:
    """Add a top axis labelled in wavelength (km) to an axis in cycles per km."""
    top = ax.secondary_xaxis("top", functions=(_inverse, _inverse))
    top.set_xlabel("wavelength (km)")


def draw_spectrum(
    ax,
    *,
    wavenumber_per_km: np.ndarray,
    density: np.ndarray,
    lower: np.ndarray | None = None,
    upper: np.ndarray | None = None,
    background: np.ndarray | None = None,
    threshold: np.ndarray | None = None,
    peaks_per_km: Sequence[float] = (),
    label: str | None = None,
    colour: str = "#1f4e79",
) -> None:
    """Draw one spectrum on ``ax`` (log-log; the zero wavenumber is never drawn)."""
    k = np.asarray(wavenumber_per_km, dtype=float)
    keep = k > 0
    ax.plot(k[keep], np.asarray(density)[keep], color=colour, lw=1.2, label=label)
    if lower is not None and upper is not None:
        ax.fill_between(
            k[keep],
            np.asarray(lower)[keep],
            np.asarray(upper)[keep],
            color=colour,
            alpha=0.2,
            lw=0,
            label="confidence interval" if label is None else None,
        )
    if background is not None:
        ax.plot(
            k[keep],
            np.asarray(background)[keep],
            color="#7a7a7a",
            lw=1.0,
            ls="-",
            label="red-noise background (AR(1))",
        )
    if threshold is not None:
        ax.plot(
            k[keep],
            np.asarray(threshold)[keep],
            color="#7a7a7a",
            lw=1.0,
            ls="--",
            label="red-noise significance level",
        )
    density_k = np.asarray(density)[keep]
    for peak in peaks_per_km:
        at = int(np.argmin(np.abs(k[keep] - peak)))
        ax.annotate(
            f"{1.0 / peak:.3g} km",
            (k[keep][at], density_k[at]),
            xytext=(0, 8),
            textcoords="offset points",
            ha="center",
            fontsize=8,
            color="#b03a2e",
            arrowprops={"arrowstyle": "-", "color": "#b03a2e", "lw": 0.8},
        )
    ax.set_xscale("log")
    ax.set_yscale("log")
    ax.grid(True, which="major", color="#dddddd", lw=0.6)


def spectrum_figure(
    *,
    wavenumber_per_km: np.ndarray,
    density: np.ndarray,
    title: str,
    units: str,
    lower: np.ndarray | None = None,
    upper: np.ndarray | None = None,
    background: np.ndarray | None = None,
    threshold: np.ndarray | None = None,
    peaks_per_km: Sequence[float] = (),
    ylabel: str | None = None,
):
    """A figure with one spectrum, its confidence band, background and labelled peaks."""
    figure = new_figure(7.0, 4.4)
    ax = figure.add_subplot()
    draw_spectrum(
        ax,
        wavenumber_per_km=wavenumber_per_km,
        density=density,
        lower=lower,
        upper=upper,
        background=background,
        threshold=threshold,
        peaks_per_km=peaks_per_km,
    )
    ax.set_xlabel("wavenumber (cycles per km)")
    ax.set_ylabel(ylabel or f"power spectral density ({units}² per cycle/km)")
    ax.set_title(title, fontsize=10)
    wavelength_axis(ax)
    handles, _ = ax.get_legend_handles_labels()
    if handles:
        ax.legend(fontsize=8, loc="lower left", frameon=False)
    return figure


def overlaid_spectra_figure(spectra: Sequence[dict], *, units: str, title: str, per_panel: int = 6):
    """Spectra of many segments: overlaid, or small multiples when there are many.

    Each item of ``spectra`` is a dict with ``label``, ``wavenumber_per_km``, ``density`` and
    optionally ``lower`` and ``upper``.
    """
    count = len(spectra)
    panels = max(1, int(np.ceil(count / per_panel)))
    columns = 1 if panels == 1 else 2
    rows = int(np.ceil(panels / columns))
    figure = new_figure(7.0 if columns == 1 else 10.0, 4.4 if rows == 1 else 3.2 * rows)
    axes = figure.subplots(rows, columns, squeeze=False, sharex=True, sharey=True).ravel()
    colours = ["#1f4e79", "#c0392b", "#27ae60", "#8e44ad", "#d68910", "#17a589"]
    for i, item in enumerate(spectra):
        ax = axes[i // per_panel]
        draw_spectrum(
            ax,
            wavenumber_per_km=item["wavenumber_per_km"],
            density=item["density"],
            lower=item.get("lower"),
            upper=item.get("upper"),
            label=item["label"],
            colour=colours[i % per_panel % len(colours)],
        )
    for j, ax in enumerate(axes):
        if j >= panels:
            ax.set_visible(False)
            continue
        ax.legend(fontsize=7, loc="lower left", frameon=False)
        ax.set_xlabel("wavenumber (cycles per km)")
        ax.set_ylabel(f"PSD ({units}² per cycle/km)")
        wavelength_axis(ax)
    figure.suptitle(title, fontsize=10)
    return figure
