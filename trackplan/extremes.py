"""Design extremes: annual rail temperature extremes, extreme-value fits, return levels.

Planning needs the rail temperature that is reached with a stated chance, not
the hottest day of one year (docs/methods/design-extremes.md). From daily rail extremes (see
:func:`trackplan.railtemp.daily_rail_extremes`) this module takes

* the annual maximum and minimum of each complete-enough year
  (:func:`annual_extremes`);
* an extreme-value fit of the annual maxima and of the negated annual minima,
  Gumbel or GEV (:data:`DISTRIBUTIONS`), by maximum likelihood;
* the return level for a return period ``T`` years, the ``1 - 1/T`` quantile
  of the fitted annual-maximum distribution (for minima: the value the annual
  minimum falls below once in ``T`` years on average);
* a confidence interval: parametric bootstrap with a fixed seed (Gumbel, fast
  and vectorised) or the delta method on the observed information (GEV, as in
  Coles 2001, 3.3.3; a bootstrap is available too).

Honest extremes for short records:

* the Gumbel interval is exact for a location-scale family: the pivot
  ``Z = (x_T_hat - x_T) / beta_hat`` has a distribution that does not depend on
  the true parameters, so it is simulated once from the standard Gumbel at the
  record's length (Lawless 2003, 5.1; the bootstrap-t of Efron & Tibshirani
  1993, ch. 12) and the interval is ``x_T_hat - z_(1-a/2) beta_hat .. x_T_hat -
  z_(a/2) beta_hat``. It carries the uncertainty of both parameters: four years
  give an interval many times wider than thirty;
* a T-year return level is fitted only from :func:`min_record_years` complete
  years or more (a planning choice: at least 10 years, and a return period
  no more than :data:`EXTRAPOLATION_FACTOR` times the record). Below it the
  design value is the observed extreme plus a stated allowance
  (:func:`short_record_allowance_K`, ``design_basis = "observed+allowance"``),
  unless ``allow_short`` asks for the fitted level; both carry the
  ``short_record`` warning;
* with fewer than :data:`MIN_FIT_YEARS` years, or for a typical-year file,
  the design values are the observed extremes (``design_basis = "observed"``);
* the printed interval always contains the design value: when the design
  value is the recorded extreme or the observed extreme plus allowance, the
  interval is widened to it, and a warning says so.

References
----------
Coles, S. (2001). An Introduction to Statistical Modeling of Extreme Values.
Springer, London. Ch. 3 (GEV for block maxima, return levels, delta method,
example 3.4.1 Port Pirie annual maximum sea levels).
Gumbel, E. J. (1958). Statistics of Extremes. Columbia University Press.
Jenkinson, A. F. (1955). The frequency distribution of the annual maximum (or
minimum) values of meteorological elements. QJRMS 81, 158-171 (GEV).
Efron, B., Tibshirani, R. J. (1993). An Introduction to the Bootstrap. Chapman
& Hall, ch. 13 (percentile intervals).
Lawless, J. F. (2003). Statistical Models and Methods for Lifetime Data, 2nd ed.
Wiley, section 5.1 (exact intervals in location-scale models from pivotal
quantities, by simulation).
Gringorten, I. I. (1963). A plotting rule for extreme probability paper.
Journal of Geophysical Research 68, 813-814 (plotting positions).
"""


from __future__ import annotations

# Fits and design values live in two modules; every name stays importable from here.
from trackplan.extremes_design import (  # noqa: F401
    _basis,
    _containing,
    design_extremes,
    DesignExtremes,
    min_record_years,
    short_record_allowance_K,
)
from trackplan.extremes_fit import (  # noqa: F401
    ALLOWANCE_SCALE_K,
    annual_extremes,
    Distribution,
    DISTRIBUTIONS,
    _EULER_GAMMA,
    EXTRAPOLATION_FACTOR,
    ExtremeFit,
    fit_extremes,
    _gev_fit,
    _gev_fit_many,
    _gev_nll,
    _gev_quantile,
    _gev_sample,
    _gumbel_fit,
    _gumbel_fit_many,
    gumbel_fit_ml,
    gumbel_moments,
    _gumbel_nll,
    _gumbel_quantile,
    gumbel_quantile,
    _gumbel_sample,
    MAX_RETURN_PERIOD_YEARS,
    MIN_FIT_YEARS,
    MONTH_MIN_COVERAGE,
    _numerical_hessian,
    plotting_positions,
    SHORT_RECORD_YEARS,
    YEAR_MIN_COVERAGE,
)

__all__ = [
    "DISTRIBUTIONS",
    "DesignExtremes",
    "Distribution",
    "ExtremeFit",
    "MIN_FIT_YEARS",
    "SHORT_RECORD_YEARS",
    "annual_extremes",
    "design_extremes",
    "fit_extremes",
    "gumbel_fit_ml",
    "gumbel_moments",
    "gumbel_quantile",
    "plotting_positions",
]
