"""Fabric orientation and true wavelength from apparent wavelengths on lines of several azimuths.

A lineated feature of true wavelength L whose crests strike at azimuth s (degrees clockwise
from north) is seen on a straight line of azimuth t with the apparent wavelength::

    λ_apparent = L / |sin(t - s)|

because the line samples only the component of the wavevector along it (the wavevector points
along the crest normal, s + 90; with θ the angle between line and normal, |sin(t - s)| =
|cos θ|). This is the perfectly lineated limit of the anisotropic characteristic wavenumber of
Goff & Jordan (1988), k(φ) = sqrt(k_n² cos²(φ - φ_s) + k_s² sin²(φ - φ_s)) with k_s = 0
(from memory). A line and its reverse (t and t + 180) are the same line, and s is only
defined modulo 180.

The fit is made in wavenumber space, ``1/λ_apparent = |sin(t - s)| / L``:

- the model is bounded (0 to 1/L) and smooth away from t = s, whereas ``L / |sin|`` grows
  without bound near the strike, so a single oblique line would dominate a fit in wavelength;
- the peak of a periodogram is uncertain by about the same amount in wavenumber (the
  resolution, 1 / segment length) on every line, so equal weights suit wavenumber space;
- for a fixed strike the model is linear in 1/L, which gives a cheap global scan over s.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from .errors import InputError

#: Smallest azimuth spread (degrees, modulo 180) of the lines in a fit.
MIN_SPREAD_DEG = 20.0
#: A line closer than this to the fitted strike (degrees) is refused: its apparent wavelength
#: is more than 1/sin(5°) ≈ 11.5 true wavelengths and changes violently with the strike.
MIN_ANGLE_TO_STRIKE_DEG = 5.0
#: A second local minimum is reported as an alternative when its sum of squares is within
#: this factor of the best one.
ALTERNATIVE_FACTOR = 1.1


@dataclass(frozen=True, eq=False)
class FabricFit:
    """Least-squares fit of a lineated fabric to apparent wavelengths.

    Attributes
    ----------
    wavelength : float
        True wavelength L, metres.
    strike_deg : float
        Crest strike s, degrees clockwise from north, in [0, 180).
    wavelength_err : float
        One-sigma error of L, metres; NaN for an exact fit through 2 lines.
    strike_err_deg : float
        One-sigma error of s, degrees; NaN for an exact fit through 2 lines.
    n_segments : int
        Number of lines (segments) in the fit.
    rms_misfit : float
        Root mean square of ``misfit``, metres.
    lines : tuple of str
        Line labels, in input order.
    azimuth_deg : ndarray
        Azimuth of each line, degrees, as given.
    observed : ndarray
        Observed apparent wavelength of each line, metres.
    predicted : ndarray
        Apparent wavelength the fit predicts for each line, metres.
    misfit : ndarray
        ``observed - predicted``, metres.
    alternative_strike_deg : float
        Strike of a second solution that fits nearly as well (NaN when there is none); with
        2 lines there are always two exact solutions.
    alternative_wavelength : float
        True wavelength of that second solution, metres (NaN when there is none).
    note : str
        Empty, or a remark about the fit (exact fit, ambiguity).
    """

    wavelength: float
    strike_deg: float
    wavelength_err: float
    strike_err_deg: float
    n_segments: int
    rms_misfit: float
    lines: tuple[str, ...]
    azimuth_deg: np.ndarray
    observed: np.ndarray
    predicted: np.ndarray
    misfit: np.ndarray
    alternative_strike_deg: float = np.nan
    alternative_wavelength: float = np.nan
    note: str = ""

    def predicted_wavelength(self, azimuth: float | np.ndarray) -> np.ndarray:
        """Apparent wavelength (m) on a line of ``azimuth`` degrees: ``L / |sin(t - s)|``.

        Infinite along the strike.
        """
        return project_wavelength(azimuth, wavelength=self.wavelength, strike_deg=self.strike_deg)

    def __str__(self) -> str:
        def pm(err: float, scale: float, digits: int) -> str:
            return f" ± {err / scale:.{digits}f}" if np.isfinite(err) else ""

        text = (
            f"fabric: wavelength {self.wavelength / 1e3:.3f}{pm(self.wavelength_err, 1e3, 3)} km, "
            f"strike {self.strike_deg:.1f}{pm(self.strike_err_deg, 1, 1)} deg, "
            f"{self.n_segments} lines, rms misfit {self.rms_misfit / 1e3:.3f} km"
        )
        return f"{text} ({self.note})" if self.note else text

    def to_json(self) -> dict[str, float | int | None]:
        """``{wavelength_km, strike_deg, wavelength_err_km, strike_err_deg, n_segments,
        rms_misfit_km}``; a missing error is None."""

        def number(value: float) -> float | None:
            return float(value) if np.isfinite(value) else None

        return {
            "wavelength_km": number(self.wavelength / 1e3),
            "strike_deg": number(self.strike_deg),
            "wavelength_err_km": number(self.wavelength_err / 1e3),
            "strike_err_deg": number(self.strike_err_deg),
            "n_segments": int(self.n_segments),
            "rms_misfit_km": number(self.rms_misfit / 1e3),
        }

    def to_frame(self):
        """One row: the fitted values with units in the column names, and the note."""
        import pandas as pd

        row = {key: (np.nan if value is None else value) for key, value in self.to_json().items()}
        row["alternative_strike_deg"] = self.alternative_strike_deg
        row["alternative_wavelength_km"] = self.alternative_wavelength / 1e3
        row["note"] = self.note
        return pd.DataFrame([row])

    def lines_frame(self):
        """One row per line: azimuth, observed and predicted apparent wavelength, misfit."""
        import pandas as pd

        return pd.DataFrame(
            {
                "line": list(self.lines),
                "azimuth_deg": self.azimuth_deg,
                "observed_wavelength_km": self.observed / 1e3,
                "predicted_wavelength_km": self.predicted / 1e3,
                "misfit_km": self.misfit / 1e3,
            }
        )


def project_wavelength(azimuth: float | np.ndarray, *, wavelength: float, strike_deg: float) -> np.ndarray:
    """Apparent wavelength (m) of a lineated fabric on a line of ``azimuth`` degrees.

    ``λ_apparent = wavelength / |sin(azimuth - strike_deg)|``: the projection of the
    wavevector on the line (references.md section 9). Infinite along the strike.
    """
    sine = np.abs(np.sin(np.radians(np.asarray(azimuth, dtype=float) - strike_deg)))
    out = np.full(sine.shape, np.inf)
    np.divide(wavelength, sine, out=out, where=sine > 1e-15)
    return out


def _azimuth_spread(azimuth_deg: np.ndarray) -> float:
    """Width (degrees) of the smallest arc of the 180-degree circle holding every azimuth."""
    folded = np.sort(np.mod(azimuth_deg, 180.0))
    gaps = np.append(np.diff(folded), folded[0] + 180.0 - folded[-1])
    return float(180.0 - gaps.max())


def _circular_distance(a_deg: float, b_deg: float) -> float:
    d = abs(a_deg - b_deg) % 180.0
    return min(d, 180.0 - d)


def fit_fabric(
    azimuth: Sequence[float] | np.ndarray,
    apparent_wavelength: Sequence[float] | np.ndarray,
    *,
    wavelength_err: Sequence[float] | np.ndarray | None = None,
    lines: Sequence[str] | None = None,
) -> FabricFit:
    """Estimate a fabric's true wavelength and strike from apparent wavelengths.

    Model ``1/λ_i = |sin(t_i - s)| / L`` (see the module notes), fitted by nonlinear least
    squares (``scipy.optimize.least_squares``) in wavenumber space, with parameters
    ``log(1/L)`` and ``s``. Because ``|sin|`` is symmetric the cost has several minima: a scan
    of s every 0.5 degrees (with the best L for each s in closed form) finds the local minima,
    each is refined, and the best is kept; a second one within 10 % of the best sum of squares
    is reported as ``alternative_strike_deg``.

    Errors come from the Jacobian J at the solution, ``cov = (JᵀJ)⁻¹ r·r / (n - 2)``: the
    residual variance sets the scale and ``wavelength_err`` (if given) only the relative
    weights, ``σ(1/λ) = σ(λ) / λ²``. With 2 lines the fit is exact and has no error estimate.

    Parameters
    ----------
    azimuth : array_like
        Geodesic azimuth of each line, degrees (t and t + 180 are the same line).
    apparent_wavelength : array_like
        Apparent wavelength measured on each line, metres.
    wavelength_err : array_like, optional
        One-sigma uncertainty of each apparent wavelength, metres (relative weights).
    lines : sequence of str, optional
        Line labels for messages and tables (default ``line 1``, ``line 2``, ...).

    Returns
    -------
    FabricFit

    Raises
    ------
    InputError
        Fewer than 2 lines; azimuths spanning less than 20 degrees modulo 180; an infinite
        or non-positive apparent wavelength; a line within 5 degrees of the fitted strike.
    """
    from scipy.optimize import least_squares

    t_deg = np.atleast_1d(np.asarray(azimuth, dtype=float))
    lam = np.atleast_1d(np.asarray(apparent_wavelength, dtype=float))
    n = t_deg.size
    if t_deg.ndim != 1 or lam.shape != t_deg.shape:
        raise InputError(
            f"azimuth and apparent_wavelength must be 1-D of equal length, got {t_deg.shape} and {lam.shape}"
        )
    labels = tuple(f"line {i + 1}" for i in range(n)) if lines is None else tuple(map(str, lines))
    if len(labels) != n:
        raise InputError(f"got {len(labels)} line labels for {n} lines")
    if n < 2:
        raise InputError(f"a fabric fit needs apparent wavelengths on at least 2 lines, got {n}")
    for label, t, value in zip(labels, t_deg, lam, strict=True):
        if not np.isfinite(t):
            raise InputError(f"{label}: azimuth is {t!r}; expected degrees")
        if np.isposinf(value):
            raise InputError(
                f"{label}: apparent wavelength is infinite, so the line runs along the strike; "
                "leave it out of the fit"
            )
        if not (np.isfinite(value) and value > 0):
            raise InputError(
                f"{label}: apparent wavelength must be a positive length in metres, got {value!r}"
            )
    spread = _azimuth_spread(t_deg)
    if spread < MIN_SPREAD_DEG:
        raise InputError(
            f"line azimuths span only {spread:.1f} deg (modulo 180); a fabric fit needs lines at "
            f"least {MIN_SPREAD_DEG:g} deg apart"
        )
    # Work with dimensionless numbers: q = λ_ref / λ, u = λ_ref / L; sq is σ(q) up to a scale.
    lam_ref = float(np.median(lam))
    q = lam_ref / lam
    if wavelength_err is None:
        sq = np.ones(n)
    else:
        sigma_lam = np.atleast_1d(np.asarray(wavelength_err, dtype=float))
        if sigma_lam.shape != lam.shape or not np.all(np.isfinite(sigma_lam) & (sigma_lam > 0)):
            raise InputError("wavelength_err must hold one positive, finite value (m) per line")
        sq = sigma_lam / lam**2
        sq = sq / np.median(sq)
    w = 1.0 / sq**2
    t = np.radians(t_deg)

    # Global scan over the strike with the best u for each s in closed form.
    scan = np.radians(np.arange(0.0, 180.0, 0.5))
    sines = np.abs(np.sin(t[:, None] - scan[None, :]))
    u_best = np.sum(w[:, None] * sines * q[:, None], axis=0) / np.maximum(
        np.sum(w[:, None] * sines**2, axis=0), 1e-300
    )
    rss = np.sum(w[:, None] * (u_best * sines - q[:, None]) ** 2, axis=0)
    is_min = (rss <= np.roll(rss, 1)) & (rss <= np.roll(rss, -1)) & (u_best > 0)
    starts = np.flatnonzero(is_min)
    starts = starts[np.argsort(rss[starts])][:8]

    def residual(p):
        return (np.exp(p[0]) * np.abs(np.sin(t - p[1])) - q) / sq

    def jacobian(p):
        u, diff = np.exp(p[0]), t - p[1]
        d_logu = u * np.abs(np.sin(diff)) / sq
        d_s = -u * np.sign(np.sin(diff)) * np.cos(diff) / sq
        return np.column_stack([d_logu, d_s])

    total = float(np.sum(w * q**2))
    solutions = []
    for i in starts:
        p0 = np.array([np.log(u_best[i]), scan[i]])
        result = least_squares(residual, p0, jac=jacobian, method="lm", xtol=1e-15, ftol=1e-15)
        strike = float(np.degrees(result.x[1]) % 180.0)
        if strike >= 180.0:
            strike = 0.0
        cost = float(2.0 * result.cost)
        solutions.append((round(cost / total, 12), strike, cost, result))
    solutions.sort(key=lambda item: (item[0], item[1]))
    _, strike_deg, best_cost, best = solutions[0]
    u = float(np.exp(best.x[0]))
    wavelength = lam_ref / u

    alternative_strike, alternative_wavelength = np.nan, np.nan
    for _, other_strike, other_cost, other in solutions[1:]:
        close = other_cost <= ALTERNATIVE_FACTOR * best_cost + 1e-12 * total
        if close and _circular_distance(other_strike, strike_deg) > 1.0:
            alternative_strike = other_strike
            alternative_wavelength = lam_ref / float(np.exp(other.x[0]))
            break

    angle = np.degrees(np.arcsin(np.minimum(np.abs(np.sin(t - np.radians(strike_deg))), 1.0)))
    worst = int(np.argmin(angle))
    if angle[worst] < MIN_ANGLE_TO_STRIKE_DEG:
        raise InputError(
            f"{labels[worst]}: azimuth {t_deg[worst]:g} deg runs within {angle[worst]:.1f} deg of "
            f"the fitted strike {strike_deg:.1f} deg, where the apparent wavelength is unbounded; "
            "leave the line out of the fit"
        )

    notes = []
    if n == 2:
        wavelength_err_m, strike_err = np.nan, np.nan
        notes.append("exact fit through 2 lines: no error estimate")
    else:
        jac = best.jac
        variance = best_cost / (n - 2)
        try:
            cov = np.linalg.inv(jac.T @ jac) * variance
            wavelength_err_m = wavelength * float(np.sqrt(cov[0, 0]))
            strike_err = float(np.degrees(np.sqrt(cov[1, 1])))
        except np.linalg.LinAlgError:
            wavelength_err_m, strike_err = np.nan, np.nan
            notes.append("singular Jacobian: no error estimate")
    if np.isfinite(alternative_strike):
        notes.append(
            f"a second solution fits about as well: strike {alternative_strike:.1f} deg, "
            f"wavelength {alternative_wavelength / 1e3:.3f} km"
        )

    predicted = project_wavelength(t_deg, wavelength=wavelength, strike_deg=strike_deg)
    misfit = lam - predicted
    return FabricFit(
        wavelength=float(wavelength),
        strike_deg=strike_deg,
        wavelength_err=float(wavelength_err_m),
        strike_err_deg=float(strike_err),
        n_segments=n,
        rms_misfit=float(np.sqrt(np.mean(misfit**2))),
        lines=labels,
        azimuth_deg=t_deg,
        observed=lam,
        predicted=predicted,
        misfit=misfit,
        alternative_strike_deg=float(alternative_strike),
        alternative_wavelength=float(alternative_wavelength),
        note="; ".join(notes),
    )
