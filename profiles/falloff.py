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
from dataclasses import dataclass, field, replace
from typing import Literal, get_args

import numpy as np
import pandas as pd

from .budget import PowerLawImageSum, exponential_images, image_ratio
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
#: Largest step of ln C or ln N0 in one Newton iteration of the fit with a floor.
MAX_LOG_STEP = 5.0

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


@dataclass(frozen=True)
class _Problem:
    """The Whittle fit of one model form to pooled bins (normalised densities).

    The log shape of the model at a value of z, and the log model and the objective at a
    parameter vector, are computed once and kept (``memo``, a dictionary per problem): the
    grid, the line searches and the central differences of the fits come back to the same
    values many times (a folded power law costs two Hurwitz zeta functions per bin), and a
    kept value is the very number a new evaluation would give.
    """

    model: str
    bins: _Bins
    k_ref: float
    z_scale: float  # shape = z / z_scale (power law: 1; exponential: 4 pi k_max)
    reference_spacing: float
    memo: dict = field(default_factory=dict, repr=False, compare=False)

    def log_shapes(self, zs, folded: bool) -> np.ndarray:
        """ln of the (folded) model shape relative to its value at k_ref, one row per z of
        ``zs`` (rows are read-only: they are kept)."""
        keys = [("shape", z, folded) for z in np.ravel(zs).tolist()]
        missing = [key for key in dict.fromkeys(keys) if key not in self.memo]
        if missing:
            self._evaluate([key[1] for key in missing], folded)
        return np.array([self.memo[key] for key in keys])

    def log_shape(self, z, folded: bool) -> np.ndarray:
        key = ("shape", float(z), folded)
        if key not in self.memo:
            self._evaluate([key[1]], folded)
        return self.memo[key]

    def shape_slope(self, z, folded: bool) -> np.ndarray:
        """d ln F / dz at every bin (F the model shape), analytic:
        -ln(k/k_ref) (power law) or -4 pi (k - k_ref) (exponential), plus
        (dA/d shape) / (1 + A) when folded, all over z_scale."""
        key = ("slope", float(z), folded)
        if key not in self.memo:
            self._evaluate([key[1]], folded)
        return self.memo[key]

    def _evaluate(self, zs: list, folded: bool) -> None:
        """Log shape and its slope at every z of ``zs``, into the memo. A folded power law
        uses :class:`profiles.budget.PowerLawImageSum` on this problem's c = k dx (the image
        ratio of :func:`profiles.budget.power_law_images` with its slope in beta); the
        exponential's image ratio (:func:`profiles.budget.exponential_images`) is
        differentiated in closed form."""
        if "constants" not in self.memo:
            k, dx = self.bins.wavenumber, self.bins.spacing
            power_law = self.model == "power-law"
            self.memo["constants"] = (
                np.log(k / self.k_ref) if power_law else k - self.k_ref,  # ln F = -shape * this
                np.log(k / self.k_ref) if power_law else 4.0 * np.pi * (k - self.k_ref),  # -d ln F/d shape
                k * dx,
                PowerLawImageSum(k * dx) if power_law else 4.0 * np.pi / dx,  # u = rate h
            )
        distance, rate_of_fall, c, images_of = self.memo["constants"]
        shape = np.array(zs, dtype=float)[:, np.newaxis] / self.z_scale
        log_f = -shape * distance if self.model == "power-law" else -4.0 * np.pi * shape * distance
        slope = np.broadcast_to(-rate_of_fall, log_f.shape)
        if folded:
            with np.errstate(all="ignore"):
                if self.model == "power-law":
                    images, images_slope = images_of(shape, slope=True)
                else:
                    u = images_of * shape
                    images = exponential_images(c, u)
                    near, far, gap = np.exp(-u), np.exp(-u * (1.0 - 2.0 * c)), -np.expm1(-u)
                    images_slope = images_of * ((-near - (1.0 - 2.0 * c) * far) / gap - images * near / gap)
                log_f = log_f + np.log1p(images)
                slope = slope + images_slope / (1.0 + images)
        if self.z_scale != 1.0:
            slope = slope / self.z_scale
        log_f = np.array(log_f)
        slope = np.array(slope)
        log_f.flags.writeable = False
        slope.flags.writeable = False
        for z, row, row_slope in zip(zs, log_f, slope, strict=True):
            self.memo[("shape", z, folded)] = row
            self.memo[("slope", z, folded)] = row_slope

    def log_model(self, theta, folded: bool) -> np.ndarray:
        key = ("model", tuple(np.ravel(theta).tolist()), folded)
        found = self.memo.get(key)
        if found is not None:
            return found
        log_c, z = theta[0], theta[1]
        signal = log_c + self.log_shape(z, folded)
        value = signal if len(theta) == 2 else np.logaddexp(signal, theta[2] + self._floor_scale())
        value.flags.writeable = False
        self.memo[key] = value
        return value

    def objective(self, theta, folded: bool) -> float:
        key = ("objective", tuple(np.ravel(theta).tolist()), folded)
        found = self.memo.get(key)
        if found is None:
            log_m = self.log_model(theta, folded)
            value = np.sum(self.bins.weight * (log_m + self.bins.psd * np.exp(-log_m)))
            found = self.memo[key] = float(value) if np.isfinite(value) else 1e300
        return found

    def profiled(self, zs, folded: bool) -> tuple[np.ndarray, np.ndarray]:
        """Objective with C at its closed-form optimum (no floor), and that ln C, at every z of
        ``zs``: C = sum_j w_j S_j / F_j / sum_j w_j with F the model shape (the zero of the
        objective's derivative in C)."""
        log_f = self.log_shapes(zs, folded)
        values, log_c = np.full(len(log_f), 1e300), np.zeros(len(log_f))
        good = np.all(np.isfinite(log_f), axis=1)
        if good.any():
            w = self.bins.weight
            log_c[good] = np.log(np.sum(w * self.bins.psd * np.exp(-log_f[good]), axis=1) / np.sum(w))
            log_m = log_c[good][:, np.newaxis] + log_f[good]
            found = np.sum(w * (log_m + self.bins.psd * np.exp(-log_m)), axis=1)
            values[good] = np.where(np.isfinite(found), found, 1e300)
        return values, log_c

    def profiled_at(self, z: float, folded: bool) -> tuple[float, float]:
        """:meth:`profiled` at one z (the same numbers, fewer steps)."""
        log_f = self.log_shape(z, folded)
        if not np.isfinite(log_f).all():
            return 1e300, 0.0
        weighted_psd, total_weight = self._weighted_psd()
        log_c = float(np.log(np.sum(weighted_psd * np.exp(-log_f)) / total_weight))
        return self.objective(np.array([log_c, z]), folded), log_c

    def _weighted_psd(self):
        if "weighted_psd" not in self.memo:
            self.memo["weighted_psd"] = (self.bins.weight * self.bins.psd, float(np.sum(self.bins.weight)))
        return self.memo["weighted_psd"]

    def profiled_slope(self, z: float, folded: bool) -> tuple[float, float]:
        """Derivative in z of the objective with C at its optimum (no floor), and its curvature.

        With L = ln F, L' its slope and p_j = w_j S_j e^(-L_j) / sum w S e^(-L):
        dQ/dz = sum_j w_j L'_j - W sum_j p_j L'_j (W = sum w; by the envelope theorem, C being
        optimal), and the curvature W var_p(L'), exact where L'' = 0 (the plain model) and the
        data-weighted information otherwise. NaN where the model is undefined.
        """
        log_f = self.log_shape(z, folded)
        if not np.isfinite(log_f).all():
            return float("nan"), float("nan")
        slope = self.shape_slope(z, folded)
        weighted_psd, total_weight = self._weighted_psd()
        share = weighted_psd * np.exp(-(log_f - log_f.min()))
        share /= share.sum()
        mean = float(share @ slope)
        derivative = float(self.bins.weight @ slope) - total_weight * mean
        return derivative, total_weight * max(float(share @ (slope * slope)) - mean * mean, 0.0)

    def fit_without_floor(self, bounds, folded: bool) -> np.ndarray:
        """(ln C, z) minimising the profiled objective: the best point of a grid over the
        bounds (:meth:`shape_grid`), refined by safeguarded Newton steps on the profiled
        derivative between its neighbours (:func:`_minimum_between`)."""
        grid = self.shape_grid(bounds)
        values = self.profiled(grid, folded)[0]
        z = _minimum_between(lambda z: self.profiled_slope(z, folded), grid, int(np.argmin(values)),
                             lambda z: self.profiled_at(z, folded)[0], float(np.min(values)))
        return np.array([self.profiled_at(z, folded)[1], z])

    @staticmethod
    def shape_grid(bounds) -> np.ndarray:
        """17 geometric steps over the bounds where they span more than a factor of 100, else 13
        even steps."""
        wide = bounds[0] > 0 and bounds[1] > 100 * bounds[0]
        return np.geomspace(*bounds, 17) if wide else np.linspace(bounds[0], bounds[1], 13)

    def floor_level(self) -> float:
        """ln of the median of the top quarter of the band (normalised densities): where the
        floor's starts and limits are placed."""
        top = self.bins.psd[self.bins.wavenumber >= np.quantile(self.bins.wavenumber, 0.75)]
        return float(np.log(np.median(top)))

    def fit_with_floor(self, plain: np.ndarray, bounds, *, start: float) -> np.ndarray:
        """(ln C, z, ln N0) minimising the objective of the folded model with a floor, by
        Newton's method (:meth:`newton`) from the fit without a floor, ``plain`` = (ln C, z),
        and a floor ``start`` (natural log) times the median of the top quarter of the band.
        ln N0 is kept within 12 below and 3 above that median, z within ``bounds``."""
        level = self.floor_level()
        limits = np.array([[-np.inf, np.inf], bounds, [level - 12.0, level + 3.0]])
        ends, _ = self.newton(np.array([[plain[0], plain[1], level + start]]), limits)
        return ends[0]

    def newton(self, theta: np.ndarray, limits: np.ndarray, *, iterations: int = 60):
        """Minimise the objective of the folded model with a floor from several starts at once
        (rows of ``theta``, parameters (ln C, z, ln N0)), within ``limits`` (one row per
        parameter).

        Newton's method with the Hessian

            H = sum_j w_j [r_j g_j g_j^T + u_j A_j B_j h_j h_j^T]

        (g = dlnM/dtheta, r = S/M, u = 1 - r, A and B the shares of signal and floor in M,
        h = (1, L', -1)), which is exact but for the term sum w u A L'' of the shape's own
        second derivative; where it is not positive definite, the Fisher information
        sum w g g^T (Fisher scoring). Steps are cut to at most MAX_LOG_STEP in ln C and
        ln N0 and halved until the objective does not increase; a start stops when the
        decrease the quadratic model predicts, g'H^-1 g / 2, falls below 1e-12 of the
        objective, or when no step along the direction lowers it. A floor held at its lower
        limit is no floor: that start stops there. The shapes of all starts are evaluated in
        one call per step. Returns the end points and their objectives.
        """
        theta = np.clip(np.array(theta, dtype=float), limits[:, 0], limits[:, 1])
        count = theta.shape[0]
        weight, psd, floor_scale = self.bins.weight, self.bins.psd, self._floor_scale()
        values = np.array([self.objective(row, True) for row in theta])
        active = np.ones(count, dtype=bool)
        for _ in range(iterations):
            rows = np.flatnonzero(active)
            if rows.size == 0:
                break
            log_f = self.log_shapes(theta[rows, 1], True)
            slope = np.array([self.shape_slope(z, True) for z in theta[rows, 1]])
            signal = theta[rows, 0, np.newaxis] + log_f
            noise = theta[rows, 2, np.newaxis] + floor_scale
            log_m = np.logaddexp(signal, noise)
            share = np.exp(signal - log_m)
            ratio = psd * np.exp(-log_m)
            residual = weight * (1.0 - ratio)
            g = np.stack([share, share * slope, 1.0 - share], axis=1)  # (rows, 3, bins)
            h = np.stack([np.ones_like(slope), slope, -np.ones_like(slope)], axis=1)
            gradient = np.einsum("rpj,rj->rp", g, residual)
            hessian = (np.einsum("rpj,rqj,rj->rpq", g, g, weight * ratio)
                       + np.einsum("rpj,rqj,rj->rpq", h, h, residual * share * (1.0 - share)))
            fisher = np.einsum("rpj,rqj,j->rpq", g, g, weight)
            smallest = np.linalg.eigvalsh(hessian)[:, 0]
            definite = smallest > 1e-12 * np.abs(hessian).max(axis=(1, 2))
            hessian[~definite] = fisher[~definite]
            try:
                step = np.linalg.solve(hessian, gradient[..., np.newaxis])[..., 0]
            except np.linalg.LinAlgError:
                break
            finished = ~np.all(np.isfinite(step), axis=1)
            predicted = 0.5 * np.einsum("rp,rp->r", gradient, step)
            finished |= predicted <= 1e-12 * np.maximum(1.0, np.abs(values[rows]))
            finished |= theta[rows, 2] <= limits[2, 0]  # a floor at its lower limit is no floor
            active[rows[finished]] = False
            rows, step = rows[~finished], step[~finished]
            scale = np.minimum(1.0, MAX_LOG_STEP / np.maximum(np.abs(step[:, 0]), np.abs(step[:, 2])))
            pending = np.arange(rows.size)
            for _halving in range(30):
                if pending.size == 0:
                    break
                trial = np.clip(theta[rows[pending]] - scale[pending, np.newaxis] * step[pending],
                                limits[:, 0], limits[:, 1])
                self.log_shapes(trial[:, 1], True)  # every new shape in one call
                trial_values = np.array([self.objective(row, True) for row in trial])
                accepted = trial_values <= values[rows[pending]]
                taken = rows[pending[accepted]]
                theta[taken], values[taken] = trial[accepted], trial_values[accepted]
                pending = pending[~accepted]
                scale[pending] /= 2.0
            active[rows[pending]] = False  # no decrease along the step: as good as it gets
        return theta, values

    def _floor_scale(self) -> np.ndarray:
        if "floor_scale" not in self.memo:
            self.memo["floor_scale"] = np.log(self.bins.spacing / self.reference_spacing)
        return self.memo["floor_scale"]

    def gradients(self, theta, folded: bool) -> np.ndarray:
        """d ln M / d theta at every bin, shape (n_params, n_bins), analytic (the shape's by
        :meth:`shape_slope`)."""
        z = theta[1]
        log_m = self.log_model(theta, folded)
        signal_share = np.exp(theta[0] + self.log_shape(z, folded) - log_m)
        rows = [signal_share, signal_share * self.shape_slope(z, folded)]
        if len(theta) == 3:
            rows.append(1.0 - signal_share)
        return np.array(rows)

    def covariance(self, theta, folded: bool) -> np.ndarray:
        """Sandwich covariance I^-1 J I^-1 of the Whittle estimate: I = sum_j w_j g_j g_j^T
        (one Fourier bin each), J = sum_j c_j g_j g_j^T with the inflation c of the
        multitaper estimate (:func:`piece_spectrum`)."""
        g = self.gradients(theta, folded)
        information = (g * self.bins.weight) @ g.T
        score = (g * self.bins.inflation) @ g.T
        with np.errstate(all="ignore"):
            try:
                inverse = np.linalg.inv(information)
            except np.linalg.LinAlgError:
                return np.full(information.shape, np.inf)
        return inverse @ score @ inverse

    def shape_error(self, theta, folded: bool) -> float:
        variance = self.covariance(theta, folded)[1, 1]
        return float(np.sqrt(variance)) / self.z_scale if variance > 0 else float("inf")

    def floor_inflation(self, theta) -> float:
        """Mean inflation over the bins, weighted by the floor's squared score: the factor by
        which the likelihood ratio for the floor is divided (a first-order correction for the
        correlated multitaper bins)."""
        g = self.gradients(theta, True)[2] ** 2
        return float(np.sum(g * self.bins.inflation) / np.sum(g * self.bins.weight))


