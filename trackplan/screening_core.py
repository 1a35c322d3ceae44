"""The pure per-day core of risk-day screening: arrays in, arrays out (SI).

Neutral temperature and track state on every day, the heat level of a day
(watch / restrict / critical) and the cold flag, season selection, annual
counts and their trend. No files, no sections: the orchestration over a
section and a network is :class:`trackplan.screening.Screener`; the method is
described in :mod:`trackplan.screening` and docs/methods/screening.md.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from trackplan import ranges, thermal
from trackplan.check import DEFAULT_WATCH_FRACTION
from trackplan.errors import InputError


#: Heat levels, lowest first; their codes in the per-day arrays are 1, 2, 3 (0 = none).
LEVELS = ("watch", "restrict", "critical")
#: Level name of a cold day.
COLD_LEVEL = "cold"
#: Names of the flagged-day codes 0..3.
FLAG_NAMES = LEVELS + (COLD_LEVEL,)
#: Fewest complete years for a trend.
MIN_TREND_YEARS = 5
#: A year (season) is complete when this fraction of its days has data.
YEAR_MIN_COVERAGE = ranges.YEAR_MIN_COVERAGE
#: Bounds of the what-if options.
WARMING_LIMIT_K = ranges.bounds("warming")[1]
NEUTRAL_RANGE_C = ranges.bounds("neutral_override")

_EPOCH = np.datetime64("1970-01-01", "D")


# --------------------------------------------------------------------------
# Pure core: per-day arrays
# --------------------------------------------------------------------------


def day_number(date) -> int:
    """Days since 1970-01-01 of a date (the integer day used by the core)."""
    return int((np.datetime64(date, "D") - _EPOCH).astype(np.int64))


def neutral_by_day(day, recorded_neutral_C: float, changes=()) -> np.ndarray:
    """Neutral temperature on each day.

    Parameters
    ----------
    day : array of int
        Days since 1970-01-01 (:func:`day_number`), in any order.
    recorded_neutral_C : float
        Neutral temperature before the first change [degC].
    changes : sequence of (int, float)
        ``(day, neutral_C)`` of each destressing or renewal, in date order: the
        new value applies from that day on [degC].

    Returns
    -------
    numpy.ndarray
        Neutral temperature per day [degC].
    """
    day = np.asarray(day, dtype=np.int64)
    if not changes:
        return np.full(day.shape, float(recorded_neutral_C))
    cd = np.array([c[0] for c in changes], dtype=np.int64)
    if np.any(np.diff(cd) <= 0):
        raise InputError("neutral-setting events must be in date order, at most one per day", "events")
    values = np.array([recorded_neutral_C] + [float(c[1]) for c in changes])
    return values[np.searchsorted(cd, day, side="right")]


def track_state_by_day(day, knots, disturbances=()) -> np.ndarray:
    """A track-state quantity (allowable or critical rise) on each day.

    Parameters
    ----------
    day : array of int
        Days since 1970-01-01.
    knots : sequence of float
        The quantity at equal steps of recovery, from the ``disturbed`` state
        (first) to the section's own state (last) [K]; one value means no
        reduction. NaN (undefined) propagates to the neighbouring segments.
    disturbances : sequence of (int, int)
        ``(day, recovery_days)`` of each disturbing event. Windows must not
        overlap.

    Returns
    -------
    numpy.ndarray
        The own-state value outside the windows; inside ``e <= d < e + R`` the
        piecewise-linear interpolation of ``knots`` at ``x = (d - e) / R``.
    """
    day = np.asarray(day, dtype=np.int64)
    knots = np.asarray(knots, dtype=float).ravel()
    out = np.full(day.shape, knots[-1])
    if knots.size == 1:
        return out
    xs = np.linspace(0.0, 1.0, knots.size)
    windows = sorted((int(e), int(r)) for e, r in disturbances if r > 0)
    for (e1, r1), (e2, _) in zip(windows, windows[1:]):
        if e2 < e1 + r1:
            raise InputError(f"disturbance windows overlap (days {e1} + {r1} and {e2})", "events")
    for e, r in windows:
        m = (day >= e) & (day < e + r)
        if m.any():
            x = (day[m] - e) / r
            # np.interp does not propagate NaN knots reliably: interpolate segment by segment
            seg = np.minimum((x * (knots.size - 1)).astype(int), knots.size - 2)
            t = x * (knots.size - 1) - seg
            out[m] = knots[seg] * (1.0 - t) + knots[seg + 1] * t
    return out


def classify_heat(rise_K, allowable_rise_K, critical_rise_K, watch_fraction: float = DEFAULT_WATCH_FRACTION):
    """Heat level code per day: 0 none, 1 watch, 2 restrict, 3 critical (the highest reached).

    Parameters
    ----------
    rise_K : array
        Daily maximum rail temperature less the (drifted) neutral [K]; NaN gives 0.
    allowable_rise_K, critical_rise_K : array or float
        Thresholds of the day [K]; a NaN critical rise never triggers.
    watch_fraction : float
        ``watch`` from this fraction of the allowable rise.

    Returns
    -------
    numpy.ndarray of int8
    """
    rise = np.asarray(rise_K, dtype=float)
    allow = np.broadcast_to(np.asarray(allowable_rise_K, dtype=float), rise.shape)
    crit = np.broadcast_to(np.asarray(critical_rise_K, dtype=float), rise.shape)
    with np.errstate(invalid="ignore"):
        lvl = np.where(rise >= watch_fraction * allow, 1, 0).astype(np.int8)
        lvl[rise >= allow] = 2
        lvl[rise >= crit] = 3
    return lvl


def cold_limit_rise_K(E_Pa: float, area_m2: float, alpha_per_K: float, resistance_N_per_m: float,
                      gap_limit_m: float, tension_stress_limit_Pa: float) -> float:
    """The most negative rise [K] within both cold limits.

    Notes
    -----
    Stress: ``E alpha |dT| <= sigma_lim``. Gap: ``E A (alpha dT)**2 / r <= g_lim``,
    so ``|dT| <= sqrt(g_lim r / (E A)) / alpha``. The limit is minus the smaller.
    """
    cold = thermal.ColdSide(E_Pa=E_Pa, area_m2=area_m2, alpha_per_K=alpha_per_K,
                            resistance_N_per_m=resistance_N_per_m, gap_limit_m=gap_limit_m,
                            tension_stress_limit_Pa=tension_stress_limit_Pa)
    return -cold.limit_drop_K()


@dataclass(frozen=True)
class DayScreen:
    """Per-day results of :func:`screen_days` (arrays of one length)."""

    valid: np.ndarray  # bool: both rail extremes present
    rise_K: np.ndarray  # rail max - drifted neutral [K]
    heat_level: np.ndarray  # int8 0..3 (0 on invalid days)
    cold_rise_K: np.ndarray  # rail min - undrifted neutral [K]
    tension_stress_Pa: np.ndarray  # positive in tension [Pa]
    pull_apart_gap_m: np.ndarray  # [m]
    cold: np.ndarray  # bool (False on invalid days)


def screen_days(rail_max_C, rail_min_C, *, heat_neutral_C, cold_neutral_C, allowable_rise_K, critical_rise_K,
                E_Pa: float, area_m2: float, alpha_per_K: float, resistance_N_per_m: float, gap_limit_m: float,
                tension_stress_limit_Pa: float, watch_fraction: float = DEFAULT_WATCH_FRACTION) -> DayScreen:
    """Heat level and cold flag of every day (everything after the two series by keyword only).

    Parameters
    ----------
    rail_max_C, rail_min_C : array
        Daily maximum and minimum rail temperature [degC]; NaN = missing.
    heat_neutral_C : array or float
        Neutral temperature for the heat side, drift already deducted [degC].
    cold_neutral_C : array or float
        Neutral temperature for the cold side (no drift) [degC].
    allowable_rise_K, critical_rise_K : array or float
        Track-state thresholds of each day [K].
    E_Pa, area_m2, alpha_per_K : float
        Young's modulus [Pa], rail area [m**2], expansion coefficient [1/K].
    resistance_N_per_m : float
        Longitudinal resistance per rail [N/m].
    gap_limit_m : float
        Allowable break gap [m].
    tension_stress_limit_Pa : float
        Allowable thermal tension stress [Pa].
    watch_fraction : float
        Fraction of the allowable rise at which ``watch`` starts.

    Returns
    -------
    DayScreen

    Notes
    -----
    ``dT = T_max - T_N,heat``; level by :func:`classify_heat`. Cold:
    ``sigma = E alpha (T_min - T_N,cold)``, ``P = sigma A``, gap ``P**2 / (E A r)``
    where ``P < 0``; cold when ``-sigma > sigma_lim`` or ``gap > g_lim``.
    """
    tmax = np.asarray(rail_max_C, dtype=float)
    tmin = np.asarray(rail_min_C, dtype=float)
    valid = np.isfinite(tmax) & np.isfinite(tmin)
    rise = tmax - heat_neutral_C
    level = classify_heat(rise, allowable_rise_K, critical_rise_K, watch_fraction)
    level[~valid] = 0
    cold_rise = tmin - cold_neutral_C
    stress = thermal.thermal_stress(cold_rise, E_Pa, alpha_per_K)
    force = stress * area_m2
    with np.errstate(invalid="ignore"):
        gap = thermal.pull_apart_gap(np.where(valid, force, 0.0), E_Pa, area_m2, resistance_N_per_m)
        cold = valid & ((-stress > tension_stress_limit_Pa) | (gap > gap_limit_m))
    return DayScreen(valid, rise, level, cold_rise, -stress, gap, cold)


def month_selection(months_of_day, months: tuple[int, int] | None) -> np.ndarray:
    """Boolean mask of days inside the month range (inclusive, may wrap the year end)."""
    m = np.asarray(months_of_day)
    if months is None:
        return np.ones(m.shape, dtype=bool)
    a, b = months
    return (m >= a) & (m <= b) if a <= b else (m >= a) | (m <= b)


def season_year(years, months_of_day, months: tuple[int, int] | None) -> np.ndarray:
    """Year each day counts in: the calendar year, or for a wrapping month range the
    year its season starts (days in months up to the range's end belong to the
    season that started the year before)."""
    y = np.asarray(years, dtype=np.int64)
    if months is None or months[0] <= months[1]:
        return y
    return np.where(np.asarray(months_of_day) <= months[1], y - 1, y)


def _ymd(dates):
    d = np.asarray(dates, dtype="datetime64[D]")
    y = d.astype("datetime64[Y]").astype(np.int64) + 1970
    m = (d.astype("datetime64[M]").astype(np.int64) % 12) + 1
    return y, m


def season_lengths(years, months: tuple[int, int] | None) -> np.ndarray:
    """Number of calendar days in each year's season (leap years included)."""
    years = np.asarray(years, dtype=np.int64)
    if years.size == 0:
        return np.zeros(0, dtype=np.int64)
    lo, hi = int(years.min()), int(years.max())
    cal = np.arange(np.datetime64(f"{lo:04d}-01-01"), np.datetime64(f"{hi + 2:04d}-01-01"), dtype="datetime64[D]")
    y, m = _ymd(cal)
    sel = month_selection(m, months)
    sy = season_year(y, m, months)[sel]
    sy = sy[sy >= lo]  # January-February of the first year belong to the season before
    counts = np.bincount(sy - lo, minlength=hi - lo + 2)
    return counts[years - lo]


