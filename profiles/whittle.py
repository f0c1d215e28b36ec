"""Whittle fits of the fall-off model to the spectral bins of many segments at once.

The numerical core of :mod:`profiles.falloff` (which states the model, the fits and their
sources). Every segment's pooled bins are one *problem*; the problems of a survey are fitted
together, each step of every search taken for all of them in one set of array operations
(problems padded to the same number of bins, the padding weighted zero), so that no Python
loop runs per segment or per bin: a fit is some hundred small array operations, and done one
segment at a time their overhead was most of the cost of the spacing audit.

Parameters of a problem (densities divided by their weighted geometric mean, ``scale``):
theta = (ln C, z, ln N0), the level at the reference wavenumber k_ref, the shape
z = shape x z_scale (power law: beta, z_scale 1; exponential: 4 pi h k_max, so that z is of
order one or ten) and the floor. The model of bin j is

    M_j = C F_j(z) + N0 (dx_j / dx_ref),   ln F = -shape ln(k/k_ref) (power law) or
                                                 -4 pi shape (k - k_ref) (exponential),

F folded at the bin's spacing when asked (:func:`profiles.budget.image_ratio`), and the
objective is Whittle's sum_j w_j [ln M_j + S_j/M_j] (w the number of Fourier bins a bin
averages).
"""

from __future__ import annotations

import numpy as np

from .budget import PowerLawImageSum, exponential_images

#: Largest step of ln C or ln N0 in one Newton iteration of the fit with a floor.
MAX_LOG_STEP = 5.0
#: Objective given to a model that cannot be evaluated (a shape outside its range).
_UNDEFINED = 1e300


