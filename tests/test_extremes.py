"""Tests of the design extremes (trackplan.extremes)."""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest
from scipy import stats

from trackplan import extremes as ex
from trackplan.errors import InputError

# Annual maximum sea levels [m] at Port Pirie, South Australia, 1923-1987: the data of
# Coles (2001), An Introduction to Statistical Modeling of Extreme Values, example 3.4.1
# (as distributed with the book's R package ismev, dataset "portpirie").
PORT_PIRIE = np.array([
    4.03, 3.83, 3.65, 3.88, 4.01, 4.08, 4.18, 3.80, 4.36, 3.96, 3.98, 4.69, 3.85, 3.96, 3.85, 3.93,
    3.75, 3.63, 3.57, 4.25, 3.97, 4.05, 4.24, 4.22, 3.73, 4.37, 4.06, 3.71, 3.96, 4.06, 4.55, 3.79,
    3.89, 4.11, 3.85, 3.86, 3.86, 4.21, 4.01, 4.11, 4.24, 3.96, 4.21, 3.74, 3.85, 3.88, 3.66, 4.11,
    3.71, 4.18, 3.90, 3.78, 3.91, 3.72, 4.00, 3.66, 3.62, 4.33, 4.55, 3.75, 4.08, 3.90, 3.88, 3.94,
    4.33,
])


def test_port_pirie_gev_parameters_coles_3_4_1():
    """Coles (2001) example 3.4.1, p. 59: GEV maximum likelihood mu = 3.87, sigma = 0.198,
    xi = -0.050, to the two or three digits printed."""
    assert PORT_PIRIE.size == 65
    fit = ex.fit_extremes(PORT_PIRIE, "gev")
    xi, mu, sigma = fit.params
    assert mu == pytest.approx(3.87, abs=0.005)
    assert sigma == pytest.approx(0.198, abs=0.0005)
    assert xi == pytest.approx(-0.050, abs=0.0015)
    # variance-covariance matrix of (mu, sigma, xi), Coles p. 59
    cov = fit.covariance  # order (xi, mu, sigma)
    assert cov[1, 1] == pytest.approx(0.000780, rel=0.02)
    assert cov[2, 2] == pytest.approx(0.000410, rel=0.02)
    assert cov[0, 0] == pytest.approx(0.00965, rel=0.02)
    assert cov[0, 1] == pytest.approx(-0.00107, rel=0.03)


@pytest.mark.parametrize("T,level,lo,hi", [(10, 4.30, 4.19, 4.41), (100, 4.69, 4.38, 5.00)])
def test_port_pirie_gev_return_levels_coles_3_4_1(T, level, lo, hi):
    """Coles (2001) example 3.4.1, p. 60: 10-year return level 4.30 m, 95 % interval
    [4.19, 4.41]; 100-year 4.69 m, [4.38, 5.00] (delta method), to the printed 0.01 m."""
    fit = ex.fit_extremes(PORT_PIRIE, "gev", ci_method="delta", ci_level=0.95)
    assert float(fit.return_level(T)) == pytest.approx(level, abs=0.006)
    (l,), (h,) = fit.interval(T)
    assert l == pytest.approx(lo, abs=0.006)
    assert h == pytest.approx(hi, abs=0.006)


def test_gumbel_ml_agrees_with_scipy_and_closed_form():
    """Our vectorised Gumbel ML against scipy.stats.gumbel_r.fit (reference library) on the
    Port Pirie data, and the return level against the closed form
    x_T = mu - beta ln(-ln(1 - 1/T)) (Coles 2001, eq. 3.4 with xi = 0). The Gumbel ML
    estimates Coles gives for these data, mu = 3.87, sigma = 0.195, are written from memory."""
    mu, beta = ex.gumbel_fit_ml(PORT_PIRIE)
    mu_s, beta_s = stats.gumbel_r.fit(PORT_PIRIE)
    assert mu == pytest.approx(mu_s, abs=1e-8)
    assert beta == pytest.approx(beta_s, abs=1e-8)
    assert mu == pytest.approx(3.87, abs=0.005) and beta == pytest.approx(0.195, abs=0.001)  # (from memory)
    fit = ex.fit_extremes(PORT_PIRIE, "gumbel")
    for T in (2, 10, 50, 100):
        closed = mu - beta * math.log(-math.log(1 - 1 / T))
        assert float(fit.return_level(T)) == pytest.approx(closed, abs=1e-10)
        assert float(fit.return_level(T)) == pytest.approx(stats.gumbel_r.ppf(1 - 1 / T, mu_s, beta_s), abs=1e-8)


