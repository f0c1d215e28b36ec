"""Comparison plots: apparent wavelength against azimuth with the fabric fit; coherence and
admittance with the load model. Drawing only: every number comes from a result object."""

from __future__ import annotations

import numpy as np

from .render import new_figure
from .spectra import wavelength_axis


def fabric_figure(fit, *, title: str):
    """Apparent wavelength of each line against its azimuth, with the fitted curve L/|sin(t-s)|.

    ``fit`` is a :class:`profiles.fabric.FabricFit`.
    """
    figure = new_figure(7.0, 4.2)
    ax = figure.add_subplot()
    azimuth = np.mod(np.asarray(fit.azimuth_deg, dtype=float), 180.0)
    curve = np.linspace(0.0, 180.0, 721)
    predicted = np.asarray(fit.predicted_wavelength(curve), dtype=float) / 1e3
    cap = 8.0 * max(float(np.nanmax(fit.observed)) / 1e3, fit.wavelength / 1e3)
    predicted = np.where(predicted > cap, np.nan, predicted)
    ax.plot(
        curve,
        predicted,
        color="#1f4e79",
        lw=1.3,
        label=f"fit: L = {fit.wavelength / 1e3:.2f} km, strike {fit.strike_deg:.1f}°",
    )
    ax.scatter(
        azimuth,
        np.asarray(fit.observed) / 1e3,
        s=36,
        marker="o",
        facecolor="white",
        edgecolor="#b03a2e",
        lw=1.4,
        zorder=3,
        label="dominant wavelength per line",
    )
    for name, a, w in zip(fit.lines, azimuth, np.asarray(fit.observed) / 1e3, strict=True):
        ax.annotate(name, (a, w), xytext=(4, 4), textcoords="offset points", fontsize=7)
    ax.axvline(np.mod(fit.strike_deg, 180.0), color="#7a7a7a", ls=":", lw=1.0)
    ax.set_yscale("log")
    ax.set_xlim(0, 180)
    ax.set_xticks(np.arange(0, 181, 30))
    ax.set_xlabel("line azimuth (degrees, modulo 180)")
    ax.set_ylabel("apparent wavelength (km)")
    ax.set_title(title, fontsize=10)
    ax.grid(True, color="#dddddd", lw=0.6)
    ax.legend(fontsize=8, frameon=True, framealpha=0.9, loc="upper right")
    return figure


def coherence_figure(spectrum, *, model=None, model_admittance=None, title: str, units: str):
    """Squared coherence (with its zero-coherence level) and admittance (with the model).

    ``spectrum`` is a :class:`profiles.cross.CrossSpectrum`; ``model_admittance`` the model's
    admittance at ``spectrum.wavenumber`` (output units per input unit).
    """
    k = np.asarray(spectrum.wavenumber, dtype=float) * 1e3
    figure = new_figure(7.0, 6.0)
    top, bottom = figure.subplots(2, 1, sharex=True)
    top.plot(k, spectrum.coherence, color="#1f4e79", lw=1.2, marker=".", ms=3, label="squared coherence")
    top.axhline(
        spectrum.coherence_threshold,
        color="#b03a2e",
        ls="--",
        lw=1.0,
        label=f"zero-coherence level ({100 * (1 - spectrum.alpha):.0f}%)",
    )
    top.set_ylim(0, 1.02)
    top.set_ylabel("squared coherence")
    top.set_xscale("log")
    top.legend(fontsize=8, frameon=False, loc="lower left")
    top.grid(True, color="#dddddd", lw=0.6)
    top.set_title(title, fontsize=10)
    wavelength_axis(top)
    real = np.real(spectrum.admittance)
    error = np.asarray(spectrum.admittance_err, dtype=float)
    error = np.where(np.isfinite(error), error, np.nan)
    coherent = np.asarray(spectrum.coherence) > spectrum.coherence_threshold
    bottom.errorbar(
        k[coherent],
        real[coherent],
        yerr=error[coherent],
        fmt="o",
        ms=3.5,
        color="#1f4e79",
        ecolor="#9fb6cd",
        lw=0.8,
        label="admittance (coherent)",
    )
    bottom.plot(
        k[~coherent], real[~coherent], "x", ms=3.5, color="#9a9a9a", label="admittance (not coherent)"
    )
    if model_admittance is not None:
        label = "uncompensated load model"
        if model is not None:
            label += f": Δρ = {model.density_contrast:.0f} ± {model.density_contrast_err:.0f} kg/m³"
        bottom.plot(k, np.real(model_admittance), color="#b03a2e", lw=1.3, label=label)
    bottom.axhline(0.0, color="#555555", lw=0.6)
    bottom.set_xscale("log")
    bottom.set_xlabel("wavenumber (cycles per km)")
    bottom.set_ylabel(f"admittance, real part ({units})")
    bottom.legend(fontsize=8, frameon=False, loc="best")
    bottom.grid(True, color="#dddddd", lw=0.6)
    return figure
