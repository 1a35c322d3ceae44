"""Design extremes of one record: the rail temperatures a plan uses, with their basis and warnings.

From daily rail extremes: the annual extremes, the fits of
:mod:`trackplan.extremes`, the return levels with their confidence intervals,
the allowance of a short record, and the observed extremes when the record is
too short to fit (docs/methods/design-extremes.md; the method, its limits and
references in the documentation of :mod:`trackplan.extremes`).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from trackplan.errors import InputError
from trackplan.extremes_fit import (
    _EULER_GAMMA,
    ALLOWANCE_SCALE_K,
    DISTRIBUTIONS,
    EXTRAPOLATION_FACTOR,
    MAX_RETURN_PERIOD_YEARS,
    MIN_FIT_YEARS,
    SHORT_RECORD_YEARS,
    YEAR_MIN_COVERAGE,
    ExtremeFit,
    annual_extremes,
    fit_extremes,
)
from trackplan import notices
from trackplan.notices import Notice


# Design extremes
# --------------------------------------------------------------------------


@dataclass
class DesignExtremes:
    """Design rail temperatures of a record and how they were obtained.

    Attributes
    ----------
    design_basis : str
        ``"gumbel"``, ``"gev"`` (fitted return levels), ``"observed"``
        (observed extremes of a very short or typical-year record) or
        ``"observed+allowance"`` (short record: observed extreme plus allowance).
    return_period_years : float
        Return period of the design values [years].
    design_max_rail_temperature_C, design_min_rail_temperature_C : float
        Design maximum and minimum rail temperature [degC].
    max_ci_C, min_ci_C : tuple of float or None
        Confidence interval of each design value [degC] (None for observed).
    max_air_temperature_C, min_air_temperature_C : float
        Highest and lowest daily air temperature over the years used [degC].
    years : int
        Number of years used.
    annual : pandas.DataFrame
        ``year``, ``max_rail_temperature_C``, ``min_rail_temperature_C``,
        ``max_air_temperature_C``, ``min_air_temperature_C``, ``days``.
    warnings : list of str
    distribution : str
        Distribution asked for.
    ci_level : float
        Confidence level of the intervals.
    observed_max_rail_temperature_C, observed_min_rail_temperature_C : float
        Observed extremes over the years used [degC].
    max_fit, min_fit : ExtremeFit or None
        The fits (for return-level curves).
    max_basis, min_basis : str
        What each design value is: ``"return level"``, ``"recorded extreme"`` (the
        record holds a value beyond the return level, taken instead), ``"recorded
        + allowance"`` (short record) or ``"observed extreme"`` (no fit).
    max_return_level_C, min_return_level_C : float
        The fitted return levels [degC] (NaN without a fit), printed beside a
        design value that is not the return level.
    """

    design_basis: str
    return_period_years: float
    design_max_rail_temperature_C: float
    design_min_rail_temperature_C: float
    max_ci_C: tuple | None
    min_ci_C: tuple | None
    max_air_temperature_C: float
    min_air_temperature_C: float
    years: int
    annual: object
    warnings: list = field(default_factory=list)
    distribution: str = "gumbel"
    ci_level: float = 0.95
    observed_max_rail_temperature_C: float = float("nan")
    observed_min_rail_temperature_C: float = float("nan")
    max_fit: ExtremeFit | None = field(default=None, repr=False)
    min_fit: ExtremeFit | None = field(default=None, repr=False)
    max_basis: str = "return level"
    min_basis: str = "return level"
    max_return_level_C: float = float("nan")
    min_return_level_C: float = float("nan")

    def return_levels(self, periods_years):
        """Return-level table for plotting: one row per return period.

        Columns ``return_period_years``, ``max_rail_temperature_C``,
        ``max_low_C``, ``max_high_C``, ``min_rail_temperature_C``,
        ``min_low_C``, ``min_high_C`` (NaN where there is no fit or interval).
        """
        import pandas as pd

        T = np.asarray(periods_years, dtype=float)
        out = {"return_period_years": T}
        for tail, fit in (("max", self.max_fit), ("min", self.min_fit)):
            nan = np.full(T.shape, np.nan)
            if fit is None:
                out[f"{tail}_rail_temperature_C"], out[f"{tail}_low_C"], out[f"{tail}_high_C"] = nan, nan, nan
                continue
            out[f"{tail}_rail_temperature_C"] = fit.return_level(T)
            ci = fit.interval(T)
            out[f"{tail}_low_C"], out[f"{tail}_high_C"] = (ci if ci is not None else (nan, nan))
        return pd.DataFrame(out)

    def as_json(self, station: str | None = None) -> dict:
        """The JSON object of the ``railtemp`` command (SI, units in the keys)."""
        annual = [
            {
                "year": int(r.year),
                "max_rail_temperature_C": float(r.max_rail_temperature_C),
                "min_rail_temperature_C": float(r.min_rail_temperature_C),
                "max_air_temperature_C": float(r.max_air_temperature_C),
                "min_air_temperature_C": float(r.min_air_temperature_C),
            }
            for r in self.annual.itertuples(index=False)
        ]
        return {
            "station": station,
            "years": int(self.years),
            "design_basis": self.design_basis,
            "design_max_basis": self.max_basis,
            "design_min_basis": self.min_basis,
            "max_return_level_C": self.max_return_level_C if math.isfinite(self.max_return_level_C) else None,
            "min_return_level_C": self.min_return_level_C if math.isfinite(self.min_return_level_C) else None,
            "return_period_years": float(self.return_period_years),
            "design_max_rail_temperature_C": float(self.design_max_rail_temperature_C),
            "design_min_rail_temperature_C": float(self.design_min_rail_temperature_C),
            "max_air_temperature_C": float(self.max_air_temperature_C),
            "min_air_temperature_C": float(self.min_air_temperature_C),
            "annual": annual,
            "warnings": notices.to_json(self.warnings),
        }


def min_record_years(return_period_years: float) -> int:
    """Complete years needed to fit a return level: ``max(SHORT_RECORD_YEARS, ceil(T / EXTRAPOLATION_FACTOR))``.

    A planning choice (not a published rule): 10 years for T up to 40, 13 for
    50, 25 for 100 years.
    """
    return max(SHORT_RECORD_YEARS, math.ceil(float(return_period_years) / EXTRAPOLATION_FACTOR))


def short_record_allowance_K(n_years: int, return_period_years: float, scale_K: float = 0.0) -> float:
    """Allowance [K] added to the observed extreme of a short record.

    Notes
    -----
    For a Gumbel variable of scale ``beta``, the expected largest of ``n``
    annual values lies ``beta (gamma + ln n)`` above the location and the
    ``T``-year level ``beta y_T`` above it, ``y_T = -ln(-ln(1 - 1/T))``
    (Gumbel 1958). The allowance is the difference::

        a = max(beta, ALLOWANCE_SCALE_K) * max(y_T - gamma - ln n, 0)

    with the fitted scale, but never below :data:`ALLOWANCE_SCALE_K` (a planning
    choice): 4 years and T = 50 give 1.94 scales, 3.9 K at 2 K.
    """
    y = -math.log(-math.log(1.0 - 1.0 / float(return_period_years)))
    return max(float(scale_K), ALLOWANCE_SCALE_K) * max(y - _EULER_GAMMA - math.log(n_years), 0.0)


def _basis(basis: str, value: float, level: float) -> str:
    """What a design value is, in words (see :class:`DesignExtremes`)."""
    if basis == "observed+allowance":
        return "recorded + allowance"
    return "return level" if value == level else "recorded extreme"


def _containing(ci, value: float, label: str, warnings: list):
    """The interval as a pair of floats, widened to contain the design value (with a warning)."""
    if ci is None:
        return None
    lo, hi = float(ci[0][0]), float(ci[1][0])
    if value > hi or value < lo:
        warnings.append(Notice(f"the design {label} {value:.1f} degC lies outside the interval of the fitted level "
                               f"({lo:.1f} to {hi:.1f} degC); the interval shown is widened to it",
                               "observed_extreme_used", "record"))
        lo, hi = min(lo, value), max(hi, value)
    return lo, hi


def design_extremes(daily, return_period_years: float = 50, distribution: str = "gumbel",
                    typical_year: bool = False, n_boot: int = 1000, seed: int = 0,
                    ci_level: float = 0.95, years=None, ci_method: str = "auto",
                    allow_short: bool = False) -> DesignExtremes:
    """Design maximum and minimum rail temperature of a record.

    Parameters
    ----------
    daily : pandas.DataFrame
        Daily rail extremes (:func:`trackplan.railtemp.daily_rail_extremes`):
        index of local dates; ``rail_max_C``, ``rail_min_C``, ``air_max_C``,
        ``air_min_C`` [degC]. Its ``attrs["warnings"]`` are carried over.
    return_period_years : float
        Return period [years], > 1 (e.g. 50: the level exceeded once in 50
        years on average).
    distribution : {"gumbel", "gev"}
        Extreme-value distribution (:data:`DISTRIBUTIONS`).
    typical_year : bool
        The record is a typical (synthetic) year: observed extremes, no fit.
    n_boot : int
        Bootstrap samples for the interval (Gumbel); 0 for none.
    seed : int
        Seed of the bootstrap (reproducible results).
    ci_level : float
        Two-sided confidence level of the intervals.
    years : iterable of int, optional
        Years the reader found complete (``meta["years"]``).
    ci_method : str
        See :func:`fit_extremes`.
    allow_short : bool
        Below :func:`min_record_years`, use the fitted return level rather than
        the observed extreme plus :func:`short_record_allowance_K`.

    Returns
    -------
    DesignExtremes

    Raises
    ------
    InputError
        Return period not above 1 year, unknown distribution, no usable year.
    """
    rp = float(return_period_years)
    if not math.isfinite(rp) or rp <= 1.0:
        raise InputError(f"return period must be more than 1 year, got {return_period_years!r}", field="return_period")
    if rp > MAX_RETURN_PERIOD_YEARS:
        raise InputError(f"return period {rp:g} years is beyond {MAX_RETURN_PERIOD_YEARS:g} years; no record of "
                         "decades supports such an extrapolation (design values use 50 years)", field="return_period")
    if distribution not in DISTRIBUTIONS:
        raise InputError(f"unknown distribution {distribution!r}; accepted: {', '.join(DISTRIBUTIONS)}", field="distribution")
    if not 0 < ci_level < 1:
        raise InputError(f"confidence level must be between 0 and 1, got {ci_level!r}", "ci_level")
    warnings = list(getattr(daily, "attrs", {}).get("warnings", []))
    annual, w = annual_extremes(daily, typical_year=typical_year, years=None if typical_year else years)
    warnings += w
    if annual.empty:
        raise InputError("no year of the record is complete enough for annual extremes "
                         f"(each needs {YEAR_MIN_COVERAGE:.0%} of its days with data)", "record")
    n = len(annual)
    obs_max = float(annual.max_rail_temperature_C.max())
    obs_min = float(annual.min_rail_temperature_C.min())
    air_max = float(annual.max_air_temperature_C.max())
    air_min = float(annual.min_air_temperature_C.min())
    common = dict(
        return_period_years=rp,
        max_air_temperature_C=air_max,
        min_air_temperature_C=air_min,
        years=n,
        annual=annual,
        distribution=distribution,
        ci_level=ci_level,
        observed_max_rail_temperature_C=obs_max,
        observed_min_rail_temperature_C=obs_min,
    )
    if typical_year or n < MIN_FIT_YEARS:
        why = ("a typical-year record stands for no particular year and cannot give a return level"
               if typical_year else f"{n} complete year(s) are too few to fit (need {MIN_FIT_YEARS})")
        warnings.append(Notice(f"design values are the observed extremes, not {rp:g}-year return levels: {why}",
                               "observed_extreme_used", "record"))
        if not typical_year:
            warnings.append(Notice(f"short record: {n} complete year(s); a {rp:g}-year level needs "
                                   f"{min_record_years(rp)}", "short_record", "record"))
        return DesignExtremes(design_basis="observed", design_max_rail_temperature_C=obs_max,
                              design_min_rail_temperature_C=obs_min, max_ci_C=None, min_ci_C=None,
                              warnings=warnings, max_basis="observed extreme", min_basis="observed extreme",
                              **common)
    need = min_record_years(rp)
    short = n < need
    if short:
        warnings.append(Notice(
            f"short record: only {n} complete years, fewer than the {need} needed for a {rp:g}-year level "
            f"(at least {SHORT_RECORD_YEARS}, and a return period at most {EXTRAPOLATION_FACTOR:g} times the "
            "record: a planning choice); "
            + ("the fitted level is used as asked (allow_short), with its wide interval" if allow_short else
               "the design values are the observed extremes plus an allowance (allow_short to use the fit)"),
            "short_record", "record"))
    if rp > EXTRAPOLATION_FACTOR * n and not short:
        warnings.append(Notice(f"the {rp:g}-year return period is more than four times the {n}-year record: "
                               "the fit is extrapolated far", "extrapolated", "record"))
    fmax = fit_extremes(annual.max_rail_temperature_C, distribution, "max", ci_method, n_boot, seed, ci_level)
    fmin = fit_extremes(annual.min_rail_temperature_C, distribution, "min", ci_method, n_boot, seed + 1, ci_level)
    dmax = rl_max = float(fmax.return_level(rp))
    dmin = rl_min = float(fmin.return_level(rp))
    cmax = fmax.interval(rp)
    cmin = fmin.interval(rp)
    basis = distribution
    if short and not allow_short:
        amax = short_record_allowance_K(n, rp, fmax.params[-1])
        amin = short_record_allowance_K(n, rp, fmin.params[-1])
        dmax, dmin = obs_max + amax, obs_min - amin
        basis = "observed+allowance"
        warnings.append(Notice(
            f"design maximum {dmax:.1f} degC = recorded {obs_max:.1f} degC + allowance {amax:.1f} K; design minimum "
            f"{dmin:.1f} degC = recorded {obs_min:.1f} degC - {amin:.1f} K (allowance: Gumbel scale, at least "
            f"{ALLOWANCE_SCALE_K:g} K, times the distance in reduced variate from the expected {n}-year maximum to "
            f"the {rp:g}-year level)", "observed_extreme_used", "record"))
    else:
        # A design value is never milder than what the record already shows (about 45 % of 30-year
        # records hold a year beyond their own 50-year level): planning takes the recorded extreme then.
        if obs_max > dmax:
            warnings.append(Notice(
                f"the highest rail temperature in the record, {obs_max:.1f} degC, is above the {rp:g}-year "
                f"return level {dmax:.1f} degC: the design maximum is the recorded value",
                "observed_extreme_used", "record"))
            dmax = obs_max
        if obs_min < dmin:
            warnings.append(Notice(
                f"the lowest rail temperature in the record, {obs_min:.1f} degC, is below the {rp:g}-year "
                f"return level {dmin:.1f} degC: the design minimum is the recorded value",
                "observed_extreme_used", "record"))
            dmin = obs_min
    if distribution == "gev":
        for fit, label in ((fmax, "maxima"), (fmin, "minima")):
            xi = fit.params[0]
            if xi > 0.3:
                warnings.append(Notice(f"GEV fit of the annual {label} has a heavy tail (shape {xi:.2f}); "
                                       "return levels grow fast with the return period", "heavy_tail", "record"))
    cmax = _containing(cmax, dmax, "maximum", warnings)
    cmin = _containing(cmin, dmin, "minimum", warnings)
    return DesignExtremes(
        design_basis=basis,
        design_max_rail_temperature_C=dmax,
        design_min_rail_temperature_C=dmin,
        max_ci_C=cmax,
        min_ci_C=cmin,
        warnings=warnings,
        max_fit=fmax,
        min_fit=fmin,
        max_basis=_basis(basis, dmax, rl_max),
        min_basis=_basis(basis, dmin, rl_min),
        max_return_level_C=rl_max,
        min_return_level_C=rl_min,
        **common,
    )