def test_gumbel_ml_vectorised_rows():
    rng = np.random.default_rng(5)
    X = rng.gumbel(40.0, 3.0, size=(50, 25))
    mu, beta = ex.gumbel_fit_ml(X)
    for i in range(0, 50, 7):
        m, b = stats.gumbel_r.fit(X[i])
        assert mu[i] == pytest.approx(m, abs=1e-7) and beta[i] == pytest.approx(b, abs=1e-7)


def test_gumbel_moments_chow_example():
    """Method of moments, Chow, Maidment & Mays (1988), Applied Hydrology, example 12.2.1
    (annual maximum 10-minute rainfall, Chicago 1913-1947): mean 0.649 in, standard
    deviation 0.177 in give alpha = 0.138 in, u = 0.569 in and a 5-year value of 0.78 in
    (figures from memory)."""
    u, alpha = ex.gumbel_moments(0.649, 0.177)
    assert alpha == pytest.approx(0.138, abs=0.0006)
    assert u == pytest.approx(0.569, abs=0.0006)
    assert float(ex.gumbel_quantile(1 - 1 / 5, u, alpha)) == pytest.approx(0.78, abs=0.005)


def test_bootstrap_interval_reproducible_and_covers():
    """Fixed seed: same interval twice. Coverage of the 90 % parametric-bootstrap interval of
    the 50-year level over 200 simulated 30-year Gumbel records lies near 90 % (the
    percentile interval under-covers a little for short samples: Efron & Tibshirani 1993,
    ch. 13), so 0.78-0.97."""
    a = ex.fit_extremes(PORT_PIRIE, "gumbel", n_boot=300, seed=7)
    b = ex.fit_extremes(PORT_PIRIE, "gumbel", n_boot=300, seed=7)
    assert np.array_equal(a.interval(50)[0], b.interval(50)[0])
    rng = np.random.default_rng(11)
    mu, beta, T = 50.0, 2.5, 50
    truth = mu - beta * math.log(-math.log(1 - 1 / T))
    hits = 0
    for k in range(200):
        fit = ex.fit_extremes(rng.gumbel(mu, beta, 30), "gumbel", n_boot=200, seed=k, ci_level=0.9)
        (lo,), (hi,) = fit.interval(T)
        hits += lo <= truth <= hi
    assert 0.78 <= hits / 200 <= 0.97


def test_minima_fitted_as_negated_maxima():
    rng = np.random.default_rng(2)
    mins = -rng.gumbel(20.0, 3.0, 40)  # annual minima around -20
    fit = ex.fit_extremes(mins, "gumbel", tail="min")
    mu, beta = stats.gumbel_r.fit(-mins)
    assert float(fit.return_level(50)) == pytest.approx(-stats.gumbel_r.ppf(0.98, mu, beta), abs=1e-7)
    (lo,), (hi,) = fit.interval(50)
    assert lo < float(fit.return_level(50)) < hi
    assert float(fit.return_level(50)) < mins.min() + 3.0  # a 50-year low lies near or below the 40-year record low


def test_gev_bootstrap_available():
    fit = ex.fit_extremes(PORT_PIRIE, "gev", ci_method="bootstrap", n_boot=30, seed=1)
    (lo,), (hi,) = fit.interval(100)
    assert lo < float(fit.return_level(100)) < hi


# --------------------------------------------------------------------------
# Annual extremes and design values
# --------------------------------------------------------------------------


def _daily(years=30, seed=0, start=1991):
    rng = np.random.default_rng(seed)
    idx = pd.date_range(f"{start}-01-01", f"{start + years - 1}-12-31", freq="D", name="date")
    doy = idx.day_of_year.to_numpy()
    air_max = 20 + 12 * np.sin(2 * np.pi * (doy - 110) / 365) + rng.normal(0, 3, len(idx))
    air_min = air_max - 10 - rng.uniform(0, 4, len(idx))
    return pd.DataFrame({"rail_max_C": air_max + 15, "rail_min_C": air_min - 1, "air_max_C": air_max,
                         "air_min_C": air_min}, index=idx)


def test_annual_extremes_values_and_incomplete_year():
    d = _daily(years=5)
    d.loc["1993-06-01":"1993-07-31"] = np.nan  # two summer months missing
    annual, warnings = ex.annual_extremes(d)
    assert list(annual.year) == [1991, 1992, 1994, 1995]
    assert any("1993" in w for w in warnings)
    y91 = d.loc["1991"]
    row = annual.iloc[0]
    assert row.max_rail_temperature_C == pytest.approx(y91.rail_max_C.max())
    assert row.min_rail_temperature_C == pytest.approx(y91.rail_min_C.min())
    assert row.max_air_temperature_C == pytest.approx(y91.air_max_C.max())
    assert row.days == 365


