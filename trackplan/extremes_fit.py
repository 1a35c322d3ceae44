"""Annual extremes of daily rail temperature and their extreme-value fits (Gumbel, GEV).

The annual maximum and minimum of each complete-enough year, maximum-likelihood
fits with confidence intervals of the return levels (:data:`DISTRIBUTIONS`),
plotting positions. The method, its limits and references are in the
documentation of :mod:`trackplan.extremes` and docs/methods/design-extremes.md;
the design values built on these fits are in :mod:`trackplan.extremes_design`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Callable

import numpy as np

from trackplan import ranges
from trackplan.errors import InputError
from trackplan.notices import Notice



#: Longest return period extrapolated from a record [years] (sections accept 2..1000).
MAX_RETURN_PERIOD_YEARS = 10_000.0

#: Fewer complete years than this: design values are the observed extremes.
MIN_FIT_YEARS = 3
#: Fewer complete years than this: the fit is made, with a warning.
SHORT_RECORD_YEARS = 10
#: A T-year return level is fitted from at least ``max(SHORT_RECORD_YEARS, ceil(T / EXTRAPOLATION_FACTOR))``
#: complete years (:func:`min_record_years`): a planning choice, not a published rule.
EXTRAPOLATION_FACTOR = 4.0
#: Smallest Gumbel scale [K] used for the allowance above the observed extreme of a short record
#: (:func:`short_record_allowance_K`): a planning choice; annual maximum air temperatures at
#: mid-latitude stations have Gumbel scales of about 1-2.5 K (from memory).
ALLOWANCE_SCALE_K = 2.0
#: A year is complete enough with at least this share of its days ...
YEAR_MIN_COVERAGE = ranges.YEAR_MIN_COVERAGE
#: ... and at least this share of the days of every month (a missing July
#: would hide the year's maximum).
MONTH_MIN_COVERAGE = ranges.MONTH_MIN_COVERAGE

_EULER_GAMMA = 0.5772156649015329


# --------------------------------------------------------------------------
# Annual extremes
# --------------------------------------------------------------------------


def annual_extremes(daily, typical_year: bool = False, years=None):
    """Annual maxima and minima of daily rail and air temperature.

    Parameters
    ----------
    daily : pandas.DataFrame
        Index of local dates; columns ``rail_max_C``, ``rail_min_C``,
        ``air_max_C``, ``air_min_C`` [degC]; NaN on days without data.
    typical_year : bool
        The record is a typical (synthetic) year: one row, no completeness
        test across years.
    years : iterable of int, optional
        Years the reader found complete; others are dropped with a warning.

    Returns
    -------
    (pandas.DataFrame, list of str)
        Columns ``year``, ``max_rail_temperature_C``,
        ``min_rail_temperature_C``, ``max_air_temperature_C``,
        ``min_air_temperature_C`` [degC], ``days`` (days with data); and the
        warnings (years dropped and why).

    Notes
    -----
    A year is kept when at least :data:`YEAR_MIN_COVERAGE` of its days and
    :data:`MONTH_MIN_COVERAGE` of each month's days have both rail extremes.
    """
    import pandas as pd

    cols = ["rail_max_C", "rail_min_C", "air_max_C", "air_min_C"]
    missing = [c for c in cols if c not in daily.columns]
    if missing:
        raise InputError(f"daily extremes need the columns {', '.join(missing)}", "daily rail extremes")
    idx = pd.DatetimeIndex(daily.index)
    ok = np.isfinite(daily["rail_max_C"].to_numpy(float)) & np.isfinite(daily["rail_min_C"].to_numpy(float))
    out_cols = ["year", "max_rail_temperature_C", "min_rail_temperature_C", "max_air_temperature_C",
                "min_air_temperature_C", "days"]
    warnings: list[str] = []
    if typical_year:
        yr = pd.Series(idx.year).mode()
        label = int(yr.iloc[0]) if len(yr) else 0
        d = daily[ok]
        if d.empty:
            raise InputError("the typical-year record has no day with rail extremes", "record")
        row = [label, d.rail_max_C.max(), d.rail_min_C.min(), d.air_max_C.max(), d.air_min_C.min(), int(ok.sum())]
        return pd.DataFrame([row], columns=out_cols), warnings

    year = idx.year.to_numpy().astype(np.int64)
    month = idx.month.to_numpy().astype(np.int64)
    y0 = int(year.min())
    ny = int(year.max()) - y0 + 1
    yi = year - y0
    got = np.bincount(yi[ok] * 12 + month[ok] - 1, minlength=ny * 12).reshape(ny, 12).astype(float)
    first = (np.datetime64(f"{y0:04d}-01", "M") + np.arange(ny * 12 + 1)).astype("datetime64[D]")
    dim = np.diff(first).astype(float).reshape(ny, 12)
    cover = got.sum(axis=1) / dim.sum(axis=1)
    mcover = (got / dim).min(axis=1)
    present = np.bincount(yi, minlength=ny) > 0
    vals = {}
    for c, fn, init in (("rail_max_C", np.maximum, -np.inf), ("rail_min_C", np.minimum, np.inf),
                        ("air_max_C", np.maximum, -np.inf), ("air_min_C", np.minimum, np.inf)):
        v = daily[c].to_numpy(float)
        use = ok & np.isfinite(v)
        acc = np.full(ny, init)
        fn.at(acc, yi[use], v[use])
        vals[c] = acc
    days = np.bincount(yi[ok], minlength=ny)
    allowed = None if years is None else {int(y) for y in years}
    rows = []
    for k in range(ny):
        if not present[k]:
            continue
        y = y0 + k
        if allowed is not None and y not in allowed:
            warnings.append(Notice(f"year {y} left out: the record is not complete enough in that year", 'incomplete_years'))
            continue
        if cover[k] < YEAR_MIN_COVERAGE or mcover[k] < MONTH_MIN_COVERAGE:
            warnings.append(
                Notice(f"year {y} left out: {cover[k]:.0%} of its days have data (need {YEAR_MIN_COVERAGE:.0%}, "
                f"and {MONTH_MIN_COVERAGE:.0%} of every month; poorest month {mcover[k]:.0%})", 'incomplete_years')
            )
            continue
        rows.append([y, vals["rail_max_C"][k], vals["rail_min_C"][k], vals["air_max_C"][k],
                     vals["air_min_C"][k], int(days[k])])
    return pd.DataFrame(rows, columns=out_cols), warnings


# --------------------------------------------------------------------------
# Distributions
# --------------------------------------------------------------------------


def gumbel_fit_ml(x, iterations: int = 50):
    """Maximum-likelihood Gumbel (maxima) parameters, vectorised over rows.

    Parameters
    ----------
    x : array, shape (n,) or (B, n)
        Annual maxima (each row one sample).
    iterations : int
        Newton iterations at most.

    Returns
    -------
    (mu, beta) : arrays of shape () or (B,)
        Location and scale (``x`` units).

    Notes
    -----
    The likelihood equations (Gumbel 1958; Coles 2001, 3.3.1) reduce to one
    equation in ``beta``::

        g(beta) = beta - mean(x) + sum(x w) / sum(w) = 0,  w = exp(-x / beta)
        mu = -beta ln(mean(w))

    ``g' = 1 + var_w(x) / beta**2 > 0``, so Newton's method from the moment
    estimate ``beta0 = sqrt(6) s / pi`` converges to the single root. The data
    are standardised per row first for numerical safety.
    """
    x = np.asarray(x, dtype=float)
    one = x.ndim == 1
    X = np.atleast_2d(x)
    m = X.mean(axis=1, keepdims=True)
    s = X.std(axis=1, ddof=1, keepdims=True)
    s = np.where(s > 0, s, 1.0)
    z = (X - m) / s
    beta = np.full((X.shape[0], 1), math.sqrt(6.0) / math.pi)
    for _ in range(iterations):
        zz = z - z.max(axis=1, keepdims=True)  # shift inside the exponent, cancels in the ratio
        w = np.exp(-zz / beta)
        sw = w.sum(axis=1, keepdims=True)
        mw = (z * w).sum(axis=1, keepdims=True) / sw
        vw = (z * z * w).sum(axis=1, keepdims=True) / sw - mw**2
        g = beta - z.mean(axis=1, keepdims=True) + mw
        step = g / (1.0 + vw / beta**2)
        beta = np.maximum(beta - step, beta / 10.0)
        if np.all(np.abs(step) < 1e-12):
            break
    zmax = z.max(axis=1, keepdims=True)
    mu = zmax - beta * np.log(np.mean(np.exp(-(z - zmax) / beta), axis=1, keepdims=True))
    mu = (m + s * mu)[:, 0]
    beta = (s * beta)[:, 0]
    if one:
        return float(mu[0]), float(beta[0])
    return mu, beta


def gumbel_quantile(p, mu, beta):
    """Gumbel (maxima) quantile ``mu - beta ln(-ln p)``; ``p = 1 - 1/T`` gives the return level."""
    return np.asarray(mu) - np.asarray(beta) * np.log(-np.log(np.asarray(p, dtype=float)))


def gumbel_moments(mean, std):
    """Method-of-moments Gumbel parameters from the sample mean and standard deviation.

    ``beta = sqrt(6) s / pi``, ``mu = mean - 0.5772 beta`` (Gumbel 1958;
    Chow, Maidment & Mays 1988, Applied Hydrology, 12.2).
    """
    beta = math.sqrt(6.0) * std / math.pi
    return mean - _EULER_GAMMA * beta, beta


@dataclass(frozen=True)
class Distribution:
    """One extreme-value distribution for annual maxima.

    Attributes
    ----------
    name : str
    n_params : int
    fit : callable
        ``fit(x) -> params`` (maximum likelihood).
    quantile : callable
        ``quantile(p, params) -> x``; broadcasts over rows of ``params``.
    fit_many : callable
        ``fit_many(X) -> params array (B, k)`` for bootstrap samples.
    sample : callable
        ``sample(rng, params, size) -> array``.
    nll : callable
        Negative log-likelihood ``nll(params, x)`` (for the delta method).
    source : str
    """

    name: str
    n_params: int
    fit: Callable
    quantile: Callable
    fit_many: Callable
    sample: Callable
    nll: Callable
    source: str


def _gumbel_fit(x):
    return gumbel_fit_ml(x)


def _gumbel_quantile(p, params):
    params = np.asarray(params, dtype=float)
    return gumbel_quantile(p, params[..., 0], params[..., 1])


def _gumbel_fit_many(X):
    mu, beta = gumbel_fit_ml(X)
    return np.column_stack([mu, beta])


def _gumbel_sample(rng, params, size):
    return rng.gumbel(params[0], params[1], size=size)


def _gumbel_nll(params, x):
    mu, beta = params
    if beta <= 0:
        return np.inf
    z = (np.asarray(x) - mu) / beta
    return float(len(z) * math.log(beta) + np.sum(z + np.exp(-z)))


def _gev_fit(x):
    from scipy import stats

    x = np.asarray(x, dtype=float)
    mu0, b0 = gumbel_fit_ml(x)
    c, loc, scale = stats.genextreme.fit(x, 0.0, loc=mu0, scale=b0)
    return -c, loc, scale  # shape xi in Coles' sign convention


def _gev_quantile(p, params):
    """GEV quantile with Coles' shape ``xi`` (xi > 0 heavy upper tail); params (xi, mu, sigma)."""
    params = np.asarray(params, dtype=float)
    xi, mu, sigma = params[..., 0], params[..., 1], params[..., 2]
    y = -np.log(np.asarray(p, dtype=float))
    small = np.abs(xi) < 1e-8
    xi_safe = np.where(small, 1.0, xi)
    q = mu - sigma / xi_safe * (1.0 - y ** (-xi_safe))
    return np.where(small, mu - sigma * np.log(y), q)


