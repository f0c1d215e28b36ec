"""Cross-spectra of two fields on the same line: coherence, admittance, load-model fit.

Conventions (stated once, used everywhere in this module):

- ``input_values`` is X (e.g. seafloor elevation or depth, metres), ``output_values`` is Y
  (e.g. free-air gravity, mGal), both on one uniform grid of ``spacing`` metres.
- Cross-spectrum ``S_xy = E[conj(X) Y]``: the same order as ``scipy.signal.csd(x, y)``.
- Admittance ``Z = S_xy / S_xx`` (complex, output units per input unit: mGal per metre for
  gravity against topography in metres); gain ``|Z|``; phase ``angle(Z)`` in degrees.
  If the output is the input moved forward along the track by ``δ`` metres,
  ``y(d) = x(d - δ)``, the phase is ``-360 k δ`` degrees (k in cycles per metre): a negative
  phase means the output lags the input (its features appear further along the line),
  a positive phase means the output leads.
- Squared coherence ``γ² = |S_xy|² / (S_xx S_yy)``.
- Zero-coherence significance level ``c_α = 1 - α^(1/(n-1))`` for n independent estimates
  (Carter, Knapp & Nuttall 1973; Thompson 1979; from memory). For overlapping Welch blocks n
  is the effective number ``ν/2`` of Percival & Walden (1993) eq. (292b)
  (:func:`profiles.spectral.psd.welch_dof`).
- The tapered Fourier coefficients are those of the spectral core,
  :func:`profiles.spectral.psd.welch_coefficients` and
  :func:`profiles.spectral.psd.multitaper_coefficients`: the one-sided densities are
  ``onesided * mean(conj(C_x) C_y)`` over the stack of blocks or tapers.
- Random error of the gain ``ε = sqrt(1 - γ²) / (|γ| sqrt(2 n))`` (Bendat & Piersol, Random
  Data, from memory); ``admittance_err = ε |Z|``.

Only averaged estimates are made: a single periodogram gives ``γ² = 1`` at every wavenumber.
The zero and Nyquist wavenumbers are dropped (after detrending they carry no information,
and their real-valued coefficients have half the degrees of freedom).
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import Literal, get_args

import numpy as np

from .errors import InputError, SpacingError
from .spectral.preprocess import Detrend, Taper
from .spectral.psd import multitaper_coefficients, welch_coefficients, welch_dof

#: Averaging methods for cross-spectra.
CrossMethod = Literal["welch", "multitaper"]

#: Newtonian constant of gravitation, m^3 kg^-1 s^-2 (CODATA 2018).
GRAVITATIONAL_CONSTANT = 6.67430e-11
#: One milligal in m s^-2.
MGAL = 1e-5
#: Default minimum number of independent estimates: with n = 8 the 95 % zero-coherence level
#: is 0.348 (references.md section 4); fewer averages make the level too high to be useful.
MIN_ESTIMATES = 8.0


@dataclass(frozen=True, eq=False)
class CrossSpectrum:
    """Averaged cross-spectrum of an input and an output field.

    Attributes
    ----------
    wavenumber : ndarray
        Wavenumbers in cycles per metre (zero and Nyquist excluded).
    coherence : ndarray
        Squared coherence ``|S_xy|² / (S_xx S_yy)``, in [0, 1].
    coherence_threshold : float
        Level that the squared coherence of two unrelated fields exceeds with probability
        ``alpha``: ``1 - alpha^(1/(n_estimates - 1))``.
    admittance : ndarray, complex
        ``S_xy / S_xx`` in output units per input unit (mGal per metre for gravity against
        topography in metres).
    admittance_err : ndarray
        One-sigma random error of the gain ``|admittance|``, same units; inf where the
        coherence is zero.
    phase_deg : ndarray
        ``angle(admittance)`` in degrees, in (-180, 180]; negative when the output lags.
    n_estimates : float
        Effective number of independent estimates averaged (overlap-corrected blocks, or
        tapers times segments).
    method : str
        ``"welch"`` or ``"multitaper"``.
    alpha : float
        False-alarm probability of ``coherence_threshold``.
    n_segments : int
        Number of segments that contributed.
    input_density, output_density : ndarray
        One-sided power spectral densities of input and output (units² per cycle per metre).
    cross_density : ndarray, complex
        One-sided cross-spectral density ``S_xy`` (input units × output units per cycle per
        metre), as ``scipy.signal.csd(input, output, scaling="density")`` gives it.
    """

    wavenumber: np.ndarray
    coherence: np.ndarray
    coherence_threshold: float
    admittance: np.ndarray
    admittance_err: np.ndarray
    phase_deg: np.ndarray
    n_estimates: float
    method: str
    alpha: float
    n_segments: int
    input_density: np.ndarray
    output_density: np.ndarray
    cross_density: np.ndarray

    @property
    def gain(self) -> np.ndarray:
        """``|admittance|``, output units per input unit."""
        return np.abs(self.admittance)

    @property
    def coherent(self) -> np.ndarray:
        """Boolean mask of wavenumbers whose coherence exceeds the significance level."""
        return self.coherence > self.coherence_threshold

    def __str__(self) -> str:
        n_coherent = int(np.count_nonzero(self.coherent))
        return (
            f"CrossSpectrum ({self.method}, {self.n_segments} segment(s), "
            f"{self.n_estimates:.1f} independent estimates): {self.wavenumber.size} wavenumbers, "
            f"{n_coherent} above the {100 * (1 - self.alpha):g} % coherence level "
            f"{self.coherence_threshold:.3f}"
        )

    def to_frame(self):
        """One row per wavenumber; admittance columns in output units per input unit."""
        import pandas as pd

        return pd.DataFrame(
            {
                "wavenumber_per_km": self.wavenumber * 1e3,
                "wavelength_km": 1e-3 / self.wavenumber,
                "coherence": self.coherence,
                "coherence_threshold": np.full(self.wavenumber.size, self.coherence_threshold),
                "admittance": self.admittance.real,
                "admittance_imag": self.admittance.imag,
                "gain": self.gain,
                "admittance_err": self.admittance_err,
                "phase_deg": self.phase_deg,
            }
        )

    def to_json_bands(self) -> list[dict[str, float]]:
        """One dict per wavenumber for JSON output.

        ``admittance`` is the real part of ``S_xy / S_xx`` and ``admittance_err`` the error of
        the gain, both in output units per input unit (mGal per metre for gravity against
        topography in metres); an infinite error is written as None.
        """
        bands = []
        for k, coh, z, err, phase in zip(
            self.wavenumber,
            self.coherence,
            self.admittance,
            self.admittance_err,
            self.phase_deg,
            strict=True,
        ):
            bands.append(
                {
                    "wavenumber_per_km": float(k * 1e3),
                    "wavelength_km": float(1e-3 / k),
                    "coherence": float(coh),
                    "coherence_threshold": float(self.coherence_threshold),
                    "admittance": float(z.real),
                    "admittance_err": float(err) if np.isfinite(err) else None,
                    "phase_deg": float(phase),
                }
            )
        return bands


def _as_segments(values, name: str) -> list[np.ndarray]:
    if isinstance(values, list | tuple) and values and all(np.ndim(v) == 1 for v in values):
        segments = [np.asarray(v, dtype=float) for v in values]
    else:
        array = np.asarray(values, dtype=float)
        if array.ndim != 1:
            raise InputError(f"{name} must be a 1-D array or a list of 1-D arrays")
        segments = [array]
    return segments


def _common_spacing(spacing, n_segments: int) -> float:
    spacings = np.atleast_1d(np.asarray(spacing, dtype=float))
    if spacings.size == 1:
        spacings = np.repeat(spacings, n_segments)
    if spacings.size != n_segments:
        raise InputError(f"got {spacings.size} spacings for {n_segments} segments")
    if not np.all(np.isfinite(spacings) & (spacings > 0)):
        raise SpacingError("spacing must be a positive number of metres for every segment")
    if not np.allclose(spacings, spacings[0], rtol=1e-9, atol=0.0):
        raise SpacingError(
            f"segments have different spacings ({spacings.min():g} to {spacings.max():g} m); "
            "resample them to one spacing first"
        )
    return float(spacings[0])


def cross_spectrum(
    input_values: np.ndarray | Sequence[np.ndarray],
    output_values: np.ndarray | Sequence[np.ndarray],
    *,
    spacing: float | Sequence[float],
    method: CrossMethod = "welch",
    segment_length: float | None = None,
    overlap: float = 0.5,
    taper: Taper = "hann",
    nw: float = 4.5,
    n_tapers: int | None = None,
    detrend: Detrend = "linear",
    alpha: float = 0.05,
    min_estimates: float = MIN_ESTIMATES,
) -> CrossSpectrum:
    """Coherence and admittance of ``output_values`` against ``input_values``.

    ``S_xy = mean(conj(X) Y)`` over Welch blocks or DPSS tapers of every segment, with X the
    input and Y the output; see the module notes for the admittance, phase, coherence,
    threshold and error formulas and their sources.

    Parameters
    ----------
    input_values, output_values : array_like or list of array_like
        The two fields on the same uniform grid: one 1-D array each, or lists of 1-D arrays
        (uniform segments of the same line or survey, paired element by element). No NaN.
    spacing : float or sequence of float
        Sample spacing in metres (one value, or one per segment; all must agree).
    method : {"welch", "multitaper"}
        Welch: overlapping tapered blocks (Welch 1967). Multitaper: each segment under K
        DPSS tapers with equal weights (Thomson 1982), zero-padded to the longest segment.
    segment_length : float
        Welch block length in metres (required for Welch). The lowest wavenumber is
        ``1 / segment_length``. Segments shorter than a block contribute nothing.
    overlap : float
        Welch overlap fraction, in [0, 1).
    taper : str or tuple
        Welch taper, a window of :func:`scipy.signal.get_window` (periodic form); ``"boxcar"``
        or None for none.
    nw : float
        Multitaper time-half-bandwidth product; full bandwidth ``2 nw / (N spacing)``.
    n_tapers : int, optional
        Number of DPSS tapers, at most ``floor(2 nw) - 1`` (the default).
    detrend : {"linear", "mean"}
        Trend removed per Welch block, or per segment for multitaper.
    alpha : float
        False-alarm probability of the coherence significance level.
    min_estimates : float
        Refuse when fewer independent estimates than this are averaged (default 8).

    Returns
    -------
    CrossSpectrum

    Raises
    ------
    InputError
        Unequal lengths, NaN, bad options, or too few independent estimates.
    """
    if method not in get_args(CrossMethod):
        known = ", ".join(get_args(CrossMethod))
        raise InputError(f"method must be one of {known}; got {method!r}")
    if not 0.0 < alpha < 1.0:
        raise InputError(f"alpha must be between 0 and 1, got {alpha!r}")
    if not min_estimates >= 2:
        raise InputError(f"min_estimates must be at least 2, got {min_estimates!r}")
    inputs = _as_segments(input_values, "input_values")
    outputs = _as_segments(output_values, "output_values")
    if len(inputs) != len(outputs):
        raise InputError(f"got {len(inputs)} input segments but {len(outputs)} output segments")
    for i, (a, b) in enumerate(zip(inputs, outputs, strict=True)):
        if a.size != b.size:
            raise InputError(f"segment {i}: input has {a.size} samples, output has {b.size}")
    step = _common_spacing(spacing, len(inputs))

    if method == "welch":
        if segment_length is None:
            raise InputError("method 'welch' needs segment_length in metres, e.g. 50000.0")

        def coefficients(values):
            blocks = welch_coefficients(
                values,
                spacing=step,
                segment_length=segment_length,
                overlap=overlap,
                taper=taper,
                detrend=detrend,
                min_blocks=0,
            )
            dof = welch_dof(blocks.weights, shift=blocks.shift_samples, n_segments=blocks.n_segments)
            return blocks.coefficients, blocks.onesided, blocks.wavenumber, 0.5 * dof

        how = f"Welch blocks of {segment_length:g} m at {overlap:g} overlap"
    else:
        limit = int(np.floor(2 * nw)) - 1
        k_tapers = limit if n_tapers is None else int(n_tapers)
        if not 1 <= k_tapers <= limit:
            raise InputError(f"n_tapers must be between 1 and floor(2 nw) - 1 = {limit}, got {k_tapers}")
        n_fft = max(a.size for a in inputs)

        def coefficients(values):
            eigen = multitaper_coefficients(
                values, spacing=step, nw=nw, n_tapers=k_tapers, detrend=detrend, n_fft=n_fft
            )
            # Equal weights: each eigenspectrum is one independent estimate (2 dof).
            return eigen.coefficients, eigen.onesided, eigen.wavenumber, float(eigen.n_tapers)

        how = f"{k_tapers} DPSS tapers (nw {nw:g})"

    rows_x, rows_y, n_estimates, n_used = [], [], 0.0, 0
    for a, b in zip(inputs, outputs, strict=True):
        cx, onesided, wavenumber, worth = coefficients(a)
        if cx.shape[0] == 0:
            continue
        rows_x.append(cx)
        rows_y.append(coefficients(b)[0])
        n_estimates += worth
        n_used += 1
    if n_estimates < min_estimates:
        raise InputError(
            f"coherence needs at least {min_estimates:g} independent estimates, these data give "
            f"{n_estimates:.2f} ({how}, {n_used} usable segment(s)); use shorter blocks, more "
            "tapers or more segments"
        )
    big_x, big_y = np.concatenate(rows_x), np.concatenate(rows_y)
    keep = slice(1, wavenumber.size - 1 if np.isclose(wavenumber[-1] * 2 * step, 1.0) else None)
    big_x, big_y, wavenumber, onesided = big_x[:, keep], big_y[:, keep], wavenumber[keep], onesided[keep]

    s_xx = onesided * np.mean(big_x.real**2 + big_x.imag**2, axis=0)
    s_yy = onesided * np.mean(big_y.real**2 + big_y.imag**2, axis=0)
    s_xy = onesided * np.mean(np.conj(big_x) * big_y, axis=0)
    coherence = _safe_divide(np.abs(s_xy) ** 2, s_xx * s_yy)
    coherence = np.minimum(coherence, 1.0)
    admittance = _safe_divide(s_xy, s_xx.astype(complex))
    relative_err = _safe_divide(
        np.sqrt(1.0 - coherence), np.sqrt(coherence) * np.sqrt(2.0 * n_estimates), fill=np.inf
    )
    return CrossSpectrum(
        wavenumber=wavenumber,
        coherence=coherence,
        coherence_threshold=float(1.0 - alpha ** (1.0 / (n_estimates - 1.0))),
        admittance=admittance,
        admittance_err=relative_err * np.abs(admittance),
        phase_deg=np.degrees(np.angle(s_xy)),
        n_estimates=float(n_estimates),
        method=method,
        alpha=float(alpha),
        n_segments=n_used,
        input_density=s_xx,
        output_density=s_yy,
        cross_density=s_xy,
    )


def _safe_divide(num: np.ndarray, den: np.ndarray, *, fill: float = np.nan) -> np.ndarray:
    out = np.full(np.broadcast(num, den).shape, fill, dtype=np.result_type(num, den))
    np.divide(num, den, out=out, where=np.abs(den) > 0)
    return out


# --------------------------------------------------------------------------- load model


@dataclass(frozen=True)
class LoadModelFit:
    """Density contrast of an uncompensated load fitted to the admittance.

    Attributes
    ----------
    density_contrast : float
        Fitted density contrast Δρ in kg m^-3.
    density_contrast_err : float
        One-sigma error of Δρ in kg m^-3 (weighted least squares, scaled by the residual
        variance).
    depth : float
        Mean depth d of the load used in the model, metres (given by the caller).
    band : tuple of float
        Lowest and highest wavenumber used, cycles per metre.
    n_used : int
        Number of wavenumbers in the fit.
    input_positive_down : bool
        True when the input was depth (positive down), so that the model sign was -1.
    """

    density_contrast: float
    density_contrast_err: float
    depth: float
    band: tuple[float, float]
    n_used: int
    input_positive_down: bool

    def __str__(self) -> str:
        longest, shortest = 1e-3 / self.band[0], 1e-3 / self.band[1]
        return (
            f"density contrast {self.density_contrast:.0f} ± {self.density_contrast_err:.0f} "
            f"kg/m^3 at depth {self.depth / 1e3:.2f} km, from {self.n_used} coherent wavenumbers "
            f"({shortest:.1f} to {longest:.1f} km wavelength)"
        )

    def to_frame(self):
        """One row with units in the column names."""
        import pandas as pd

        row = self.to_json() | {
            "n_used": self.n_used,
            "shortest_wavelength_km": 1e-3 / self.band[1],
            "longest_wavelength_km": 1e-3 / self.band[0],
        }
        return pd.DataFrame([row])

    def to_json(self) -> dict[str, float]:
        """``{density_contrast_kg_m3, density_contrast_err_kg_m3, depth_km}``."""
        return {
            "density_contrast_kg_m3": float(self.density_contrast),
            "density_contrast_err_kg_m3": float(self.density_contrast_err),
            "depth_km": float(self.depth / 1e3),
        }


def uncompensated_admittance(
    wavenumber: np.ndarray,
    *,
    density_contrast: float,
    depth: float,
    input_positive_down: bool,
) -> np.ndarray:
    """Admittance of an uncompensated load, in mGal per metre.

    ``Z(k) = sign 2 π G Δρ exp(-k_angular d)`` with ``k_angular = 2 π k`` (rad/m), d the
    mean water depth (m), G = 6.67430e-11 m^3 kg^-1 s^-2 (CODATA 2018) and 1 mGal = 1e-5
    m s^-2; ``sign = +1`` for seafloor elevation (positive up) as input and ``-1`` for depth
    (positive down). Source: the linear term of Parker (1972); Watts (2001), ch. 5 (equation
    number from memory).

    Parameters
    ----------
    wavenumber : array_like
        Wavenumbers in cycles per metre.
    density_contrast : float
        Δρ in kg m^-3 (e.g. 2700 - 1030 = 1670 for crust against sea water).
    depth : float
        Mean depth of the load in metres.
    input_positive_down : bool
        True when the input field is depth, positive down.
    """
    k_angular = 2.0 * np.pi * np.abs(np.asarray(wavenumber, dtype=float))
    sign = -1.0 if input_positive_down else 1.0
    two_pi_g = 2.0 * np.pi * GRAVITATIONAL_CONSTANT
    return sign * two_pi_g * density_contrast * np.exp(-k_angular * depth) / MGAL


def fit_uncompensated_load(
    spectrum: CrossSpectrum,
    *,
    depth: float,
    input_positive_down: bool,
    min_wavelength: float | None = None,
    max_wavelength: float | None = None,
) -> LoadModelFit:
    """Fit Δρ of :func:`uncompensated_admittance` to the real part of the admittance.

    The fit uses the coherent band: every wavenumber whose squared coherence exceeds
    ``spectrum.coherence_threshold`` (not necessarily contiguous), optionally limited to
    wavelengths between ``min_wavelength`` and ``max_wavelength`` metres. The model is linear
    in Δρ, ``Re Z_i ≈ Δρ a_i`` with ``a_i = Z(k_i; Δρ = 1)``; weighted least squares with
    weights ``w_i = 1 / admittance_err_i²`` gives ``Δρ = Σ w a Re Z / Σ w a²`` and the
    error ``sqrt(χ² / (n - 1) / Σ w a²)``, i.e. the weights are taken as relative and the
    scale comes from the residuals (the gain error formula is an approximation).

    The spectrum must be of gravity in mGal against topography or depth in metres.

    Raises
    ------
    InputError
        Fewer than 2 coherent wavenumbers, or a bad depth.
    """
    if not (np.isfinite(depth) and depth > 0):
        raise InputError(f"depth must be a positive number of metres, got {depth!r}")
    use = spectrum.coherent & np.isfinite(spectrum.admittance_err) & (spectrum.admittance_err > 0)
    wavelength = 1.0 / spectrum.wavenumber
    if min_wavelength is not None:
        use &= wavelength >= min_wavelength
    if max_wavelength is not None:
        use &= wavelength <= max_wavelength
    n_used = int(np.count_nonzero(use))
    if n_used < 2:
        raise InputError(
            f"only {n_used} wavenumber(s) have coherence above the significance level "
            f"{spectrum.coherence_threshold:.3f} in the band asked for; need at least 2 to fit "
            "a density contrast"
        )
    k = spectrum.wavenumber[use]
    observed = spectrum.admittance.real[use]
    weight = 1.0 / spectrum.admittance_err[use] ** 2
    unit = uncompensated_admittance(
        k, density_contrast=1.0, depth=depth, input_positive_down=input_positive_down
    )
    normal = float(np.sum(weight * unit**2))
    density = float(np.sum(weight * unit * observed)) / normal
    chi2 = float(np.sum(weight * (observed - density * unit) ** 2))
    error = float(np.sqrt(chi2 / (n_used - 1) / normal))
    return LoadModelFit(
        density_contrast=density,
        density_contrast_err=error,
        depth=float(depth),
        band=(float(k.min()), float(k.max())),
        n_used=n_used,
        input_positive_down=bool(input_positive_down),
    )