def test_design_extremes_gumbel_30_years():
    d = _daily(years=30)
    de = ex.design_extremes(d, 50, "gumbel", n_boot=200)
    assert de.design_basis == "gumbel" and de.years == 30
    mu, beta = stats.gumbel_r.fit(de.annual.max_rail_temperature_C)
    level_max = stats.gumbel_r.ppf(0.98, mu, beta)  # scipy's own ML fit and quantile (reference library)
    assert float(de.max_fit.return_level(50)) == pytest.approx(level_max, abs=1e-6)
    # the design value is never milder than the record: max(return level, recorded maximum)
    assert de.design_max_rail_temperature_C == pytest.approx(max(level_max, de.annual.max_rail_temperature_C.max()))
    lo, hi = de.max_ci_C
    assert lo < level_max < hi
    level_min = float(de.min_fit.return_level(50))
    lo, hi = de.min_ci_C
    assert lo < level_min < hi
    assert de.design_min_rail_temperature_C == pytest.approx(min(level_min, de.annual.min_rail_temperature_C.min()))
    assert de.design_min_rail_temperature_C < de.annual.min_rail_temperature_C.median()
    assert not any("short" in w for w in de.warnings)
    js = de.as_json("Somewhere")
    assert set(js) == {"station", "years", "design_basis", "return_period_years", "design_max_rail_temperature_C",
                       "design_min_rail_temperature_C", "max_air_temperature_C", "min_air_temperature_C", "annual",
                       "warnings", "design_max_basis", "design_min_basis", "max_return_level_C", "min_return_level_C"}
    assert set(js["annual"][0]) == {"year", "max_rail_temperature_C", "min_rail_temperature_C",
                                    "max_air_temperature_C", "min_air_temperature_C"}
    rl = de.return_levels([2, 50, 100])
    assert rl.max_rail_temperature_C.is_monotonic_increasing
    assert rl.min_rail_temperature_C.is_monotonic_decreasing
    assert rl.max_rail_temperature_C.iloc[1] == pytest.approx(level_max)


def test_design_extremes_gev():
    de = ex.design_extremes(_daily(years=30, seed=3), 50, "gev")
    assert de.design_basis == "gev" and de.max_ci_C is not None


def test_short_record_warns():
    # 6 years < min_record_years(50) = 13: observed extreme plus allowance, unless allow_short
    d = _daily(years=6)
    de = ex.design_extremes(d, 50)
    assert ex.min_record_years(50) == 13 and ex.min_record_years(20) == 10 and ex.min_record_years(100) == 25
    assert de.design_basis == "observed+allowance"
    assert any("only 6 complete years" in w for w in de.warnings)
    assert "short_record" in [w.code for w in de.warnings]
    a = ex.short_record_allowance_K(6, 50, de.max_fit.params[1])
    assert de.design_max_rail_temperature_C == pytest.approx(de.observed_max_rail_temperature_C + a)
    lo, hi = de.max_ci_C
    assert lo <= de.design_max_rail_temperature_C <= hi
    fit = ex.design_extremes(d, 50, allow_short=True)
    assert fit.design_basis == "gumbel" and "short_record" in [w.code for w in fit.warnings]


def test_short_record_allowance_formula():
    # Gumbel (1958): expected largest of n standard Gumbel values is gamma + ln n; the T-year level is
    # y_T = -ln(-ln(1 - 1/T)). 4 years, T = 50: 3.9019 - 0.5772 - 1.3863 = 1.9384 scales.
    assert ex.short_record_allowance_K(4, 50, 1.0) == pytest.approx(2.0 * 1.93843, abs=1e-4)
    assert ex.short_record_allowance_K(4, 50, 3.0) == pytest.approx(3.0 * 1.93843, abs=1e-4)
    assert ex.short_record_allowance_K(200, 50, 3.0) == 0.0


def test_four_year_interval_much_wider_than_thirty_and_contains_design():
    # The same synthetic climate (seasonal cycle plus daily noise) for 4 and for 30 years: the exact pivotal
    # interval of the 50-year level (Lawless 2003, 5.1) carries the uncertainty of the scale too, so
    # four years give an interval several times wider (the width scales roughly as 1/sqrt(n) and, for
    # very small n, with the heavy tail of 1 / beta_hat).
    widths4, widths30 = [], []
    for seed in range(5):
        d4 = _daily(years=4, seed=seed)
        d30 = _daily(years=30, seed=seed)
        for d, widths in ((d4, widths4), (d30, widths30)):
            de = ex.design_extremes(d, 50, "gumbel", allow_short=True)
            lo, hi = de.max_ci_C
            assert lo <= de.design_max_rail_temperature_C <= hi
            widths.append(hi - lo)
            short = ex.design_extremes(d, 50, "gumbel")
            lo, hi = short.max_ci_C
            assert lo <= short.design_max_rail_temperature_C <= hi
            lo, hi = short.min_ci_C
            assert lo <= short.design_min_rail_temperature_C <= hi
    assert np.median(widths4) > 3.0 * np.median(widths30)


