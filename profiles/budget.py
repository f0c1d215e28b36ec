"""Aliasing budget: how much aliased power lands on a wavelength, and what spacing keeps it small.

Point samples at spacing dx cannot tell wavenumber k from n/dx - k and n/dx + k (n >= 1):
the sampled spectrum at a wavenumber k_t = 1/L inside the band [0, 1/(2 dx)] is

    P_s(k_t) = P(k_t) + sum_{n >= 1} [P(n/dx - k_t) + P(n/dx + k_t)]

(Shannon 1949, "Communication in the presence of noise", Proc. IRE 37, 10-21; Bendat and
Piersol, "Random Data", section on aliasing errors, from memory). The **contamination** at
L is the folded (image) power over the true power there, P_s(k_t)/P(k_t) - 1, computed from
a fall-off model of the spectrum (:class:`profiles.falloff.FalloffModel`). Closed forms, with
a = L/dx the samples per wavelength:

- power law P(k) = C k^(-beta), beta > 1 (Hurwitz zeta function zeta(s, q)):

      A = a^(-beta) [zeta(beta, 1 - 1/a) + zeta(beta, 1 + 1/a)]

- exponential P(k) = C exp(-4 pi h k) (Spector and Grant 1970, Geophysics 35, 293-302),
  with u = 4 pi h / dx (a geometric series in exp(-u)):

      A = [exp(-u) + exp(-u (1 - 2/a))] / (1 - exp(-u))

- a white noise floor of density N0, measured on stations at spacing dx_ref and taken to
  extend up to their Nyquist wavenumber 1/(2 dx_ref), adds N0 max(dx/dx_ref - 1, 0) of folded
  power (exact when dx/dx_ref is a whole number, the band average otherwise); the true power
  at k_t is then C-model + N0.

Derivations, the noise assumption and checks against mpmath: docs/aliasing-budget.md.

Everything here is vectorised: ``wavelength`` and ``spacing`` broadcast against each other, so
that thousands of windows are budgeted in one call.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np
import pandas as pd

from .errors import InputError

if TYPE_CHECKING:  # the fall-off module imports the image sums from here
    from .falloff import FalloffModel

#: Default largest acceptable contamination at the target wavelength (a fraction).
DEFAULT_TOLERANCE = 0.01

#: Where a recommended spacing comes from.
BASIS_TOLERANCE = "tolerance"
BASIS_FLOOR = "noise floor"
BASIS_NONE = "none"

_BISECTIONS = 80


# --------------------------------------------------------------------------------------------
# Image sums (model shape only)
# --------------------------------------------------------------------------------------------


def image_ratio(wavenumber, *, spacing, model: str, shape) -> np.ndarray:
    """Summed image power over the power at ``wavenumber``, for the model's shape alone.

    Parameters
    ----------
    wavenumber : array_like
        Wavenumber k (cycles per metre), 0 < k <= 1/(2 dx); broadcast with the others.
    spacing : array_like
        Station spacing dx (m).
    model : {"power-law", "exponential"}
    shape : array_like
        beta (power law, dimensionless) or the depth h (exponential, metres).

    Returns
    -------
    ndarray
        A(k, dx) (see the module notes): ``inf`` for a power law with beta <= 1 (the image
        sum diverges) and wherever k lies above the Nyquist wavenumber 1/(2 dx) (the
        wavelength is not resolved); NaN where an input is NaN.
    """
    k, dx, s = np.broadcast_arrays(
        np.asarray(wavenumber, dtype=float), np.asarray(spacing, dtype=float), np.asarray(shape, dtype=float)
    )
    c = k * dx  # = 1/a, the Nyquist wavenumber is at c = 1/2
    with np.errstate(all="ignore"):
        if model == "power-law":
            ratio = np.where(s > 1.0, power_law_images(c, s), np.inf)
        elif model == "exponential":
            ratio = np.where(s > 0.0, exponential_images(c, 4.0 * np.pi * s / dx), np.inf)
        else:
            raise InputError(f"model: {model!r} is not one of 'power-law', 'exponential'")
        ratio = np.where(c > 0.5 * (1.0 + 1e-12), np.inf, ratio)
    nan = np.isnan(k) | np.isnan(dx) | np.isnan(s)
    return np.where(nan, np.nan, ratio)


def power_law_images(c, beta):
    """c^beta [zeta(beta, 1 - c) + zeta(beta, 1 + c)] for c = k dx in (0, 1/2], beta > 1: the
    power-law image ratio without checks (the fall-off fit calls it many times)."""
    from scipy.special import zeta

    return c**beta * (zeta(beta, 1.0 - c) + zeta(beta, 1.0 + c))


#: Images n = 1 .. _DIRECT_IMAGES on each side summed term by term before the Euler-Maclaurin tail.
_DIRECT_IMAGES = 9
#: B_2j / (2j)! for j = 1 .. 8 (Bernoulli numbers B_2 .. B_16 = 1/6, -1/30, 1/42, -1/30, 5/66,
#: -691/2730, 7/6, -3617/510; Abramowitz and Stegun 1964, table 23.2).
_BERNOULLI_TERMS = np.array(
    [1 / 6, -1 / 30, 1 / 42, -1 / 30, 5 / 66, -691 / 2730, 7 / 6, -3617 / 510]
) / np.array([math.factorial(2 * j) for j in range(1, 9)], dtype=float)


class PowerLawImageSum:
    """The power-law image ratio at fixed c = k dx for many beta, with its slope in beta.

    A(c, beta) = c^beta [zeta(beta, 1 - c) + zeta(beta, 1 + c)]
               = sum_{n >= 1} r_n-^beta + r_n+^beta,  r_n-+ = c / (n -+ c),

    as :func:`power_law_images`, but built for the fall-off fit, which needs it at fixed sets
    of c for many beta: the logarithms ln r are taken once, the images n = 1 .. 9 are summed
    term by term and the rest by Euler-Maclaurin summation of the Hurwitz zeta function from
    q = 10 -+ c,

        sum_{m >= 0} (q + m)^-beta = q^(1 - beta) / (beta - 1) + q^-beta / 2
                                     + sum_{j=1}^{8} B_2j / (2j)! (beta)_(2j-1) q^(1 - beta - 2j)

    with (beta)_i the rising factorial (Abramowitz and Stegun 1964, eq. 23.1.30, from memory;
    the same summation as the Cephes ``zeta`` behind ``scipy.special.zeta``). For beta in
    (1, 40] and c in (0, 1/2] the result agrees with the zeta closed form to about 1e-14
    (tests/test_falloff_speed.py, against scipy.special.zeta and mpmath). The slope
    dA/dbeta = sum ln(r) r^beta, the tail differentiated term by term, comes with it.
    Like ``scipy.special.zeta``, the sum is inf at beta = 1 and NaN below.

    Parameters
    ----------
    c : array_like, shape (n,) or (P, n)
        k dx of each bin, in (0, 1/2]; with two axes, one set of bins per problem (the fits
        of several segments at once), each problem with its own betas.
    """

    def __init__(self, c):
        c = np.asarray(c, dtype=float)
        self.batched = c.ndim == 2
        c = np.atleast_2d(c)
        n = np.arange(1, _DIRECT_IMAGES + 1, dtype=float)[:, np.newaxis, np.newaxis]
        self.size = c.shape[-1]
        q = np.stack([_DIRECT_IMAGES + 1 - c, _DIRECT_IMAGES + 1 + c])  # where the two tails start
        with np.errstate(divide="ignore"):
            # ln r of the direct images (rows 0-17), then ln(c/q) of the two tails (rows 18-19)
            log_ratio = np.concatenate([np.log(c / np.concatenate([n - c, n + c])), np.log(c / q)])
        self.log_ratio = np.ascontiguousarray(np.moveaxis(log_ratio, 0, 1))  # (P, 20, n)
        powers = 1 - 2 * np.arange(1, _BERNOULLI_TERMS.size + 1, dtype=float)
        # the tail's bracket is [1/(beta - 1), 1/2, B_2j/(2j)! (beta)_(2j-1)] @ basis
        basis = np.concatenate([q[np.newaxis], np.ones((1, *q.shape)), q ** powers[:, None, None, None]])
        self.basis = np.ascontiguousarray(np.moveaxis(basis, 2, 0)).reshape(c.shape[0], len(powers) + 2, -1)

    def __call__(self, beta, *, slope: bool = False, rows=None):
        """A at every beta and every c: beta of shape (m,) gives (m, n); with a batch of
        problems, beta of shape (P, m) (or (len(rows), m) for the problems ``rows``) gives
        (P, m, n). With ``slope``, also dA/dbeta."""
        b = np.asarray(beta, dtype=float)
        log_ratio, basis = self.log_ratio, self.basis
        if rows is not None:
            log_ratio, basis = log_ratio[rows], basis[rows]
        b = b.reshape(log_ratio.shape[0], -1) if self.batched else b.reshape(1, -1)
        valid = b > 1.0
        b = np.where(valid, b, 2.0)  # computed at a harmless value, then set as zeta sets it
        column = b[..., np.newaxis]
        steps = column + np.arange(2 * _BERNOULLI_TERMS.size - 1)  # beta + i, i = 0 .. 14
        rising = np.cumprod(steps, axis=-1)[..., ::2]
        head = 1.0 / (column - 1.0)
        half = np.full_like(column, 0.5)
        coefficients = np.concatenate([head, half, _BERNOULLI_TERMS * rising], axis=-1)
        brackets = np.matmul(coefficients, basis).reshape(*b.shape, 2, self.size)
        powers = np.exp(b[..., np.newaxis, np.newaxis] * log_ratio[:, np.newaxis])
        direct = 2 * _DIRECT_IMAGES
        tail = powers[:, :, direct:]
        value = powers[:, :, :direct].sum(axis=2) + (tail * brackets).sum(axis=2)
        if slope:
            reciprocal = np.cumsum(1.0 / steps, axis=-1)[..., ::2]
            slopes = np.concatenate([-head * head, 0.0 * half, _BERNOULLI_TERMS * rising * reciprocal],
                                    axis=-1)
            bracket_slopes = np.matmul(slopes, basis).reshape(*b.shape, 2, self.size)
            weighted = powers * log_ratio[:, np.newaxis]
            derivative = weighted[:, :, :direct].sum(axis=2) + (
                weighted[:, :, direct:] * brackets + tail * bracket_slopes
            ).sum(axis=2)
        if not valid.all():  # as scipy.special.zeta: a pole at beta = 1, undefined below
            pole = np.where(np.asarray(beta, dtype=float).reshape(b.shape) == 1.0, np.inf, np.nan)
            value = np.where(valid[..., np.newaxis], value, pole[..., np.newaxis])
            if slope:
                derivative = np.where(valid[..., np.newaxis], derivative, np.nan)
        if not self.batched:
            value = value[0]
            derivative = derivative[0] if slope else None
        return (value, derivative) if slope else value


def exponential_images(c, u):
    """[exp(-u) + exp(-u (1 - 2c))] / (1 - exp(-u)) for c = k dx in (0, 1/2], u = 4 pi h/dx
    > 0: the exponential image ratio without checks."""
    return (np.exp(-u) + np.exp(-u * (1.0 - 2.0 * c))) / -np.expm1(-u)


# --------------------------------------------------------------------------------------------
# Contamination
# --------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class Contamination:
    """Aliased power at a wavelength as a fraction of the true power there.

    Attributes
    ----------
    wavelength : ndarray
        Target wavelength L (m), broadcast with ``spacing``.
    spacing : ndarray
        Station spacing dx (m).
    value : ndarray
        Contamination from the fitted fall-off (0.01 = aliased power is 1 % of the true
        power at L). ``inf`` where L < 2 dx (not resolved) or the fall-off is too shallow
        (beta <= 1); NaN without a fall-off (white spectrum).
    low, high : ndarray
        The smallest and largest contamination over the fall-off shape +- one standard error
        (beta +- beta_err, or h -+ h_err).
    """

    wavelength: np.ndarray
    spacing: np.ndarray
    value: np.ndarray
    low: np.ndarray
    high: np.ndarray

    def to_frame(self) -> pd.DataFrame:
        """Columns ``wavelength_km``, ``spacing_km``, ``alias_contamination``,
        ``alias_contamination_low``, ``alias_contamination_high``."""
        return pd.DataFrame(
            {
                "wavelength_km": np.ravel(self.wavelength) / 1e3,
                "spacing_km": np.ravel(self.spacing) / 1e3,
                "alias_contamination": np.ravel(self.value),
                "alias_contamination_low": np.ravel(self.low),
                "alias_contamination_high": np.ravel(self.high),
            }
        )

    def __str__(self) -> str:
        if np.size(self.value) == 1:
            return (
                f"aliased power at {float(self.wavelength) / 1e3:.4g} km with spacing "
                f"{float(self.spacing) / 1e3:.4g} km: {_percent(float(self.value))} "
                f"({_percent(float(self.low))} to {_percent(float(self.high))}) of the true power"
            )
        return f"aliased-power budget of {np.size(self.value)} wavelength/spacing pairs"


def _percent(value: float) -> str:
    if not np.isfinite(value):
        return "unbounded" if value > 0 else "undefined"
    return f"{100.0 * value:.3g} %"


def _check_lengths(wavelength, spacing) -> tuple[np.ndarray, np.ndarray]:
    lengths = np.asarray(wavelength, dtype=float)
    dx = np.asarray(spacing, dtype=float)
    if np.any(lengths <= 0) or np.any(dx <= 0):
        raise InputError("wavelength and spacing must be positive lengths in metres")
    return np.broadcast_arrays(lengths, dx)


def _contamination(wavenumber, spacing, falloff: FalloffModel, shape) -> np.ndarray:
    """Contamination for one value of the fall-off shape (the model's power at its reference
    wavenumber held fixed)."""
    ratio = image_ratio(wavenumber, spacing=spacing, model=falloff.model, shape=shape)
    if not falloff.floor_seen:
        return ratio
    signal = falloff.signal_power(wavenumber, shape=shape)
    floor = falloff.noise_floor
    own_floor = np.where(wavenumber <= falloff.reference_nyquist * (1 + 1e-12), floor, 0.0)
    folded_floor = floor * np.maximum(spacing / falloff.reference_spacing - 1.0, 0.0)
    with np.errstate(invalid="ignore"):
        aliased = np.where(np.isinf(ratio), np.inf, signal * ratio) + folded_floor
        return aliased / (signal + own_floor)


def contamination(wavelength, *, spacing, falloff: FalloffModel) -> Contamination:
    """Aliased power at ``wavelength`` over the true power there, at station ``spacing``.

    Parameters
    ----------
    wavelength : float or array_like
        Target wavelength L (m).
    spacing : float or array_like
        Station spacing dx (m); broadcast against ``wavelength``.
    falloff : FalloffModel
        The spectrum's fall-off (:func:`profiles.falloff.fit_falloff`).

    Returns
    -------
    Contamination
        ``value``, ``low`` and ``high`` (see the module notes for the formulas).

    Examples
    --------
    Two samples per wavelength of a k^-2 spectrum: the first image falls on the target
    itself, and the others add sum (2n - 1)^-2 + (2n + 1)^-2 over n >= 2:

    >>> from profiles.falloff import FalloffModel
    >>> c = contamination(1000.0, spacing=500.0, falloff=FalloffModel.power_law(2.0))
    >>> round(float(c.value), 4)  # 2^-2 [zeta(2, 1/2) + zeta(2, 3/2)] = pi^2/4 - 1
    1.4674
    """
    lengths, dx = _check_lengths(wavelength, spacing)
    kt = 1.0 / lengths
    if not falloff.falls_off:
        nan = np.full(lengths.shape, np.nan)
        return Contamination(lengths, dx, nan, nan, nan)
    value = _contamination(kt, dx, falloff, falloff.shape)
    bounds = [value]
    if falloff.shape_err > 0:
        for shape in falloff.shape_range:
            bounds.append(_contamination(kt, dx, falloff, shape))
    stack = np.stack(bounds)
    with np.errstate(invalid="ignore"):
        low = np.where(np.isnan(stack).any(axis=0), np.nan, stack.min(axis=0))
        high = np.where(np.isnan(stack).any(axis=0), np.nan, stack.max(axis=0))
    return Contamination(lengths, dx, value, low, high)


# --------------------------------------------------------------------------------------------
# Aliased variance
# --------------------------------------------------------------------------------------------


def _signal_integrals(falloff: FalloffModel, low, nyquist) -> tuple[np.ndarray, np.ndarray]:
    """Model variance beyond ``nyquist`` and within [low, nyquist] (field units squared)."""
    at_nyquist = falloff.signal_power(nyquist)
    with np.errstate(all="ignore"):
        if falloff.model == "power-law":
            beta = falloff.shape
            infinite = np.full(np.shape(nyquist), np.inf)
            beyond = at_nyquist * nyquist / (beta - 1.0) if beta > 1.0 else infinite
            if abs(beta - 1.0) < 1e-9:
                within = at_nyquist * nyquist * np.log(nyquist / low)
            else:
                within = at_nyquist * nyquist * np.expm1((beta - 1.0) * np.log(nyquist / low)) / (beta - 1.0)
        else:
            rate = 4.0 * np.pi * falloff.shape
            beyond = at_nyquist / rate
            within = at_nyquist * np.expm1(rate * (nyquist - low)) / rate
    return beyond, within


def aliased_variance_fraction(*, spacing, length, falloff: FalloffModel) -> np.ndarray | float:
    """Variance folded into the band over the variance resolved in it, from the fall-off.

    At spacing dx all the model's power beyond the Nyquist wavenumber k_N = 1/(2 dx) folds
    into [0, k_N]; the resolved variance is the model's integral over [1/length, k_N] (a
    record of that length resolves nothing longer). With a power law (beta > 1) the ratio is
    1 / ((k_N length)^(beta - 1) - 1); with the exponential 1 / (exp(4 pi h (k_N - 1/length))
    - 1). A noise floor adds N0 max(1/(2 dx_ref) - k_N, 0) to the aliased variance and
    N0 (min(k_N, 1/(2 dx_ref)) - 1/length) to the resolved one.

    Parameters
    ----------
    spacing : float or array_like
        Station spacing dx (m).
    length : float or array_like
        Length of the stretch or window (m); broadcast with ``spacing``.
    falloff : FalloffModel

    Returns
    -------
    float or ndarray
        NaN without a fall-off, or where the length is under two spacings.
    """
    dx, record = _check_lengths(spacing, length)
    nyquist = 0.5 / dx
    low = 1.0 / record
    if not falloff.falls_off:
        result = np.full(dx.shape, np.nan)
    else:
        beyond, within = _signal_integrals(falloff, low, nyquist)
        if falloff.floor_seen:
            floor, top = falloff.noise_floor, falloff.reference_nyquist
            beyond = beyond + floor * np.maximum(top - nyquist, 0.0)
            within = within + floor * np.maximum(np.minimum(nyquist, top) - low, 0.0)
        with np.errstate(all="ignore"):
            result = np.where(low < nyquist, beyond / within, np.nan)
    return float(result) if result.ndim == 0 else result


# --------------------------------------------------------------------------------------------
# Recommended spacing
# --------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class SpacingRecommendation:
    """The largest spacing that keeps the contamination at a wavelength under a tolerance.

    Attributes
    ----------
    wavelength : ndarray
        Target wavelength L (m).
    spacing : ndarray
        Recommended spacing (m): the tolerance spacing, or the noise-floor spacing where that
        is coarser; NaN where there is no recommendation.
    tolerance_spacing : ndarray
        Largest dx in (0, L/2] with contamination(L, dx) <= tolerance (m).
    spacing_low, spacing_high : ndarray
        ``tolerance_spacing`` for the fall-off shape +- one standard error (m).
    floor_spacing : float
        1 / (2 k_floor) with k_floor the wavenumber where the signal meets the noise floor
        (m); NaN when no floor was seen.
    basis : ndarray of str
        ``"tolerance"``, ``"noise floor"`` (finer spacing would only sample noise) or
        ``"none"`` (no fall-off, or one too shallow for a finite budget).
    tolerance : float
        The tolerance (a fraction).
    message : str
        Why there is no recommendation, or what limits it; empty when the tolerance does.
    """

    wavelength: np.ndarray
    spacing: np.ndarray
    tolerance_spacing: np.ndarray
    spacing_low: np.ndarray
    spacing_high: np.ndarray
    floor_spacing: float
    basis: np.ndarray
    tolerance: float
    message: str

    def to_frame(self) -> pd.DataFrame:
        """Columns ``wavelength_km``, ``recommended_spacing_km``, ``tolerance_spacing_km``,
        ``recommended_spacing_low_km``, ``recommended_spacing_high_km``, ``basis``."""
        return pd.DataFrame(
            {
                "wavelength_km": np.ravel(self.wavelength) / 1e3,
                "recommended_spacing_km": np.ravel(self.spacing) / 1e3,
                "tolerance_spacing_km": np.ravel(self.tolerance_spacing) / 1e3,
                "recommended_spacing_low_km": np.ravel(self.spacing_low) / 1e3,
                "recommended_spacing_high_km": np.ravel(self.spacing_high) / 1e3,
                "basis": np.ravel(self.basis),
            }
        )

    def __str__(self) -> str:
        if np.size(self.spacing) != 1:
            return f"recommended spacings for {np.size(self.spacing)} wavelengths"
        spacing = float(self.spacing)
        head = (
            f"for {float(self.wavelength) / 1e3:.4g} km with at most {100 * self.tolerance:g} % "
            "aliased power: "
        )
        if not np.isfinite(spacing):
            return head + "no recommendation. " + self.message
        text = head + f"spacing {spacing / 1e3:.4g} km ({self.basis.item()})"
        return text + (f". {self.message}" if self.message else "")


def _solve_spacing(kt: np.ndarray, falloff: FalloffModel, shape: float, tolerance: float) -> np.ndarray:
    """Bisection on log dx over (0, L/2] for contamination(dx) = tolerance (vectorised).

    The contamination grows with dx (every image moves closer to the target; the folded floor
    grows), and is at least 1 at dx = L/2, where the first image falls on the target itself.
    """
    top = np.log(0.5 / kt)
    low = top - np.log(1e9)
    high = top.copy()
    for _ in range(_BISECTIONS):
        middle = 0.5 * (low + high)
        with np.errstate(invalid="ignore"):
            over = _contamination(kt, np.exp(middle), falloff, shape) > tolerance
        high = np.where(over, middle, high)
        low = np.where(over, low, middle)
    return np.exp(low)


def recommended_spacing(
    wavelength, *, falloff: FalloffModel, tolerance: float = DEFAULT_TOLERANCE
) -> SpacingRecommendation:
    """Largest station spacing keeping the aliased power at ``wavelength`` under ``tolerance``.

    Solves contamination(L, dx) = tolerance for dx in (0, L/2] (bisection on log dx). Where
    the signal meets the noise floor at a wavenumber k_floor and the solution is finer than
    1/(2 k_floor), the recommendation is 1/(2 k_floor) instead: above k_floor the stations
    would only sample noise. A white spectrum (no significant fall-off) and a power law with
    beta <= 1 (infinite image sum) get no recommendation.

    Parameters
    ----------
    wavelength : float or array_like
        Target wavelength L (m).
    falloff : FalloffModel
    tolerance : float
        Largest acceptable contamination, a fraction in (0, 1) (default 0.01).

    Returns
    -------
    SpacingRecommendation

    Examples
    --------
    A k^-4 spectrum needs about 4.3 samples per wavelength for 1 % (docs/aliasing-budget.md):

    >>> from profiles.falloff import FalloffModel
    >>> r = recommended_spacing(1000.0, falloff=FalloffModel.power_law(4.0))
    >>> round(1000.0 / float(r.spacing), 2)
    4.32
    """
    if not 0.0 < float(tolerance) < 1.0:
        raise InputError(f"tolerance: must be a fraction between 0 and 1 (got {tolerance})")
    tolerance = float(tolerance)
    lengths = np.asarray(wavelength, dtype=float)
    if np.any(~(lengths > 0)):
        raise InputError("wavelength: must be a positive length in metres")
    kt = 1.0 / lengths
    nan = np.full(lengths.shape, np.nan)
    floor_spacing = falloff.floor_spacing
    blocked = _no_recommendation(falloff)
    if blocked:
        basis = np.full(lengths.shape, BASIS_NONE, dtype=object)
        return SpacingRecommendation(lengths, nan, nan, nan, nan, floor_spacing, basis, tolerance, blocked)
    solved = _solve_spacing(kt, falloff, falloff.shape, tolerance)
    ends = [_solve_spacing(kt, falloff, shape, tolerance) for shape in falloff.shape_range]
    spacing_low, spacing_high = np.minimum(*ends), np.maximum(*ends)
    spacing = solved
    basis = np.full(lengths.shape, BASIS_TOLERANCE, dtype=object)
    message = ""
    if np.isfinite(floor_spacing):
        at_floor = solved < floor_spacing
        spacing = np.where(at_floor, floor_spacing, solved)
        basis = np.where(at_floor, BASIS_FLOOR, basis).astype(object)
        floor_wavelength = 2.0 * floor_spacing
        if np.any(lengths <= floor_wavelength):
            message = (
                f"the signal falls to the noise floor at {floor_wavelength / 1e3:.4g} km wavelength, "
                f"so at {_lengths_text(lengths[lengths <= floor_wavelength])} the stations see noise "
                f"whatever their spacing; spacing finer than {floor_spacing / 1e3:.4g} km would only "
                "sample noise"
            )
        elif at_floor.any():
            message = (
                f"the fall-off meets the noise floor at {floor_wavelength / 1e3:.4g} km wavelength "
                f"before the aliased power drops under {100 * tolerance:g} %: spacing finer than "
                f"{floor_spacing / 1e3:.4g} km would only sample noise"
            )
    return SpacingRecommendation(
        lengths, spacing, solved, spacing_low, spacing_high, floor_spacing, basis, tolerance, message
    )


def _no_recommendation(falloff: FalloffModel) -> str:
    """Why there can be no recommendation ('' when there can)."""
    if not falloff.falls_off:
        return (
            "no fall-off: the spectrum is white (not significantly falling with wavenumber), so "
            "every spacing folds as much power as it resolves; no spacing can be recommended"
        )
    if falloff.model == "power-law" and falloff.shape <= 1.0:
        return (
            f"the fall-off (beta = {falloff.shape:.2f}) is too shallow for a finite budget: with "
            "beta <= 1 the folded power depends on wavenumbers far beyond the stations"
        )
    return ""


def _lengths_text(lengths: np.ndarray) -> str:
    values = np.unique(np.ravel(lengths))
    if values.size == 1:
        return f"{values[0] / 1e3:.4g} km"
    return f"{values.size} of the wavelengths (down to {values.min() / 1e3:.4g} km)"