@dataclass(frozen=True)
class AnnualCounts:
    """Days per year (season) of one section; arrays of one length, one entry per year."""

    year: np.ndarray
    season_days: np.ndarray  # calendar days of the season
    screened_days: np.ndarray  # days with data
    missing_days: np.ndarray  # days inside the screened window without data
    watch_days: np.ndarray
    restrict_days: np.ndarray
    critical_days: np.ndarray
    cold_days: np.ndarray
    complete: np.ndarray  # bool: screened >= YEAR_MIN_COVERAGE * season days

    @property
    def heat_days(self) -> np.ndarray:
        """Days at watch or above."""
        return self.watch_days + self.restrict_days + self.critical_days


def annual_counts(years, valid, heat_level, cold, season_days_of_year=None, groups=None) -> AnnualCounts:
    """Count the levels per year.

    Parameters
    ----------
    years : array of int
        Year (season) of each screened day.
    valid : array of bool
        Day has data.
    heat_level : array of int
        Codes of :func:`classify_heat`.
    cold : array of bool
        Cold days.
    season_days_of_year : callable or array, optional
        ``years -> days in each year's season``, or those days for the sorted
        unique years (default: the days present).
    groups : (array, array), optional
        ``numpy.unique(years, return_inverse=True)``, when already known.

    Returns
    -------
    AnnualCounts
    """
    years = np.asarray(years, dtype=np.int64)
    valid = np.asarray(valid, dtype=bool)
    lvl = np.asarray(heat_level)
    cold = np.asarray(cold, dtype=bool)
    if years.size == 0:
        z = np.zeros(0, dtype=np.int64)
        return AnnualCounts(z, z, z, z, z, z, z, z, np.zeros(0, dtype=bool))
    uy, inv = groups if groups is not None else np.unique(years, return_inverse=True)
    n = uy.size

    def cnt(mask):
        return np.bincount(inv[mask], minlength=n).astype(np.int64)

    present = np.bincount(inv, minlength=n).astype(np.int64)
    screened = cnt(valid)
    if season_days_of_year is None:
        season = present
    elif callable(season_days_of_year):
        season = season_days_of_year(uy)
    else:
        season = season_days_of_year
    season = np.asarray(season, dtype=np.int64)
    return AnnualCounts(
        year=uy,
        season_days=season,
        screened_days=screened,
        missing_days=present - screened,
        watch_days=cnt(valid & (lvl == 1)),
        restrict_days=cnt(valid & (lvl == 2)),
        critical_days=cnt(valid & (lvl == 3)),
        cold_days=cnt(valid & cold),
        complete=screened >= YEAR_MIN_COVERAGE * season,
    )