class Problems:
    """Padded bins of P problems and what every fit of them needs.

    Parameters
    ----------
    model : {"power-law", "exponential"}
    wavenumber, psd, spacing, weight, inflation : sequences of P arrays
        The pooled bins of each problem (cycles per metre, density, metres, Fourier bins
        averaged, summed variance inflation), in increasing wavenumber.
    """

    def __init__(self, model: str, wavenumber, psd, spacing, weight, inflation):
        self.model = model
        sizes = np.array([len(k) for k in wavenumber])
        self.count, width = len(sizes), int(sizes.max())
        self.sizes = sizes

        def padded(arrays, fill_zero: bool = False):
            # padding: the problem's last bin again (finite everywhere), weighted zero
            out = np.empty((self.count, width))
            for row, values in enumerate(arrays):
                out[row, : values.size] = values
                out[row, values.size :] = 0.0 if fill_zero else values[-1]
            return out

        k = padded(wavenumber)
        self.weight = padded(weight, fill_zero=True)
        self.inflation = padded(inflation, fill_zero=True)
        self.spacing = padded(spacing)
        raw = padded(psd)
        self.total_weight = self.weight.sum(axis=1)
        self.scale = np.exp(np.sum(self.weight * np.log(raw), axis=1) / self.total_weight)
        self.psd = raw / self.scale[:, np.newaxis]
        self.wavenumber = k
        last = k[np.arange(self.count), sizes - 1]
        if model == "power-law":
            self.k_ref = np.exp(np.sum(self.weight * np.log(k), axis=1) / self.total_weight)
            self.z_scale = np.ones(self.count)
            self.rate = np.log(k / self.k_ref[:, np.newaxis])  # ln F = -shape * rate
            self.images = PowerLawImageSum(k * self.spacing)
        else:
            self.k_ref = np.sum(self.weight * k, axis=1) / self.total_weight
            self.z_scale = 4.0 * np.pi * last
            self.rate = 4.0 * np.pi * (k - self.k_ref[:, np.newaxis])  # ln F = -shape * rate
            self.images = 4.0 * np.pi / self.spacing  # u = this * h
        self.first, self.last = k[:, 0], last
        masked = np.where(self.weight > 0, self.spacing, np.inf)
        self.reference_spacing = masked.min(axis=1)
        self.floor_scale = np.log(self.spacing / self.reference_spacing[:, np.newaxis])
        self.weighted_psd = self.weight * self.psd

    # -- the model ------------------------------------------------------------------------

    def shapes(self, rows: np.ndarray, z: np.ndarray, folded: bool) -> tuple[np.ndarray, np.ndarray]:
        """ln F and d ln F/dz of the problems ``rows`` at ``z`` (shape (rows, m)), relative to
        F(k_ref): arrays of shape (rows, m, bins)."""
        z = np.asarray(z, dtype=float).reshape(rows.size, -1)
        shape = z / self.z_scale[rows, np.newaxis]
        rate = self.rate[rows, np.newaxis]
        log_f = -shape[..., np.newaxis] * rate
        slope = np.broadcast_to(-rate, log_f.shape)
        if folded:
            with np.errstate(all="ignore"):
                if self.model == "power-law":
                    images, images_slope = self.images(shape, slope=True, rows=rows)
                else:
                    c = (self.wavenumber * self.spacing)[rows, np.newaxis]
                    u = self.images[rows, np.newaxis] * shape[..., np.newaxis]
                    images = exponential_images(c, u)
                    near, far, gap = np.exp(-u), np.exp(-u * (1.0 - 2.0 * c)), -np.expm1(-u)
                    images_slope = self.images[rows, np.newaxis] * (
                        (-near - (1.0 - 2.0 * c) * far) / gap - images * near / gap)
                log_f = log_f + np.log1p(images)
                slope = slope + images_slope / (1.0 + images)
        return log_f, slope / self.z_scale[rows, np.newaxis, np.newaxis]

    def log_model(self, rows: np.ndarray, theta: np.ndarray, log_f: np.ndarray) -> np.ndarray:
        """ln M of the problems ``rows`` at parameters ``theta`` (rows, 2 or 3), their log
        shapes ``log_f`` (rows, bins) given: (rows, bins)."""
        signal = theta[:, :1] + log_f
        if theta.shape[1] == 2:
            return signal
        return np.logaddexp(signal, theta[:, 2:3] + self.floor_scale[rows])

    def objective(self, rows: np.ndarray, log_m: np.ndarray) -> np.ndarray:
        """Whittle's objective of each problem for its ln M (rows, bins); :data:`_UNDEFINED`
        where it is not finite."""
        with np.errstate(over="ignore", invalid="ignore"):
            value = np.sum(self.weight[rows] * (log_m + self.psd[rows] * np.exp(-log_m)), axis=1)
        return np.where(np.isfinite(value), value, _UNDEFINED)

    def objective_at(self, rows: np.ndarray, theta: np.ndarray, folded: bool) -> np.ndarray:
        """The objective at ``theta`` (rows, 2 or 3)."""
        log_f = self.shapes(rows, theta[:, 1], folded)[0][:, 0]
        return self.objective(rows, self.log_model(rows, theta, log_f))

    # -- without a floor: the level in closed form, a search over z ---------------------------

    def profiled(self, rows: np.ndarray, log_f: np.ndarray, slope: np.ndarray):
        """With C at its closed-form optimum, C = sum w S/F / sum w: the objective, ln C, its
        derivative in z and the curvature, at every shape given (rows, m, bins).

        With p_j = w_j S_j e^(-L_j) / sum w S e^(-L) (L = ln F, L' its slope):
        dQ/dz = sum w L' - W sum p L' (W = sum w; the envelope theorem, C being optimal), and
        the curvature W var_p(L'), exact where L'' = 0 (the plain model) and the data-weighted
        information otherwise. Undefined models get :data:`_UNDEFINED` and NaN.
        """
        weight = self.weight[rows, np.newaxis]
        total = self.total_weight[rows, np.newaxis]
        good = np.all(np.isfinite(log_f), axis=-1)
        safe = np.where(good[..., np.newaxis], log_f, 0.0)
        with np.errstate(over="ignore", invalid="ignore", divide="ignore"):
            lowest = safe.min(axis=-1, keepdims=True)
            terms = self.weighted_psd[rows, np.newaxis] * np.exp(-(safe - lowest))
            sums = terms.sum(axis=-1)
            log_c = np.log(sums / total) - lowest[..., 0]
            log_m = log_c[..., np.newaxis] + safe
            value = np.sum(weight * (log_m + self.psd[rows, np.newaxis] * np.exp(-log_m)), axis=-1)
            share = terms / sums[..., np.newaxis]
            mean = np.sum(share * slope, axis=-1)
            derivative = np.sum(weight * slope, axis=-1) - total * mean
            curvature = total * np.maximum(np.sum(share * slope * slope, axis=-1) - mean * mean, 0.0)
        good &= np.isfinite(value)
        return (np.where(good, value, _UNDEFINED), np.where(good, log_c, 0.0),
                np.where(good, derivative, np.nan), np.where(good, curvature, np.nan))

    def fit_without_floor(self, rows: np.ndarray, bounds, folded: bool) -> np.ndarray:
        """(ln C, z) of each problem minimising the profiled objective: the best point of a
        grid over the bounds (:func:`shape_grid`), refined by safeguarded Newton steps on the
        profiled derivative between its neighbours (:func:`_minima_between`)."""
        grid = shape_grid(bounds)
        zs = np.broadcast_to(grid, (rows.size, grid.size))
        values, _, derivative, curvature = self.profiled(rows, *self.shapes(rows, zs, folded))

        def at(subset, z):
            found = self.profiled(rows[subset], *self.shapes(rows[subset], z, folded))
            return tuple(item[:, 0] for item in found)

        z = _minima_between(at, grid, values, derivative, curvature)
        log_c = at(np.arange(rows.size), z)[1]
        return np.column_stack([log_c, z])

    # -- with a floor ---------------------------------------------------------------------

    def floor_level(self, rows: np.ndarray) -> np.ndarray:
        """ln of the median of the top quarter of each problem's band (normalised densities):
        where the floor's starts and limits are placed."""
        level = np.empty(rows.size)
        for i, row in enumerate(rows.tolist()):  # one median per problem: a few microseconds
            size = self.sizes[row]
            k, psd = self.wavenumber[row, :size], self.psd[row, :size]
            level[i] = np.log(np.median(psd[k >= np.quantile(k, 0.75)]))
        return level

    def fit_with_floor(self, rows: np.ndarray, plain: np.ndarray, bounds, *, start: float) -> np.ndarray:
        """(ln C, z, ln N0) of each problem minimising the objective of the folded model with a
        floor, by :meth:`newton` from the fit without a floor, ``plain`` (rows, 2), and a floor
        ``start`` (natural log) times the median of the top quarter of the band; ln N0 kept
        within 12 below and 3 above that median, z within ``bounds``."""
        level = self.floor_level(rows)
        limits = np.empty((rows.size, 3, 2))
        limits[:, 0] = (-np.inf, np.inf)
        limits[:, 1] = bounds
        limits[:, 2, 0], limits[:, 2, 1] = level - 12.0, level + 3.0
        theta = np.column_stack([plain, level + start])
        return self.newton(rows, theta, limits)[0]

    def newton(self, rows: np.ndarray, theta: np.ndarray, limits: np.ndarray, *, iterations: int = 60):
        """Minimise the objective of the folded model with a floor for the problems ``rows``
        from ``theta`` (rows, 3) within ``limits`` (rows, 3, 2).

        Newton's method with the Hessian H = sum_j w_j [r_j g_j g_j^T + u_j A_j B_j h_j h_j^T]
        (g = d ln M/d theta, r = S/M, u = 1 - r, A and B the shares of signal and floor in M,
        h = (1, L', -1)), which is exact but for the term sum w u A L'' of the shape's own
        second derivative; the Fisher information sum w g g^T where it is not positive
        definite. Steps are cut to at most :data:`MAX_LOG_STEP` in ln C and ln N0 and halved
        until the objective does not increase; a problem stops when the decrease the
        quadratic model predicts, g'H^-1 g / 2, falls below 1e-12 of the objective, when no
        step along the direction lowers it, or when its floor reaches the lower limit (a floor
        there is no floor). Returns the end points and their objectives.
        """
        theta = np.clip(np.array(theta, dtype=float), limits[..., 0], limits[..., 1])
        log_f, slope = (item[:, 0] for item in self.shapes(rows, theta[:, 1], True))
        values = self.objective(rows, self.log_model(rows, theta, log_f))
        active = np.arange(rows.size)
        for _ in range(iterations):
            if active.size == 0:
                break
            here = rows[active]
            weight, psd = self.weight[here], self.psd[here]
            log_m = self.log_model(here, theta[active], log_f[active])
            share = np.exp(theta[active, :1] + log_f[active] - log_m)
            ratio = psd * np.exp(-log_m)
            residual = weight * (1.0 - ratio)
            g = np.stack([share, share * slope[active], 1.0 - share], axis=1)  # (rows, 3, bins)
            h = np.stack([np.ones_like(share), slope[active], -np.ones_like(share)], axis=1)
            gradient = np.einsum("rpj,rj->rp", g, residual)
            hessian = (np.einsum("rpj,rqj,rj->rpq", g, g, weight * ratio)
                       + np.einsum("rpj,rqj,rj->rpq", h, h, residual * share * (1.0 - share)))
            smallest = np.linalg.eigvalsh(hessian)[:, 0]
            fisher = ~(smallest > 1e-12 * np.abs(hessian).max(axis=(1, 2)))
            if fisher.any():
                hessian[fisher] = np.einsum("rpj,rqj,rj->rpq", g[fisher], g[fisher], weight[fisher])
            try:
                step = np.linalg.solve(hessian, gradient[..., np.newaxis])[..., 0]
            except np.linalg.LinAlgError:
                break
            predicted = 0.5 * np.einsum("rp,rp->r", gradient, step)
            finished = ~np.all(np.isfinite(step), axis=1)
            finished |= predicted <= 1e-12 * np.maximum(1.0, np.abs(values[active]))
            finished |= theta[active, 2] <= limits[active, 2, 0]  # a floor at its lower limit is no floor
            active, step = active[~finished], step[~finished]
            scale = np.minimum(1.0, MAX_LOG_STEP / np.maximum(np.abs(step[:, 0]), np.abs(step[:, 2])))
            pending = np.arange(active.size)
            for _halving in range(30):
                if pending.size == 0:
                    break
                which = active[pending]
                trial = np.clip(theta[which] - scale[pending, np.newaxis] * step[pending],
                                limits[which, :, 0], limits[which, :, 1])
                trial_f, trial_slope = (item[:, 0] for item in self.shapes(rows[which], trial[:, 1], True))
                trial_values = self.objective(rows[which], self.log_model(rows[which], trial, trial_f))
                accepted = trial_values <= values[which]
                taken = which[accepted]
                theta[taken], values[taken] = trial[accepted], trial_values[accepted]
                log_f[taken], slope[taken] = trial_f[accepted], trial_slope[accepted]
                pending = pending[~accepted]
                scale[pending] /= 2.0
            active = np.setdiff1d(active, active[pending], assume_unique=True)  # no decrease: done
        return theta, values

    # -- standard errors ------------------------------------------------------------------

    def gradients(self, rows: np.ndarray, theta: np.ndarray, folded: bool) -> np.ndarray:
        """d ln M / d theta at every bin, shape (rows, 2 or 3, bins), analytic."""
        log_f, slope = (item[:, 0] for item in self.shapes(rows, theta[:, 1], folded))
        log_m = self.log_model(rows, theta, log_f)
        share = np.exp(theta[:, :1] + log_f - log_m)
        parts = [share, share * slope]
        if theta.shape[1] == 3:
            parts.append(1.0 - share)
        return np.stack(parts, axis=1)

    def shape_error(self, rows: np.ndarray, theta: np.ndarray, folded: bool) -> np.ndarray:
        """Standard error of the shape (z / z_scale) from the sandwich covariance I^-1 J I^-1
        of the Whittle estimate: I = sum_j w_j g_j g_j^T (one Fourier bin each), J = sum_j c_j
        g_j g_j^T with the inflation c of the multitaper estimate; inf where I is singular."""
        g = self.gradients(rows, theta, folded)
        information = np.einsum("rpj,rqj,rj->rpq", g, g, self.weight[rows])
        score = np.einsum("rpj,rqj,rj->rpq", g, g, self.inflation[rows])
        error = np.full(rows.size, np.inf)
        with np.errstate(all="ignore"):
            determinant = np.linalg.det(information)
            regular = np.isfinite(determinant) & (np.abs(determinant) > 0)
            if regular.any():
                inverse = np.linalg.inv(information[regular])
                variance = (inverse @ score[regular] @ inverse)[:, 1, 1]
                error[regular] = np.where(variance > 0, np.sqrt(variance), np.inf)
        return error / self.z_scale[rows]

    def floor_inflation(self, rows: np.ndarray, theta: np.ndarray) -> np.ndarray:
        """Mean inflation over the bins, weighted by the floor's squared score: the factor by
        which the likelihood ratio for the floor is divided (a first-order correction for the
        correlated multitaper bins)."""
        g = self.gradients(rows, theta, True)[:, 2] ** 2
        return np.sum(g * self.inflation[rows], axis=1) / np.sum(g * self.weight[rows], axis=1)