def _gev_fit_many(X):
    return np.array([_gev_fit(row) for row in np.atleast_2d(X)])


def _gev_sample(rng, params, size):
    from scipy import stats

    xi, mu, sigma = params
    return stats.genextreme.rvs(-xi, loc=mu, scale=sigma, size=size, random_state=rng)


def _gev_nll(params, x):
    from scipy import stats

    xi, mu, sigma = params
    if sigma <= 0:
        return np.inf
    return float(stats.genextreme.nnlf((-xi, mu, sigma), np.asarray(x)))


#: Extreme-value distributions by name.
DISTRIBUTIONS: dict[str, Distribution] = {
    "gumbel": Distribution("gumbel", 2, _gumbel_fit, _gumbel_quantile, _gumbel_fit_many, _gumbel_sample,
                           _gumbel_nll, "Gumbel (1958); maximum likelihood, Coles (2001) 3.3"),
    "gev": Distribution("gev", 3, _gev_fit, _gev_quantile, _gev_fit_many, _gev_sample, _gev_nll,
                        "Jenkinson (1955); maximum likelihood via scipy.stats.genextreme, Coles (2001) 3.3"),
}


def _numerical_hessian(f, theta, rel: float = 1e-4):
    theta = np.asarray(theta, dtype=float)
    k = theta.size
    h = rel * np.maximum(np.abs(theta), 0.1)
    H = np.empty((k, k))
    f0 = f(theta)
    for i in range(k):
        for j in range(i, k):
            if i == j:
                e = np.zeros(k)
                e[i] = h[i]
                H[i, i] = (f(theta + e) - 2 * f0 + f(theta - e)) / h[i] ** 2
            else:
                ei = np.zeros(k)
                ej = np.zeros(k)
                ei[i] = h[i]
                ej[j] = h[j]
                H[i, j] = H[j, i] = (
                    f(theta + ei + ej) - f(theta + ei - ej) - f(theta - ei + ej) + f(theta - ei - ej)
                ) / (4 * h[i] * h[j])
    return H


