"""Fall-off of a spectrum towards high wavenumbers: the model the aliasing budget folds.

Two forms, chosen by the caller (the tool does not guess what a field is):

- ``"power-law"``: P(k) = C k^(-beta), for bathymetry and most other fields;
- ``"exponential"``: P(k) = C exp(-4 pi h k), k in cycles per metre, for potential fields
  observed a height h above their sources (Spector and Grant 1970, "Statistical models for
  interpreting aeromagnetic data", Geophysics 35, 293-302: ln P falls with slope -2h against
  angular wavenumber).

Either may sit on a white noise floor of density N0.

Fit (rule of our own; docs/aliasing-budget.md)
-----------------------------------------------
The spectrum of each piece (a best-sampled stretch: its station values at its mean spacing) is
the multitaper estimate of its first difference divided by 4 sin^2(pi k dx), i.e. prewhitened
(:func:`piece_spectrum`; NW = 4, 7 DPSS tapers, Thomson's adaptive weights; Thomson 1982, Proc.
IEEE 70, 1055-1096). Band: every bin above the multitaper half-bandwidth W (the lowest NW bins,
blurred by the trend removal) and at or above the bin of the spectrum's maximum among those
below a quarter of the Nyquist wavenumber (so a peak of dominant wavelength is not fitted as
fall-off), up to but excluding the Nyquist bin; or the band the caller gives, as wavelengths.
With the automatic rule the band is then started above any significant peak the fitted model
leaves out (:func:`_highest_peak`): on red relief the maximum is the lowest bins, and a fabric
peak above them would otherwise be fitted as fall-off.

Because the stations of the fitted piece are point samples too, the model is compared with
the data **folded at the piece's own spacing**: M(k) = C F(k) [1 + A(k, dx)] + N0 with A the
image ratio of :func:`profiles.budget.image_ratio`. Without that, the flattening that aliasing
itself causes near the Nyquist wavenumber would be taken for a noise floor, and beta would
come out too small.

Parameters are found by maximising the Whittle likelihood (Whittle 1953, Ark. Mat. 2,
423-434), -sum_j [ln M(k_j) + S(k_j) / M(k_j)], with each multitaper bin counted as one
Fourier frequency (bins whose wavenumbers differ by under 5 % are averaged first, weighted by
their number). Standard errors come from the sandwich I^-1 J I^-1, I = sum_j g_j g_j^T with
g = grad ln M, J the same with each bin weighted by the variance inflation of the multitaper
estimate (:func:`piece_spectrum`). Three fits:

1. a straight power law (or exponential) without folding or floor: the fall-off is real when
   its exponent exceeds twice its standard error and the model drops by at least a factor of
   two across the band; otherwise the spectrum is white and nothing else is fitted;
2. the folded model without a floor, then with one; the floor is kept when the likelihood
   ratio (divided by the inflation) exceeds 2.706, the 5 % point for a parameter on the
   boundary of its range (half chi-square with one degree of freedom, Self and Liang 1987,
   JASA 82, 605-610).

The fitted floor is read as station noise: white up to the Nyquist wavenumber of the stations
it was measured on (:attr:`FalloffModel.reference_spacing`), so at a spacing m times coarser it
folds to m N0 (budget module).
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, replace
from typing import Literal, get_args

import numpy as np
import pandas as pd

from .budget import image_ratio
from .errors import InputError

#: Forms of the fall-off.
FalloffKind = Literal["power-law", "exponential"]

#: Time-bandwidth product of the multitaper spectra the fit uses.
FIT_NW = 4.0
#: Fewest samples in a piece worth a spectrum.
MIN_SAMPLES = 64
#: Fewest Fourier bins in the fitted band.
MIN_BINS = 24
#: Bins up to this many multitaper half-bandwidths W are left out (trend removal, smoothing).
LOW_HALF_BANDWIDTHS = 1.0
#: Neighbouring bins whose wavenumbers span at most this fraction are averaged into one.
GROUP_SPAN = 0.05
#: The spectrum's maximum is looked for below this fraction of the Nyquist wavenumber.
PEAK_SEARCH_SHARE = 0.25
#: A fall-off is real when its exponent exceeds this many standard errors ...
SIGNIFICANCE_Z = 2.0
#: ... and the model falls by at least this factor across the band.
MIN_DROP = 2.0
#: Likelihood ratio beyond which a noise floor is kept (5 %, boundary parameter).
FLOOR_LIKELIHOOD_RATIO = 2.706
#: Starting floors of the fit with a floor (natural logs of a fraction of the median density
#: of the top quarter of the band: a half, then 2 %), the second tried only when the first
#: finds no floor worth keeping.
FLOOR_STARTS = (np.log(0.5), np.log(0.02))
#: A bin is a spectral peak when it exceeds the fitted model with this false-alarm
#: probability, shared among the bins (Bonferroni).
PEAK_FALSE_ALARM = 1e-3
#: The automatic band is moved above peaks at most this many times.
PEAK_ROUNDS = 3

#: Field kinds (as in a survey configuration or :func:`profiles.columns.field_kind`) whose
#: spectra fall off exponentially.
POTENTIAL_FIELD_KINDS = ("potential_field", "gravity", "magnetic")

_SHALLOW = 1.02  # a folded power law this close to beta = 1 is too shallow for a budget


def model_for_kind(kind: str | None) -> FalloffKind:
    """The fall-off form for a field kind: exponential for potential fields, else power law.

    >>> model_for_kind("potential_field"), model_for_kind("bathymetry")
    ('exponential', 'power-law')
    """
    return "exponential" if kind in POTENTIAL_FIELD_KINDS else "power-law"


@dataclass(frozen=True)
class FalloffModel:
    """A fitted (or given) fall-off of a spectrum, with its noise floor.

    Attributes
    ----------
    model : {"power-law", "exponential"}
    shape : float
        beta (power law) or the depth h to the sources (exponential, m).
    shape_err : float
        Standard error of ``shape``.
    reference_wavenumber : float
        k_ref (cycles/m), the centre of the fitted band.
    reference_power : float
        Signal density at k_ref (field units squared per cycle/m): the model is
        P(k) = P_ref (k/k_ref)^(-beta) or P_ref exp(-4 pi h (k - k_ref)).
    noise_floor : float
        White floor density N0 at ``reference_spacing`` (field units squared per cycle/m);
        0 when no floor was seen.
    reference_spacing : float
        Spacing of the stations the model was fitted on (m); NaN for a given model.
    band_min, band_max : float
        Wavenumbers (cycles/m) of the first and last bin fitted; NaN for a given model.
    band_rule : str
        ``"automatic"``, ``"given"`` (band from the caller) or ``"model"`` (no fit).
    n_bins : int
        Fourier bins in the fitted band.
    falls_off : bool
        Whether the spectrum falls off significantly (False: white, no budget).
    message : str
        What the fit found, in a sentence.
    """

    model: str
    shape: float
    shape_err: float
    reference_wavenumber: float = 1.0
    reference_power: float = 1.0
    noise_floor: float = 0.0
    reference_spacing: float = float("nan")
    band_min: float = float("nan")
    band_max: float = float("nan")
    band_rule: str = "model"
    n_bins: int = 0
    falls_off: bool = True
    message: str = ""

    def __post_init__(self):
        if self.model not in get_args(FalloffKind):
            raise InputError(f"model: {self.model!r} is not one of {', '.join(get_args(FalloffKind))}")

    @classmethod
    def power_law(cls, beta: float, *, beta_err: float = 0.0) -> FalloffModel:
        """A given power law k^(-beta) (1 at k = 1 cycle per metre), without noise floor."""
        return cls("power-law", float(beta), float(beta_err))

    @classmethod
    def exponential(cls, depth: float, *, depth_err: float = 0.0) -> FalloffModel:
        """A given exponential exp(-4 pi h k) with h = ``depth`` (m), 1 at k = 0, without
        noise floor."""
        return cls("exponential", float(depth), float(depth_err), reference_wavenumber=0.0)

    # -- derived quantities ---------------------------------------------------------------

    @property
    def floor_seen(self) -> bool:
        """Whether a noise floor is part of the model."""
        return bool(self.noise_floor > 0)

    @property
    def reference_nyquist(self) -> float:
        """1 / (2 reference_spacing), cycles/m: where the floor is taken to end."""
        return 0.5 / self.reference_spacing if np.isfinite(self.reference_spacing) else np.inf

    @property
    def shape_range(self) -> tuple[float, float]:
        """(shape - shape_err, shape + shape_err)."""
        return self.shape - self.shape_err, self.shape + self.shape_err

    @property
    def beta(self) -> float | None:
        """beta of a power law (None for the exponential)."""
        return self.shape if self.model == "power-law" else None

    @property
    def depth(self) -> float | None:
        """Depth h to the sources of the exponential, m (None for a power law)."""
        return self.shape if self.model == "exponential" else None

    def signal_power(self, wavenumber, *, shape=None) -> np.ndarray:
        """Model density of the signal (no floor) at ``wavenumber`` (cycles/m)."""
        k = np.asarray(wavenumber, dtype=float)
        s = self.shape if shape is None else np.asarray(shape, dtype=float)
        with np.errstate(all="ignore"):
            return self.reference_power * np.exp(_log_shape(self.model, k, s, self.reference_wavenumber))

    def power(self, wavenumber) -> np.ndarray:
        """Model density of signal plus floor (the floor up to :attr:`reference_nyquist`)."""
        k = np.asarray(wavenumber, dtype=float)
        return self.signal_power(k) + np.where(k <= self.reference_nyquist, self.noise_floor, 0.0)

    def sampled_power(self, wavenumber, *, spacing: float) -> np.ndarray:
        """Model density of point samples at ``spacing`` (m): the signal folded onto
        ``wavenumber`` (at most the Nyquist wavenumber) plus the floor folded as station
        noise (N0 up to :attr:`reference_nyquist`, plus N0 max(spacing / reference_spacing - 1,
        0) folded). This is what the fit compares with a piece's spectrum, and what to draw
        over a measured spectrum."""
        k = np.asarray(wavenumber, dtype=float)
        images = image_ratio(k, spacing=spacing, model=self.model, shape=self.shape)
        folded = self.signal_power(k) * (1.0 + images)
        if not self.floor_seen:
            return folded
        excess = self.noise_floor * max(spacing / self.reference_spacing - 1.0, 0.0)
        return folded + np.where(k <= self.reference_nyquist, self.noise_floor, 0.0) + excess

    @property
    def floor_wavenumber(self) -> float:
        """Wavenumber (cycles/m) where the signal falls to the floor; inf without a floor."""
        if not (self.floor_seen and self.falls_off):
            return np.inf
        ratio = np.log(self.reference_power / self.noise_floor)
        if self.model == "power-law":
            return float(self.reference_wavenumber * np.exp(ratio / self.shape))
        return float(self.reference_wavenumber + ratio / (4.0 * np.pi * self.shape))

    @property
    def floor_spacing(self) -> float:
        """1 / (2 k_floor), m: the spacing whose Nyquist wavenumber reaches the floor; NaN
        without a floor."""
        k_floor = self.floor_wavenumber
        return 0.5 / k_floor if np.isfinite(k_floor) and k_floor > 0 else float("nan")

    # -- outputs ----------------------------------------------------------------------------

    def to_json(self) -> dict:
        """The model as JSON-ready values, lengths in km, densities per cycle/km."""
        shape = (
            {"beta": self.shape, "beta_err": self.shape_err}
            if self.model == "power-law"
            else {"depth_km": self.shape / 1e3, "depth_err_km": self.shape_err / 1e3}
        )
        floor_wavelength = 1.0 / self.floor_wavenumber if self.floor_seen else float("nan")
        return {
            "model": self.model,
            **shape,
            "falls_off": bool(self.falls_off),
            "noise_floor_per_cycle_per_km": self.noise_floor / 1e3,
            "floor_wavelength_km": floor_wavelength / 1e3,
            "reference_wavelength_km": 1.0 / self.reference_wavenumber / 1e3,
            "reference_power_per_cycle_per_km": self.reference_power / 1e3,
            "reference_spacing_km": self.reference_spacing / 1e3,
            "band_longest_wavelength_km": 1.0 / self.band_min / 1e3,
            "band_shortest_wavelength_km": 1.0 / self.band_max / 1e3,
            "band_rule": self.band_rule,
            "n_bins": int(self.n_bins),
            "message": self.message,
        }

    def to_frame(self) -> pd.DataFrame:
        """One row with the columns of :meth:`to_json`."""
        return pd.DataFrame([self.to_json()])

    def __str__(self) -> str:
        form = "power law k^-beta" if self.model == "power-law" else "exponential exp(-4 pi h k)"
        detail = self.message or _shape_text(self.model, self.shape, self.shape_err)
        return f"fall-off ({form}): {detail}"


def _log_shape(model: str, k, shape, k_ref):
    """ln of the unfolded model relative to its value at k_ref."""
    if model == "power-law":
        return -shape * np.log(k / k_ref)
    return -4.0 * np.pi * shape * (k - k_ref)


# --------------------------------------------------------------------------------------------
# The fit
# --------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class PieceSpectrum:
    """The prewhitened multitaper density of one piece, as the fit uses it.

    Attributes
    ----------
    wavenumber : ndarray
        Cycles per metre, 0 to the Nyquist wavenumber.
    psd : ndarray
        Density of the sampled series (folding included), field units squared per cycle/m;
        0 at k = 0.
    inflation : ndarray
        Variance factor c(k) of a smooth statistic of this estimate relative to the raw
        periodogram's (see :func:`piece_spectrum`).
    spacing : float
        Sample spacing (m).
    resolution : float
        Multitaper bandwidth 2W (cycles per metre).
    n : int
        Samples of the piece.
    bin_weight : float
        Fourier bins per bin of this spectrum: N/M when the N differences were zero-padded to
        M samples for a fast transform (the finer grid only interpolates), else 1.
    """

    wavenumber: np.ndarray
    psd: np.ndarray
    inflation: np.ndarray
    spacing: float
    resolution: float
    n: int
    bin_weight: float = 1.0

    def to_frame(self) -> pd.DataFrame:
        """Columns ``wavenumber_per_km``, ``wavelength_km``, ``psd_per_cycle_per_km`` and
        ``inflation``."""
        with np.errstate(divide="ignore"):
            wavelength = 1.0 / self.wavenumber
        return pd.DataFrame(
            {
                "wavenumber_per_km": self.wavenumber * 1e3,
                "wavelength_km": wavelength / 1e3,
                "psd_per_cycle_per_km": self.psd / 1e3,
                "inflation": self.inflation,
            }
        )

    def __str__(self) -> str:
        return (
            f"prewhitened multitaper density of {self.n} samples at {self.spacing:g} m, "
            f"{self.wavenumber.size} bins, resolution {self.resolution * 1e3:.4g} cycles/km"
        )


def piece_spectrum(values, *, spacing: float, nw: float = FIT_NW) -> PieceSpectrum:
    """Multitaper density of a series, prewhitened by its first difference.

    The first difference y_(j+1) - y_j has the density 4 sin^2(pi k dx) P_s(k), P_s being
    the density of the sampled series itself, folding included; so the multitaper estimate
    of the difference divided by 4 sin^2(pi k dx) estimates P_s with far less leakage from
    the lowest wavenumbers into the rest of a red spectrum (prewhitening: Blackman and Tukey
    1958, "The Measurement of Power Spectra"; Percival and Walden 1993, section 6.5, from
    memory). The estimate uses the eigencoefficients and Thomson's adaptive weights of
    :mod:`profiles.spectral.psd` (Thomson 1982): S = sum_k w_k |C_k|^2 / sum_k w_k.

    ``inflation`` is c(k) = N sum_t (sum_k v_k(k) h_k(t)^2)^2 with v_k = w_k / sum w the
    normalised weights and h_k the unit-energy tapers: summed over all wavenumbers, the
    covariance of S/E[S] at k with its neighbours is c(k) times that of a periodogram bin
    (for a locally flat spectrum; by Parseval over the lag). It is about 1.04 for seven
    equally weighted tapers at NW = 4 and up to 2.8 where the first taper alone carries
    the estimate; the fit's standard errors use it.
    """
    from .spectral.preprocess import fast_length
    from .spectral.psd import adaptive_weights, multitaper_coefficients

    dx = float(spacing)
    differences = np.diff(np.asarray(values, dtype=float))
    # Zero-padded to a length with small prime factors: a transform of a prime length costs
    # about fifteen times more, and the finer grid only interpolates (bin_weight N/M).
    length = fast_length(differences.size)
    eigen = multitaper_coefficients(differences, spacing=dx, nw=nw, n_fft=length)
    spectra = eigen.coefficients.real**2 + eigen.coefficients.imag**2
    weights = adaptive_weights(eigen)
    share = weights / weights.sum(axis=0)
    gain = 4.0 * np.sin(np.pi * eigen.wavenumber * dx) ** 2
    with np.errstate(divide="ignore", invalid="ignore"):
        psd = np.where(gain > 0, eigen.onesided * (share * spectra).sum(axis=0) / gain, 0.0)
    squares = eigen.tapers**2
    overlap = squares @ squares.T  # G_kl = sum_t h_k(t)^2 h_l(t)^2
    inflation = eigen.n * np.einsum("kf,kl,lf->f", share, overlap, share)
    return PieceSpectrum(eigen.wavenumber, psd, inflation, dx, 2.0 * eigen.half_bandwidth, eigen.n + 1,
                         bin_weight=eigen.n / length)


@dataclass(frozen=True)
class _Bins:
    """Pooled spectral bins of the pieces, averaged in narrow groups: wavenumber, density,
    spacing, weight (the number of Fourier bins in the group) and the summed inflation."""

    wavenumber: np.ndarray
    psd: np.ndarray
    spacing: np.ndarray
    weight: np.ndarray
    inflation: np.ndarray
    n_bins: int
    rule: str


def _group(k: np.ndarray, psd: np.ndarray, inflation: np.ndarray):
    """Mean wavenumber, mean density, count and summed inflation of runs of neighbouring
    bins whose wavenumbers span at most GROUP_SPAN."""
    edges = np.floor(np.log(k / k[0]) / np.log1p(GROUP_SPAN)).astype(np.int64)
    starts = np.flatnonzero(np.concatenate([[True], edges[1:] != edges[:-1]]))
    counts = np.diff(np.append(starts, k.size)).astype(float)
    return (
        np.add.reduceat(k, starts) / counts,
        np.add.reduceat(psd, starts) / counts,
        counts,
        np.add.reduceat(inflation, starts),
    )


def _select_bins(spectra: Sequence, band, start: float = 0.0) -> _Bins:
    """The bins of the fit: the automatic rule (``band`` None), starting at or above
    ``start`` (cycles per metre; moved there above spectral peaks), or the given band."""
    rule = "automatic" if band is None else "given"
    if band is not None:
        try:
            longest, shortest = (float(limit) for limit in band)
        except (TypeError, ValueError):
            raise InputError("band: give two wavelengths (longest, shortest) in metres") from None
        if not 0 < shortest < longest:
            raise InputError(f"band: need 0 < shortest < longest wavelength (got {longest:g}, {shortest:g})")
    parts, count = [], 0
    for spectrum in spectra:
        k, psd, dx = spectrum.wavenumber, spectrum.psd, spectrum.spacing
        nyquist = 0.5 / dx
        lowest = 0.5 * LOW_HALF_BANDWIDTHS * spectrum.resolution * (1 + 1e-9)
        keep = (k > lowest) & (k < nyquist * (1 - 1e-9)) & (psd > 0) & (k >= start)
        if band is None:
            search = np.flatnonzero(keep & (k <= PEAK_SEARCH_SHARE * nyquist))
            if search.size:
                keep &= k >= k[search[np.argmax(psd[search])]]
        else:
            keep &= (k >= 1.0 / longest) & (k <= 1.0 / shortest)
        chosen = np.flatnonzero(keep)
        count += chosen.size * spectrum.bin_weight  # in Fourier bins
        if chosen.size:
            group_k, group_psd, weight, inflation = _group(k[chosen], psd[chosen], spectrum.inflation[chosen])
            parts.append((group_k, group_psd, np.full(group_k.size, dx), weight * spectrum.bin_weight,
                          inflation * spectrum.bin_weight))
    count = round(count)
    if count < MIN_BINS:
        raise InputError(
            f"fall-off: only {count} spectral bins in the band (at least {MIN_BINS} needed); "
            "use a longer stretch or a wider band"
        )
    k, psd, dx, weight, inflation = (np.concatenate(column) for column in zip(*parts, strict=True))
    order = np.argsort(k, kind="stable")
    return _Bins(k[order], psd[order], dx[order], weight[order], inflation[order], count, rule)


def fit_falloff(
    values,
    *,
    spacing,
    model: FalloffKind = "power-law",
    band: tuple[float, float] | None = None,
    nw: float = FIT_NW,
) -> FalloffModel:
    """Fit the fall-off of one or more uniformly spaced pieces (see the module notes).

    Parameters
    ----------
    values : array_like or sequence of array_like
        One series, or several (e.g. the best-sampled stretches of a segment), field units.
    spacing : float or sequence of float
        Sample spacing of each piece (m).
    model : {"power-law", "exponential"}
        The form: exponential for potential fields (gravity, magnetics), else power law.
    band : (longest, shortest), optional
        Wavelengths (m) bounding the fitted band; default the automatic rule.
    nw : float
        Multitaper time-bandwidth product (default 4).

    Returns
    -------
    FalloffModel
    """
    if model not in get_args(FalloffKind):
        raise InputError(f"model: {model!r} is not one of {', '.join(get_args(FalloffKind))}")
    return fit_falloff_spectra(piece_spectra(values, spacing=spacing, nw=nw), model=model, band=band)


def piece_spectra(values, *, spacing, nw: float = FIT_NW) -> list[PieceSpectrum]:
    """:func:`piece_spectrum` of one series or of each of several (with one spacing each),
    checked as :func:`fit_falloff` needs them: at least :data:`MIN_SAMPLES` samples a piece."""
    if len(values) == 0:
        raise InputError("fall-off: no values given")
    pieces = [values] if np.ndim(values[0]) == 0 else list(values)
    spacings = np.broadcast_to(np.asarray(spacing, dtype=float), (len(pieces),))
    spectra = []
    for piece, dx in zip(pieces, spacings, strict=True):
        if np.size(piece) < MIN_SAMPLES:
            raise InputError(
                f"fall-off: a piece of {np.size(piece)} samples is too short (at least {MIN_SAMPLES})"
            )
        spectra.append(piece_spectrum(piece, spacing=float(dx), nw=nw))
    return spectra


def fit_falloff_spectra(
    spectra: Sequence, *, model: FalloffKind = "power-law", band: tuple[float, float] | None = None
) -> FalloffModel:
    """Fit the fall-off to the spectra of one or more pieces, pooled.

    ``spectra`` are :class:`PieceSpectrum` objects from :func:`piece_spectrum`; see the module
    notes for the fit and :func:`fit_falloff` for ``model`` and ``band``.
    """
    found = fit_falloff_many([spectra], model=model, band=band)[0]
    if isinstance(found, InputError):
        raise found
    return found


#: Problems (segments) fitted together by :func:`fit_falloff_many`. The grid of the folded
#: fit holds 17 shapes x 20 image terms per bin of every problem: for 16 problems of 300 bins,
#: 13 MB an array, and a few such arrays at once.
_BATCH = 16


def fit_falloff_many(
    spectra_sets: Sequence[Sequence], *, model: FalloffKind = "power-law",
    band: tuple[float, float] | None = None,
) -> list:
    """:func:`fit_falloff_spectra` of many sets of piece spectra (e.g. one set per segment),
    fitted together: every step of the fits is taken for all sets at once
    (:mod:`profiles.whittle`), and the same numbers come out as for each set alone.

    Returns
    -------
    list
        One :class:`FalloffModel` per set, or the :class:`~profiles.errors.InputError` that
        set could not be fitted for (too few bins in the band).
    """
    if model not in get_args(FalloffKind):
        raise InputError(f"model: {model!r} is not one of {', '.join(get_args(FalloffKind))}")
    results: list = [None] * len(spectra_sets)
    bins, moved = {}, {number: [] for number in range(len(spectra_sets))}
    for number, spectra in enumerate(spectra_sets):
        try:
            bins[number] = _select_bins(spectra, band)
        except InputError as error:
            results[number] = error
    active = sorted(bins)
    while active:
        following = []
        for first in range(0, len(active), _BATCH):
            chunk = active[first : first + _BATCH]
            fits = _fit_bins([bins[n] for n in chunk], model)
            for number, (fitted, excess) in zip(chunk, fits, strict=True):
                results[number] = fitted
                if band is not None or excess is None or len(moved[number]) == PEAK_ROUNDS:
                    continue
                peak = _highest_peak(*excess)
                if peak is None:
                    continue
                spectra = spectra_sets[number]
                try:
                    bins[number] = _select_bins(spectra, band, peak + max(s.resolution for s in spectra))
                except InputError:  # too few bins above the peak: keep the fit that includes it
                    continue
                moved[number].append(peak)
                following.append(number)
        active = following
    for number, peaks in moved.items():
        if peaks:
            fitted = results[number]
            note = f"; band starts above the spectral peak at {1e-3 / peaks[-1]:.4g} km wavelength"
            results[number] = replace(fitted, message=fitted.message + note)
    return results


def _highest_peak(wavenumber, ratio, dof, spacing, limit) -> float | None:
    """Wavenumber of the highest bin below PEAK_SEARCH_SHARE of its Nyquist wavenumber (and
    below ``limit``) whose density exceeds the fitted model significantly, or None.

    Under the model, a bin's density over the model is close to chi-square with
    nu = 2 w^2 / c degrees of freedom over nu (w Fourier bins averaged, c their summed
    variance inflation; a periodogram bin has 2: Percival and Walden 1993, from memory); a
    bin is a peak beyond the upper PEAK_FALSE_ALARM / (number of bins) point.
    """
    from scipy.special import chdtri  # the chi-square upper-tail inverse, chi2.isf

    threshold = chdtri(dof, PEAK_FALSE_ALARM / wavenumber.size) / dof
    peaks = (ratio > threshold) & (wavenumber <= PEAK_SEARCH_SHARE * 0.5 / spacing) & (wavenumber < limit)
    return float(wavenumber[peaks].max()) if peaks.any() else None


def _fit_bins(bins_list: Sequence[_Bins], model: FalloffKind) -> list:
    """The three fits of the module notes on several sets of bins at once
    (:class:`profiles.whittle.Problems`): for each set the model, and (when it falls off) each
    bin's wavenumber, density over the fitted model, degrees of freedom and spacing, for the
    peak screen."""
    from .whittle import Problems

    problems = Problems(model, *([getattr(b, name) for b in bins_list]
                                 for name in ("wavenumber", "psd", "spacing", "weight", "inflation")))
    every = np.arange(len(bins_list))
    if model == "power-law":
        white_bounds, folded_bounds = (-10.0, 20.0), (1.0 + 1e-6, 20.0)
        drop = np.log(problems.last / problems.first)
    else:
        white_bounds, folded_bounds = (-100.0, 400.0), (1e-4, 400.0)
        drop = (problems.last - problems.first) / problems.last

    # 1. Is there a fall-off at all?
    straight = problems.fit_without_floor(every, white_bounds, folded=False)
    straight_err = problems.shape_error(every, straight, folded=False)
    falls = (straight[:, 1] > SIGNIFICANCE_Z * straight_err * problems.z_scale) & (
        straight[:, 1] * drop >= np.log(MIN_DROP))

    # 2. Folded model, without and with a floor: the next starting floor only for the sets in
    # which none worth keeping was found.
    rows = np.flatnonzero(falls)
    plain = problems.fit_without_floor(rows, folded_bounds, folded=True) if rows.size else np.zeros((0, 2))
    theta = np.column_stack([plain, np.full(rows.size, -np.inf)])
    seen = np.zeros(rows.size, dtype=bool)
    pending = np.arange(rows.size)
    for start in FLOOR_STARTS:
        if pending.size == 0:
            break
        ends = problems.fit_with_floor(rows[pending], plain[pending], folded_bounds, start=start)
        ratio = 2.0 * (problems.objective_at(rows[pending], plain[pending], True)
                       - problems.objective_at(rows[pending], ends, True))
        ratio /= problems.floor_inflation(rows[pending], ends)
        kept = ratio > FLOOR_LIKELIHOOD_RATIO
        theta[pending[kept]], seen[pending[kept]] = ends[kept], True
        pending = pending[~kept]
    shape_err = np.empty(rows.size)
    log_model = np.empty((rows.size, problems.psd.shape[1]))
    for floor, parameters in ((seen, theta), (~seen, plain)):
        if floor.any():
            shape_err[floor] = problems.shape_error(rows[floor], parameters[floor], True)
            log_f = problems.shapes(rows[floor], parameters[floor, 1], True)[0][:, 0]
            log_model[floor] = problems.log_model(rows[floor], parameters[floor], log_f)

    results = []
    folded_row = {int(row): i for i, row in enumerate(rows.tolist())}
    for number, bins in enumerate(bins_list):
        k = bins.wavenumber
        scale, z_scale = float(problems.scale[number]), float(problems.z_scale[number])
        common = {
            "model": model,
            "reference_wavenumber": float(problems.k_ref[number]),
            "reference_spacing": float(problems.reference_spacing[number]),
            "band_min": float(k[0]),
            "band_max": float(k[-1]),
            "band_rule": bins.rule,
            "n_bins": bins.n_bins,
        }
        if number not in folded_row:
            shape, error = float(straight[number, 1] / z_scale), float(straight_err[number])
            results.append((FalloffModel(
                shape=shape,
                shape_err=error,
                reference_power=float(np.exp(straight[number, 0])) * scale,
                falls_off=False,
                message=(f"no significant fall-off over {_band_text(k)}: the spectrum is white "
                         f"(shape {_shape_text(model, shape, error)})"),
                **common,
            ), None))
            continue
        i = folded_row[number]
        floor_seen = bool(seen[i])
        parameters = theta[i] if floor_seen else plain[i]
        shape, error = float(parameters[1] / z_scale), float(shape_err[i])
        message = f"{_shape_text(model, shape, error)} over {_band_text(k)}"
        if model == "power-law" and shape < _SHALLOW:
            shape, message = 1.0, f"fall-off too shallow for a budget (beta <= 1) over {_band_text(k)}"
        elif parameters[1] >= folded_bounds[1] * (1 - 1e-6):
            message += " (at the fit's upper limit: the spectrum falls faster than the model can follow)"
        fitted = FalloffModel(
            shape=shape,
            shape_err=error,
            reference_power=float(np.exp(parameters[0])) * scale,
            noise_floor=float(np.exp(parameters[2])) * scale if floor_seen else 0.0,
            message=message,
            **common,
        )
        if floor_seen:
            fitted = replace(fitted, message=message + f"; noise floor reached at "
                                                       f"{1e-3 / fitted.floor_wavenumber:.4g} km wavelength")
        size = k.size
        ratio = problems.psd[number, :size] / np.exp(log_model[i, :size])
        dof = 2.0 * bins.weight**2 / bins.inflation
        # Near the floor's corner the fitted sum of two terms bends less sharply than a real
        # spectrum may: peaks are looked for only below half the corner's wavenumber.
        limit = 0.5 * fitted.floor_wavenumber if floor_seen else np.inf
        results.append((fitted, (k, ratio, dof, bins.spacing, limit)))
    return results


def _band_text(k: np.ndarray) -> str:
    return f"{1e-3 / k[0]:.4g} to {1e-3 / k[-1]:.4g} km wavelength"


def _shape_text(model: str, shape: float, error: float) -> str:
    if model == "power-law":
        return f"beta = {shape:.3f} +- {error:.3f}"
    return f"h = {shape / 1e3:.4g} +- {error / 1e3:.2g} km"