def _minimum_between(slope, grid: np.ndarray, best: int, value, best_value: float, *,
                     rtol: float = 1e-6) -> float:
    """The z minimising a one-dimensional objective near ``grid[best]``, the best grid point.

    ``slope(z)`` gives the objective's derivative and curvature, ``value(z)`` the objective.
    The minimum is bracketed between the best point and the neighbour where the derivative
    has the other sign, and found by Newton steps kept inside the bracket, bisecting where a
    step would leave it or not halve the error fast enough (``rtsafe`` of Press, Teukolsky,
    Vetterling and Flannery 2007, "Numerical Recipes", 3rd ed., section 9.4, from memory), to
    within ``rtol`` max(1, |z|). A best point at either end of the grid whose derivative
    points outwards is the answer (the minimum lies on the bound). Where the derivative gives
    no bracket, a bounded Brent search of ``value`` between the two neighbours
    (``scipy.optimize.minimize_scalar``) is used instead. The grid point is kept if the result
    is not better.
    """
    z = float(grid[best])
    tolerance = rtol * max(1.0, abs(z))
    derivative, curvature = slope(z)
    if not np.isfinite(derivative) or derivative == 0.0:
        return z
    if (derivative > 0 and best == 0) or (derivative < 0 and best == grid.size - 1):
        return z
    neighbour = float(grid[best - 1] if derivative > 0 else grid[best + 1])
    lo, hi = (neighbour, z) if derivative > 0 else (z, neighbour)
    bracketed = (slope(neighbour)[0] < 0) if derivative > 0 else (slope(neighbour)[0] > 0)
    step = previous = hi - lo
    while bracketed:
        newton = (curvature > 0
                  and ((z - hi) * curvature - derivative) * ((z - lo) * curvature - derivative) < 0
                  and abs(2.0 * derivative) <= abs(previous * curvature))
        previous = step
        step = derivative / curvature if newton else z - 0.5 * (lo + hi)
        z -= step
        if abs(step) < tolerance:
            break
        derivative, curvature = slope(z)
        if not np.isfinite(derivative):
            bracketed = False
        elif derivative < 0:
            lo = z
        elif derivative > 0:
            hi = z
        else:
            break
    if not bracketed:
        from scipy.optimize import minimize_scalar

        ends = (float(grid[max(best - 1, 0)]), float(grid[min(best + 1, grid.size - 1)]))
        z = float(minimize_scalar(value, bounds=ends, method="bounded", options={"xatol": tolerance}).x)
    return z if value(z) <= best_value else float(grid[best])

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
    return fit_falloff_spectra(spectra, model=model, band=band)