@dataclass
class ExtremeFit:
    """A fitted extreme-value distribution of annual maxima (or negated minima).

    Attributes
    ----------
    distribution : str
        ``"gumbel"`` or ``"gev"``.
    tail : str
        ``"max"`` (fitted to the annual maxima) or ``"min"`` (fitted to the
        negated annual minima; levels are negated back).
    params : tuple of float
        Gumbel ``(mu, beta)`` or GEV ``(xi, mu, sigma)`` (Coles' sign of the
        shape) of the fitted series [degC for location and scale].
    n_years : int
    ci_method : str
        ``"pivot"``, ``"bootstrap"``, ``"delta"`` or ``"none"``.
    ci_level : float
    boot_params : numpy.ndarray or None
        Bootstrap parameter sets, shape (n_boot, k) (pivot: fits of standard
        Gumbel samples of the record's length).
    covariance : numpy.ndarray or None
        Covariance of the parameter estimates (delta method).
    """

    distribution: str
    tail: str
    params: tuple
    n_years: int
    ci_method: str = "none"
    ci_level: float = 0.95
    boot_params: np.ndarray | None = field(default=None, repr=False)
    covariance: np.ndarray | None = field(default=None, repr=False)

    def _sign(self) -> float:
        return 1.0 if self.tail == "max" else -1.0

    def return_level(self, return_period_years):
        """Return level(s) [degC] for return period(s) [years] (> 1)."""
        T = np.asarray(return_period_years, dtype=float)
        p = 1.0 - 1.0 / T
        return self._sign() * DISTRIBUTIONS[self.distribution].quantile(p, np.asarray(self.params))

    def interval(self, return_period_years):
        """Confidence interval ``(low, high)`` [degC] of the return level(s), or None."""
        T = np.atleast_1d(np.asarray(return_period_years, dtype=float))
        p = 1.0 - 1.0 / T
        dist = DISTRIBUTIONS[self.distribution]
        alpha = 1.0 - self.ci_level
        if self.ci_method == "pivot" and self.boot_params is not None:
            # Z = (x_T_hat - x_T) / beta_hat from fits (mu*, beta*) of standard Gumbel samples
            y = -np.log(-np.log(p))
            mu_s, b_s = self.boot_params[:, 0:1], self.boot_params[:, 1:2]
            z = (mu_s + b_s * y[None, :] - y[None, :]) / b_s
            centre = dist.quantile(p, np.asarray(self.params))
            beta = self.params[1]
            lo = centre - np.quantile(z, 1 - alpha / 2, axis=0) * beta
            hi = centre - np.quantile(z, alpha / 2, axis=0) * beta
        elif self.ci_method == "bootstrap" and self.boot_params is not None:
            levels = dist.quantile(p[None, :], self.boot_params[:, None, :])  # (B, nT)
            levels = levels[np.all(np.isfinite(levels), axis=1)]
            lo = np.quantile(levels, alpha / 2, axis=0)
            hi = np.quantile(levels, 1 - alpha / 2, axis=0)
        elif self.ci_method == "delta" and self.covariance is not None:
            from scipy import stats

            theta = np.asarray(self.params, dtype=float)
            z = stats.norm.ppf(1 - alpha / 2)
            centre = dist.quantile(p, theta)
            lo, hi = np.empty_like(p), np.empty_like(p)
            for i, pi in enumerate(p):
                g = np.empty(theta.size)
                for k in range(theta.size):
                    h = 1e-6 * max(abs(theta[k]), 0.1)
                    e = np.zeros(theta.size)
                    e[k] = h
                    g[k] = (dist.quantile(pi, theta + e) - dist.quantile(pi, theta - e)) / (2 * h)
                se = math.sqrt(max(float(g @ self.covariance @ g), 0.0))
                lo[i], hi[i] = centre[i] - z * se, centre[i] + z * se
        else:
            return None
        if self.tail == "min":
            lo, hi = -hi, -lo
        return lo, hi