@dataclass(frozen=True)
class Trend:
    """Least-squares trend of yearly counts over complete years (days per decade)."""

    heat_days_per_decade: float | None
    heat_days_per_decade_se: float | None
    restrict_days_per_decade: float | None
    cold_days_per_decade: float | None
    years_used: int
    note: str


def _slope(x, y):
    """Least-squares slope ``Sxy / Sxx`` (the degree-1 ``numpy.polyfit`` slope, in closed form) and its
    standard error ``sqrt(SSR / (n - 2) / Sxx)``, both per decade."""
    dx = x - x.mean()
    sxx = float(dx @ dx)
    b = float(dx @ (y - y.mean())) / sxx
    resid = y - y.mean() - b * dx
    se = math.sqrt(max(float(resid @ resid), 0.0) / (x.size - 2) / sxx) if x.size > 2 else None
    return b * 10.0, (se * 10.0 if se is not None else None)


def annual_trend(annual: AnnualCounts, typical_year: bool = False) -> Trend:
    """Least-squares slope of the yearly counts (as ``numpy.polyfit``, degree 1) in days per decade.

    Heat days are days at ``watch`` or above; restrict days at ``restrict`` or
    above. Only complete years are used; fewer than :data:`MIN_TREND_YEARS`
    (or a typical-year record) give no trend, with the reason in ``note``.
    """
    ok = annual.complete
    n = int(ok.sum())
    if typical_year:
        return Trend(None, None, None, None, n, "typical-year record (not a time series)")
    if n < MIN_TREND_YEARS:
        return Trend(None, None, None, None, n,
                     f"{n} complete year(s): a trend needs at least {MIN_TREND_YEARS}")
    x = annual.year[ok].astype(float)
    heat, se = _slope(x, annual.heat_days[ok].astype(float))
    restrict, _ = _slope(x, (annual.restrict_days + annual.critical_days)[ok].astype(float))
    cold, _ = _slope(x, annual.cold_days[ok].astype(float))
    return Trend(heat, se, restrict, cold, n,
                 f"least-squares slope over {n} complete years {int(x.min())}-{int(x.max())}")