def fit_falloff_spectra(
    spectra: Sequence, *, model: FalloffKind = "power-law", band: tuple[float, float] | None = None
) -> FalloffModel:
    """Fit the fall-off to the spectra of one or more pieces, pooled.

    ``spectra`` are :class:`PieceSpectrum` objects from :func:`piece_spectrum`; see the module
    notes for the fit and :func:`fit_falloff` for ``model`` and ``band``.
    """
    if model not in get_args(FalloffKind):
        raise InputError(f"model: {model!r} is not one of {', '.join(get_args(FalloffKind))}")
    bins, moved = _select_bins(spectra, band), []
    while True:
        fitted, excess = _fit_bins(bins, model)
        if band is not None or excess is None or len(moved) == PEAK_ROUNDS:
            break
        peak = _highest_peak(*excess)
        if peak is None:
            break
        try:
            bins = _select_bins(spectra, band, peak + max(spectrum.resolution for spectrum in spectra))
        except InputError:  # too few bins above the peak: keep the fit that includes it
            break
        moved.append(peak)
    if moved:
        fitted = replace(fitted, message=f"{fitted.message}; band starts above the spectral peak at "
                                          f"{1e-3 / moved[-1]:.4g} km wavelength")
    return fitted


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


def _fit_bins(bins: _Bins, model: FalloffKind):
    """The three fits of the module notes on one set of bins: the model, and (when it falls
    off) each bin's wavenumber, density over the fitted model, degrees of freedom and
    spacing, for the peak screen."""
    weight = bins.weight
    scale = float(np.exp(np.sum(weight * np.log(bins.psd)) / np.sum(weight)))
    normalised = replace(bins, psd=bins.psd / scale)
    k = bins.wavenumber
    reference_spacing = float(np.min(bins.spacing))
    if model == "power-law":
        k_ref = float(np.exp(np.sum(weight * np.log(k)) / np.sum(weight)))
        z_scale, white_bounds, folded_bounds = 1.0, (-10.0, 20.0), (1.0 + 1e-6, 20.0)
        drop = np.log(k[-1] / k[0])
    else:
        k_ref = float(np.sum(weight * k) / np.sum(weight))
        z_scale = 4.0 * np.pi * float(k[-1])
        white_bounds, folded_bounds = (-100.0, 400.0), (1e-4, 400.0)
        drop = (k[-1] - k[0]) / k[-1]
    problem = _Problem(model, normalised, k_ref, z_scale, reference_spacing)
    common = {
        "model": model,
        "reference_wavenumber": k_ref,
        "reference_spacing": reference_spacing,
        "band_min": float(k[0]),
        "band_max": float(k[-1]),
        "band_rule": bins.rule,
        "n_bins": bins.n_bins,
    }

    # 1. Is there a fall-off at all?
    straight = problem.fit_without_floor(white_bounds, folded=False)
    straight_err = problem.shape_error(straight, folded=False)
    z_err = straight_err * z_scale
    if not (straight[1] > SIGNIFICANCE_Z * z_err and straight[1] * drop >= np.log(MIN_DROP)):
        white = FalloffModel(
            shape=straight[1] / z_scale,
            shape_err=straight_err,
            reference_power=float(np.exp(straight[0])) * scale,
            falls_off=False,
            message=(
                f"no significant fall-off over {_band_text(k)}: the spectrum is white "
                f"(shape {_shape_text(model, straight[1] / z_scale, straight_err)})"
            ),
            **common,
        )
        return white, None

    # 2. Folded model, without and with a floor.
    plain = problem.fit_without_floor(folded_bounds, folded=True)
    floor_seen = False
    for start in FLOOR_STARTS:  # the next starting floor only while none is worth keeping
        with_floor = problem.fit_with_floor(plain, folded_bounds, start=start)
        ratio = 2.0 * (problem.objective(plain, True) - problem.objective(with_floor, True))
        ratio /= problem.floor_inflation(with_floor)
        if ratio > FLOOR_LIKELIHOOD_RATIO:
            floor_seen = True
            break
    theta = with_floor if floor_seen else plain
    shape, shape_err = theta[1] / z_scale, problem.shape_error(theta, folded=True)
    noise_floor = float(np.exp(theta[2])) * scale if floor_seen else 0.0
    message = f"{_shape_text(model, shape, shape_err)} over {_band_text(k)}"
    if model == "power-law" and shape < _SHALLOW:
        shape, message = 1.0, f"fall-off too shallow for a budget (beta <= 1) over {_band_text(k)}"
    elif theta[1] >= folded_bounds[1] * (1 - 1e-6):
        message += " (at the fit's upper limit: the spectrum falls faster than the model can follow)"
    fitted = FalloffModel(
        shape=float(shape),
        shape_err=float(shape_err),
        reference_power=float(np.exp(theta[0])) * scale,
        noise_floor=noise_floor,
        message=message,
        **common,
    )
    if floor_seen:
        fitted = replace(
            fitted,
            message=message + f"; noise floor reached at {1e-3 / fitted.floor_wavenumber:.4g} km wavelength",
        )
    ratio = normalised.psd / np.exp(problem.log_model(theta, True))
    dof = 2.0 * bins.weight**2 / bins.inflation
    # Near the floor's corner the fitted sum of two terms bends less sharply than a real
    # spectrum may: peaks are looked for only below half the corner's wavenumber.
    limit = 0.5 * fitted.floor_wavenumber if floor_seen else np.inf
    return fitted, (k, ratio, dof, bins.spacing, limit)


def _band_text(k: np.ndarray) -> str:
    return f"{1e-3 / k[0]:.4g} to {1e-3 / k[-1]:.4g} km wavelength"


def _shape_text(model: str, shape: float, error: float) -> str:
    if model == "power-law":
        return f"beta = {shape:.3f} +- {error:.3f}"
    return f"h = {shape / 1e3:.4g} +- {error / 1e3:.2g} km"