def fit_extremes(values, distribution: str = "gumbel", tail: str = "max", ci_method: str = "auto",
                 n_boot: int = 200, seed: int = 0, ci_level: float = 0.95) -> ExtremeFit:
    """Fit annual maxima (``tail="max"``) or minima (``tail="min"``).

    Parameters
    ----------
    values : array
        Annual maxima or minima [degC].
    distribution : str
        Key of :data:`DISTRIBUTIONS`.
    tail : {"max", "min"}
        Minima are fitted as negated maxima.
    ci_method : {"auto", "pivot", "bootstrap", "delta", "none"}
        ``auto``: the exact pivotal interval for Gumbel (simulated, Lawless
        2003, 5.1), delta method for GEV (a GEV bootstrap refits by numerical
        optimisation and is slow). ``bootstrap``: percentile parametric
        bootstrap.
    n_boot : int
        Bootstrap samples.
    seed : int
        Seed of the bootstrap's random generator (results are reproducible).
    ci_level : float
        Two-sided confidence level, e.g. 0.95.

    Returns
    -------
    ExtremeFit

    Notes
    -----
    Parametric bootstrap (Efron & Tibshirani 1993, ch. 6 and 13): draw
    ``n_boot`` samples of the record's length from the fitted distribution,
    refit each by maximum likelihood, and take the percentile interval of the
    return levels. Delta method (Coles 2001, 3.3.3): variance of the return
    level ``grad(x_T)' V grad(x_T)`` with ``V`` the inverse of the observed
    information (numerical Hessian of the negative log-likelihood).
    """
    if distribution not in DISTRIBUTIONS:
        raise InputError(f"unknown distribution {distribution!r}; accepted: {', '.join(DISTRIBUTIONS)}", field="distribution")
    if tail not in ("max", "min"):
        raise ValueError("tail must be 'max' or 'min'")
    x = np.asarray(values, dtype=float)
    x = x[np.isfinite(x)]
    if x.size < MIN_FIT_YEARS:
        raise InputError(f"{x.size} annual values are too few to fit (need {MIN_FIT_YEARS})", "record")
    if tail == "min":
        x = -x
    dist = DISTRIBUTIONS[distribution]
    if np.ptp(x) == 0:
        # every year the same: a degenerate fit, no interval
        params = (float(x[0]), 1e-9) if distribution == "gumbel" else (0.0, float(x[0]), 1e-9)
        return ExtremeFit(distribution, tail, params, int(x.size), "none", ci_level)
    params = tuple(float(v) for v in dist.fit(x))
    if ci_method == "auto":
        ci_method = "pivot" if distribution == "gumbel" else "delta"
    if ci_method == "pivot" and distribution != "gumbel":
        raise InputError("the pivotal interval is for the Gumbel distribution; accepted for GEV: delta, bootstrap",
                         "ci_method")
    fit = ExtremeFit(distribution, tail, params, int(x.size), ci_method, ci_level)
    if ci_method == "pivot" and n_boot > 0:
        rng = np.random.default_rng(seed)
        fit.boot_params = _gumbel_fit_many(rng.gumbel(0.0, 1.0, size=(max(n_boot, 1000), x.size)))
    elif ci_method == "bootstrap" and n_boot > 0:
        rng = np.random.default_rng(seed)
        samples = np.vstack([dist.sample(rng, params, x.size) for _ in range(n_boot)]) \
            if distribution != "gumbel" else rng.gumbel(params[0], params[1], size=(n_boot, x.size))
        fit.boot_params = np.asarray(dist.fit_many(samples), dtype=float)
    elif ci_method == "delta":
        H = _numerical_hessian(lambda th: dist.nll(th, x), np.asarray(params))
        try:
            cov = np.linalg.inv(H)
        except np.linalg.LinAlgError:
            cov = None
        if cov is None or not np.all(np.isfinite(cov)) or np.any(np.diag(cov) < 0):
            fit.ci_method = "none"
        else:
            fit.covariance = cov
    elif ci_method not in ("none", "bootstrap", "pivot"):
        raise InputError(f"unknown interval method {ci_method!r}; accepted: auto, pivot, bootstrap, delta, none",
                         "ci_method")
    else:
        fit.ci_method = "none" if n_boot <= 0 else ci_method
    return fit


def plotting_positions(n: int):
    """Gringorten (1963) non-exceedance probabilities ``(i - 0.44) / (n + 0.12)``, i = 1..n."""
    i = np.arange(1, n + 1)
    return (i - 0.44) / (n + 0.12)


# --------------------------------------------------------------------------