def shape_grid(bounds) -> np.ndarray:
    """17 geometric steps over the bounds where they span more than a factor of 100, else 13
    even steps."""
    wide = bounds[0] > 0 and bounds[1] > 100 * bounds[0]
    return np.geomspace(*bounds, 17) if wide else np.linspace(bounds[0], bounds[1], 13)


def _minima_between(at, grid: np.ndarray, values: np.ndarray, derivative: np.ndarray, curvature: np.ndarray,
                    *, rtol: float = 1e-6) -> np.ndarray:
    """The z minimising each problem's one-dimensional objective near its best grid point.

    ``values``, ``derivative`` and ``curvature`` hold the objective, its derivative and its
    curvature at the grid points (problems, grid); ``at(subset, z)`` gives the objective, the
    level, the derivative and the curvature of the problems ``subset`` at ``z``. For each
    problem the minimum is bracketed between the best point and the neighbour where the
    derivative has the other sign, and found by Newton steps kept inside the bracket,
    bisecting where a step would leave it or not halve the error fast enough (``rtsafe`` of
    Press, Teukolsky, Vetterling and Flannery 2007, "Numerical Recipes", 3rd ed., section
    9.4, from memory), to within ``rtol`` max(1, |z|): all problems step together. A best
    point at either end of the grid whose derivative points outwards is the answer (the
    minimum lies on the bound). Where the derivative gives no bracket, a bounded Brent search
    of the objective between the two neighbours (``scipy.optimize.minimize_scalar``) is used
    instead. The grid point is kept where the result is not better.
    """
    count = values.shape[0]
    every = np.arange(count)
    best = np.argmin(values, axis=1)
    z = grid[best].astype(float)
    best_value = values[every, best]
    tolerance = rtol * np.maximum(1.0, np.abs(z))
    d, c = derivative[every, best], curvature[every, best]
    last = grid.size - 1
    rising = d > 0
    neighbour = np.clip(np.where(rising, best - 1, best + 1), 0, last)
    on_bound = (rising & (best == 0)) | (~rising & (best == last)) | ~np.isfinite(d) | (d == 0)
    d_neighbour = derivative[every, neighbour]
    bracketed = ~on_bound & np.where(rising, d_neighbour < 0, d_neighbour > 0)
    lo = np.where(rising, grid[neighbour], z)
    hi = np.where(rising, z, grid[neighbour])
    step = previous = hi - lo
    active = np.flatnonzero(bracketed)
    failed = []
    for _ in range(100):
        if active.size == 0:
            break
        za, da, ca, la, ha = z[active], d[active], c[active], lo[active], hi[active]
        with np.errstate(all="ignore"):
            newton = ((ca > 0) & (((za - ha) * ca - da) * ((za - la) * ca - da) < 0)
                      & (np.abs(2.0 * da) <= np.abs(previous[active] * ca)))
            move = np.where(newton, da / ca, za - 0.5 * (la + ha))
        previous[active] = step[active]
        step[active] = move
        z[active] = za - move
        done = np.abs(move) < tolerance[active]
        active = active[~done]
        if active.size == 0:
            break
        _, _, d_new, c_new = at(active, z[active, np.newaxis])
        bad = ~np.isfinite(d_new)
        failed.extend(active[bad].tolist())
        d[active], c[active] = d_new, c_new
        lo[active] = np.where(d_new < 0, z[active], lo[active])
        hi[active] = np.where(d_new > 0, z[active], hi[active])
        active = active[~bad & (d_new != 0)]
    fallback = np.flatnonzero(~on_bound & ~bracketed).tolist() + failed
    if fallback:
        from scipy.optimize import minimize_scalar

        for row in fallback:
            ends = (float(grid[max(best[row] - 1, 0)]), float(grid[min(best[row] + 1, last)]))

            def objective(value, row=row):
                return float(at(np.array([row]), np.array([[value]]))[0][0])

            found = minimize_scalar(objective, bounds=ends, method="bounded",
                                    options={"xatol": float(tolerance[row])})
            z[row] = float(found.x)
    final = at(every, z[:, np.newaxis])[0]
    return np.where(final <= best_value, z, grid[best])