def test_pivot_interval_coverage_four_years():
    """The pivotal interval is exact for the Gumbel: over 300 simulated 4-year records its 90 % interval
    of the 50-year level covers the truth about 90 % of the time (Monte Carlo: 0.85-0.95), where the
    percentile bootstrap from the fitted parameters covers far less."""
    rng = np.random.default_rng(5)
    mu, beta, T = 50.0, 2.5, 50
    truth = mu - beta * math.log(-math.log(1 - 1 / T))
    hits_p = hits_b = 0
    for k in range(300):
        x = rng.gumbel(mu, beta, 4)
        (lo,), (hi,) = ex.fit_extremes(x, "gumbel", n_boot=1000, seed=k, ci_level=0.9).interval(T)
        hits_p += lo <= truth <= hi
        (lo,), (hi,) = ex.fit_extremes(x, "gumbel", ci_method="bootstrap", n_boot=200, seed=k,
                                       ci_level=0.9).interval(T)
        hits_b += lo <= truth <= hi
    assert 0.85 <= hits_p / 300 <= 0.95
    assert hits_b / 300 < 0.8


def test_under_three_years_and_typical_year_use_observed():
    d = _daily(years=2)
    de = ex.design_extremes(d, 50)
    assert de.design_basis == "observed" and de.max_ci_C is None
    assert de.design_max_rail_temperature_C == pytest.approx(d.rail_max_C.max())
    assert de.design_min_rail_temperature_C == pytest.approx(d.rail_min_C.min())
    assert any("observed extremes" in w for w in de.warnings)
    t = ex.design_extremes(_daily(years=1), 50, typical_year=True)
    assert t.design_basis == "observed" and t.years == 1
    assert any("typical-year" in w for w in t.warnings)


def test_years_from_reader_restrict():
    d = _daily(years=12)
    de = ex.design_extremes(d, 50, years=list(range(1991, 2001)))
    assert de.years == 10
    assert any("2001" in w for w in de.warnings)


def test_bad_inputs():
    d = _daily(years=5)
    with pytest.raises(InputError, match="^return_period"):
        ex.design_extremes(d, 1.0)
    with pytest.raises(InputError, match="accepted: gumbel, gev"):
        ex.design_extremes(d, 50, "weibull")
    empty = d.copy()
    empty[:] = np.nan
    with pytest.raises(InputError, match="no year"):
        ex.design_extremes(empty, 50)


def test_plotting_positions_gringorten():
    """Gringorten (1963): (i - 0.44)/(n + 0.12)."""
    p = ex.plotting_positions(10)
    assert p[0] == pytest.approx(0.56 / 10.12) and p[-1] == pytest.approx(9.56 / 10.12)


def test_design_never_milder_than_the_record():
    # One year far colder and hotter than the rest: its extremes lie beyond the 50-year levels the
    # other 29 years imply, so the design values are the recorded ones, with a warning each.
    d = _daily(years=30)
    d.loc["2005-01-15", "rail_min_C"] = -60.0
    d.loc["2005-07-15", "rail_max_C"] = 95.0
    de = ex.design_extremes(d, 50, "gumbel", n_boot=50)
    assert float(de.min_fit.return_level(50)) > -60.0 and float(de.max_fit.return_level(50)) < 95.0
    assert de.design_min_rail_temperature_C == -60.0 and de.design_max_rail_temperature_C == 95.0
    assert sum("is the recorded value" in w for w in de.warnings) == 2
    # the printed intervals are widened to the recorded values: a design value is never outside its interval
    assert de.max_ci_C[0] <= 95.0 <= de.max_ci_C[1] and de.min_ci_C[0] <= -60.0 <= de.min_ci_C[1]
    # and each design value says what it is, with the return level it replaced
    assert de.max_basis == de.min_basis == "recorded extreme"
    assert de.max_return_level_C == pytest.approx(float(de.max_fit.return_level(50)))
    j = de.as_json()
    assert j["design_max_basis"] == "recorded extreme" and j["max_return_level_C"] < 95.0
    plain = ex.design_extremes(_daily(years=30, seed=1), 50, "gumbel", n_boot=50)  # no year beyond its levels
    assert plain.max_basis == "return level" and plain.design_max_rail_temperature_C == plain.max_return_level_C
