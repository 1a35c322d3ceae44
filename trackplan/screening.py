"""Risk-day screening of a temperature history: on which days would a section have been at risk?

For every day of a section's climate record, the daily maximum and minimum rail
temperature (:meth:`trackplan.assess.Assessor.daily`) are compared with the
neutral temperature and the track state of that day. The core is a set of pure
functions over per-day numpy arrays (:func:`neutral_by_day`,
:func:`track_state_by_day`, :func:`classify_heat`, :func:`screen_days`,
:func:`annual_counts`, :func:`annual_trend`); :class:`Screener` is the thin
layer that takes a :class:`~trackplan.sections.Section`, asks an
:class:`~trackplan.assess.Assessor` for the daily series and the stability
results (both cached), and summarises the days into a :class:`SectionScreen`.

Model, per day ``d``
--------------------
Neutral temperature
    ``T_N(d)`` is the section's recorded neutral temperature, replaced from the
    date of each ``destress`` or ``renewal`` event on by that event's neutral
    temperature (the new value applies on the event day itself: the work is
    done before the afternoon peak). The recorded value also applies to the
    days of the record *before* ``neutral_date``: a climate record is a sample
    of the weather the section must stand, and the question screening answers
    is "how often would this climate have put the section, as recorded, at
    risk?" (a replay, not a reconstruction of the section's past, whose
    earlier neutral temperature is unknown). Screening only from
    ``neutral_date`` on would leave most sections a few years of record, too
    short for counts per year or a trend. Each such result carries a note.
Drift
    The heat side uses ``T_N(d) - drift_allowance`` with the allowance applied
    in full from the first day of each neutral period: conservative, the same
    "current neutral estimate" as :mod:`trackplan.check`, and no time model of
    the drift is claimed. The cold side uses ``T_N(d)`` without drift, as
    :mod:`trackplan.check` does (a neutral temperature that has not fallen is
    the worse case in winter).
Track state
    Normally the section's own ballast state (``ballast`` in the section file,
    usually ``consolidated``), with the allowable rise ``a_own`` and the
    critical rise ``c_own`` of the stability analysis. A ``tamping``,
    ``ballast-work`` or ``renewal`` event on day ``e`` with ``R =
    recovery_days`` opens a disturbance window ``e <= d < e + R``: on the
    event day the ``disturbed`` values apply, and they recover linearly in
    time to the section's own state at the end of the window, through the
    stability analysis of each intermediate state at equal steps (for a
    consolidated section: ``disturbed`` at ``x = 0``, ``partial`` at ``x =
    0.5``, ``consolidated`` at ``x = 1``, with ``x = (d - e) / R``; allowable
    and critical rises are interpolated separately, piecewise linearly).
    ``recovery_days = 0`` means no reduction (e.g. the track was stabilised).
    Windows may not overlap (the section file refuses it). An event before
    the record start is applied (its neutral temperature, and the rest of its
    window); an event after the record end cannot be placed and is refused.
What-ifs
    ``warming_K`` shifts every daily rail maximum and minimum by the same
    amount: a simple what-if for a warmer (or, negative, cooler) climate, not a
    climate projection (it changes neither the spread of the days nor the
    sunshine). ``neutral_override_C`` replaces the neutral temperature on every
    day (the recorded value and every event's): "what if the section had been
    destressed to this value"; the drift allowance still applies on the heat
    side, because a neutral temperature set by destressing drifts like any
    other; disturbance windows still apply.

Levels
------
Heat, with the rise ``dT = T_rail,max - (T_N - drift)`` [K], the day's
allowable rise ``a`` and critical rise ``c`` (each day gets its highest level):

``watch``     ``dT >= f a`` with the watch fraction ``f`` (default 0.8, the same
              as :data:`trackplan.check.DEFAULT_WATCH_FRACTION`);
``restrict``  ``dT >= a``: a heat speed restriction would be advised under local
              rules (``check`` acts at ``dT > a``; the equality is immaterial);
``critical``  ``dT >= c``: the *lower* critical rise of a snap-through response
              (above it the track can jump to a buckled shape if disturbed). For
              a progressive response (no lower critical rise) the *upper*
              critical rise is used where the analysis gives one; otherwise the
              level is not available for that state (``critical_basis`` says
              which, and an interpolated threshold next to an undefined one is
              undefined too).

Cold (``cold``), at the day's minimum rail temperature with the undrifted
neutral: tension stress ``-E alpha (T_rail,min - T_N)`` beyond the section's
``tension_stress_limit``, or the pull-apart gap of a break ``P**2 / (E A r)``
(:func:`trackplan.thermal.pull_apart_gap`, with the longitudinal resistance per
rail ``r``) beyond ``gap_limit`` (strictly beyond, as in ``check``). The
equivalent rise limit, the most negative rise allowed, is
``-min(sigma_lim / (E alpha), sqrt(g_lim r / (E A)) / alpha)``
(:func:`cold_limit_rise_K`); it is what ``allowable_rise_K`` holds on a cold row.

Days without a rail maximum or minimum (gaps in the record) are not counted;
their number is reported as ``missing_days``.

Months, years and the trend
---------------------------
``months = (m1, m2)`` screens months ``m1`` to ``m2`` inclusive. The range may
wrap the year end (``(11, 2)``: November to February, for southern summers);
then the days are counted by *season*, labelled by the year the season starts
(November 2019 to February 2020 count in 2019). Without a wrap, or without
months, years are calendar years. A year is *complete* when at least 90 % of
its season's days have data; the trend is the least-squares slope
(as ``numpy.polyfit`` of degree 1) of the yearly counts over complete years, in days
per decade, with its standard error, given when at least
:data:`MIN_TREND_YEARS` complete years exist; a typical-year record (TMY) has
no trend.

References
----------
Esveld, C. (2001). *Modern Railway Track*, 2nd ed., MRT-Productions, ch. 7
(thermal force ``E A alpha dT`` and the break gap ``P**2 / (E A r)``).
Kerr, A. D. (1978). Analysis of thermal track buckling in the lateral plane.
Acta Mechanica 30, 17-50 (upper and lower critical rises of the equilibrium
curve; the lower one as the safe limit).
"""

from __future__ import annotations

import datetime as dt
import math
from dataclasses import dataclass, field

import numpy as np

from trackplan import notices, thermal
from trackplan.check import DEFAULT_WATCH_FRACTION
from trackplan.errors import InputError
from trackplan.seasons import month_list, station_months, winter_warnings

#: Heat levels, lowest first; their codes in the per-day arrays are 1, 2, 3 (0 = none).
LEVELS = ("watch", "restrict", "critical")
#: Level name of a cold day.
COLD_LEVEL = "cold"
#: Names of the flagged-day codes 0..3.
FLAG_NAMES = LEVELS + (COLD_LEVEL,)
#: Fewest complete years for a trend.
MIN_TREND_YEARS = 5
#: A year (season) is complete when this fraction of its days has data.
YEAR_MIN_COVERAGE = 0.9
#: Bounds of the what-if options.
WARMING_LIMIT_K = 10.0
NEUTRAL_RANGE_C = (-10.0, 60.0)

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
    by_stress = tension_stress_limit_Pa / (E_Pa * alpha_per_K)
    by_gap = math.sqrt(gap_limit_m * resistance_N_per_m / (E_Pa * area_m2)) / alpha_per_K
    return -min(by_stress, by_gap)


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


def screen_days(rail_max_C, rail_min_C, heat_neutral_C, cold_neutral_C, allowable_rise_K, critical_rise_K,
                E_Pa: float, area_m2: float, alpha_per_K: float, resistance_N_per_m: float, gap_limit_m: float,
                tension_stress_limit_Pa: float, watch_fraction: float = DEFAULT_WATCH_FRACTION) -> DayScreen:
    """Heat level and cold flag of every day.

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


# --------------------------------------------------------------------------
# Options (parsed from the command line)
# --------------------------------------------------------------------------


def parse_date(text: str, where: str) -> dt.date:
    """A date written ``YYYY-MM-DD``."""
    try:
        return dt.date.fromisoformat(str(text).strip())
    except ValueError:
        raise InputError(f"cannot read {text!r} as a date; write YYYY-MM-DD (e.g. 2019-06-14)", where) from None


def parse_months(text: str, where: str = "--months") -> tuple[int, int]:
    """A month range ``M1-M2`` (1-12, inclusive, may wrap: ``11-2``) or one month ``M``."""
    parts = str(text).strip().split("-")
    try:
        nums = [int(p) for p in parts]
    except ValueError:
        nums = []
    if len(nums) not in (1, 2) or any(not 1 <= m <= 12 for m in nums):
        raise InputError(f"cannot read {text!r} as a month range; write M1-M2 with months 1..12, e.g. 5-9 "
                         "(May to September) or 11-2 (November to February, across the year end)", where)
    return (nums[0], nums[-1])


@dataclass(frozen=True)
class ScreenOptions:
    """What to screen and the what-ifs (SI).

    Attributes
    ----------
    start, end : datetime.date or None
        First and last day screened (inclusive); ``None`` = the whole record.
    months : (int, int) or None
        Month range, inclusive, may wrap the year end.
    season : {"summer", "winter"} or None
        Instead of ``months``: the season at each station's hemisphere
        (:func:`trackplan.seasons.season_months`).
    warming_K : float
        Uniform shift of every daily rail maximum and minimum [K] (what-if).
    neutral_override_C : float or None
        Neutral temperature on every day (what-if "after destressing to this") [degC].
    watch_fraction : float
        ``watch`` from this fraction of the allowable rise.
    """

    start: dt.date | None = None
    end: dt.date | None = None
    months: tuple[int, int] | None = None
    warming_K: float = 0.0
    neutral_override_C: float | None = None
    watch_fraction: float = DEFAULT_WATCH_FRACTION
    season: str | None = None

    def validate(self) -> "ScreenOptions":
        from trackplan.seasons import SEASON_MONTHS

        if self.season is not None and self.season not in SEASON_MONTHS:
            raise InputError(f"unknown season {self.season!r}; accepted: {', '.join(SEASON_MONTHS)}", "--season")
        if self.season is not None and self.months is not None:
            raise InputError("give --season or --months, not both", "--season/--months")
        if self.start is not None and self.end is not None and self.start > self.end:
            raise InputError(f"the first day {self.start.isoformat()} is after the last day {self.end.isoformat()}",
                             field="from/to")
        if self.months is not None and any(not 1 <= m <= 12 for m in self.months):
            raise InputError(f"months {self.months} outside 1..12", field="months")
        if not math.isfinite(self.warming_K) or abs(self.warming_K) > WARMING_LIMIT_K:
            raise InputError(f"{self.warming_K:g} K is outside -{WARMING_LIMIT_K:g}..{WARMING_LIMIT_K:g} K "
                             "(a uniform shift of the record)", field="warming")
        if self.neutral_override_C is not None:
            lo, hi = NEUTRAL_RANGE_C
            if not lo <= self.neutral_override_C <= hi:
                raise InputError(f"{self.neutral_override_C:.1f} degC is outside {lo:g}..{hi:g} degC, the range "
                                 "of neutral temperatures in practice", field="neutral_override")
        if not (0.0 < self.watch_fraction < 1.0):
            raise InputError(f"{self.watch_fraction:g} is outside 0..1 (exclusive); e.g. 0.8", field="watch_fraction")
        return self


# --------------------------------------------------------------------------
# Results
# --------------------------------------------------------------------------


@dataclass(frozen=True)
class FlaggedDays:
    """Every flagged day of one section, in date order (heat before cold on the same day).

    ``level_code`` holds 0..3 for ``watch``, ``restrict``, ``critical``, ``cold``
    (:data:`FLAG_NAMES`; ``level`` gives the names); ``rail_temperature_C`` is
    the day's maximum (heat) or minimum (cold); ``neutral_temperature_C`` the
    drifted (heat) or undrifted (cold) neutral; ``rise_K`` their difference;
    ``allowable_rise_K`` the day's allowable rise (heat) or the cold limit as a
    (negative) rise (cold).
    """

    date: np.ndarray  # datetime64[D]
    level_code: np.ndarray  # int8 index into FLAG_NAMES
    rail_temperature_C: np.ndarray
    neutral_temperature_C: np.ndarray
    rise_K: np.ndarray
    allowable_rise_K: np.ndarray

    def __len__(self) -> int:
        return int(self.date.size)

    @property
    def level(self) -> np.ndarray:
        """Level names of the rows."""
        return np.asarray(FLAG_NAMES, dtype=object)[self.level_code]


@dataclass(frozen=True)
class Day:
    """One notable day (worst heat or cold day); ``side`` is ``heat`` or ``cold``."""

    date: dt.date
    side: str
    level: str | None
    rail_temperature_C: float
    neutral_temperature_C: float
    rise_K: float
    allowable_rise_K: float  # heat: the day's allowable rise; cold: the cold limit as a (negative) rise

    @property
    def margin_K(self) -> float:
        """Distance to the limit, negative beyond it [K]: allowable less actual rise (heat),
        actual rise less the cold limit (cold)."""
        if self.side == "cold":
            return self.rise_K - self.allowable_rise_K
        return self.allowable_rise_K - self.rise_K


@dataclass(frozen=True)
class SectionScreen:
    """Screening result of one section (SI; units in names)."""

    id: str
    name: str
    first_date: dt.date
    last_date: dt.date
    screened_days: int
    missing_days: int
    heat_days_by_level: dict  # level -> days whose highest level it is
    cold_days: int
    worst_day: Day | None  # smallest heat margin
    worst_days: list  # up to five Days, smallest heat margin first
    worst_cold_day: Day | None
    annual: AnnualCounts
    trend: Trend
    flagged: FlaggedDays
    allowable_rise_K: float  # own track state
    critical_rise_K: float  # own track state (NaN when undefined)
    critical_basis: str
    response: str | None
    heat_neutral_temperature_C: float  # last screened day's drifted neutral
    cold_neutral_temperature_C: float
    drift_allowance_K: float
    cold_limit_rise_K: float
    disturbed_days: int
    station: str
    months: list = field(default_factory=lambda: list(range(1, 13)))  # month numbers screened
    notes: list = field(default_factory=list)
    warnings: list = field(default_factory=list)
    climate_path: object = None  # pathlib.Path of the record
    inputs: dict = field(default_factory=dict)  # how the record was read: tz, time_step

    @property
    def complete_years(self) -> int:
        return int(self.annual.complete.sum())

    def days_per_year(self, level: str) -> float | None:
        """Mean days per complete year at ``level`` (a heat level or ``cold``); None without complete years."""
        ok = self.annual.complete
        if not ok.any():
            return None
        col = {"watch": self.annual.watch_days, "restrict": self.annual.restrict_days,
               "critical": self.annual.critical_days, "cold": self.annual.cold_days}[level]
        return float(col[ok].mean())


@dataclass
class ScreenResult:
    """Screening of a section file."""

    options: ScreenOptions
    sections: list  # SectionScreen, in file order
    problems: list  # InputError


def summarise_days(section_id: str, name: str, dates, years, season_days, days: DayScreen, rail_max_C,
                   rail_min_C, heat_neutral_C, cold_neutral_C, allowable_rise_K, cold_limit: float,
                   typical_year: bool = False, groups=None):
    """Counts, worst days, annual table, trend and flagged rows from per-day arrays.

    Returns a dict of the :class:`SectionScreen` fields that depend on the days.
    """
    dates = np.asarray(dates, dtype="datetime64[D]")
    n = dates.size
    heat_neutral_C = np.broadcast_to(np.asarray(heat_neutral_C, dtype=float), (n,))
    cold_neutral_C = np.broadcast_to(np.asarray(cold_neutral_C, dtype=float), (n,))
    allow = np.broadcast_to(np.asarray(allowable_rise_K, dtype=float), (n,))
    tmax = np.asarray(rail_max_C, dtype=float)
    tmin = np.asarray(rail_min_C, dtype=float)
    v = days.valid
    counts = np.bincount(days.heat_level[v].astype(np.int64), minlength=4)
    by_level = {lev: int(counts[i + 1]) for i, lev in enumerate(LEVELS)}

    def day_at(i, cold=False) -> Day:
        d = dates[i].astype(dt.date)
        if cold:
            return Day(d, "cold", COLD_LEVEL if days.cold[i] else None, float(tmin[i]), float(cold_neutral_C[i]),
                       float(days.cold_rise_K[i]), cold_limit)
        lv = int(days.heat_level[i])
        return Day(d, "heat", LEVELS[lv - 1] if lv else None, float(tmax[i]), float(heat_neutral_C[i]),
                   float(days.rise_K[i]), float(allow[i]))

    worst, worst_list, worst_cold = None, [], None
    if v.any():
        idx = np.flatnonzero(v)
        margin = allow[idx] - days.rise_K[idx]
        k = min(5, margin.size)
        part = np.argpartition(margin, k - 1)[:k] if margin.size > k else np.arange(margin.size)
        order = idx[part[np.argsort(margin[part], kind="stable")]]
        worst_list = [day_at(i) for i in order]
        worst = worst_list[0]
        worst_cold = day_at(idx[np.argmin(days.cold_rise_K[idx])], cold=True)

    hot = np.flatnonzero(days.heat_level > 0)
    cld = np.flatnonzero(days.cold)
    both = np.concatenate([hot, cld])
    is_cold = np.concatenate([np.zeros(hot.size, bool), np.ones(cld.size, bool)])
    order = np.argsort(both * 2 + is_cold, kind="stable")
    both, is_cold = both[order], is_cold[order]
    flagged = FlaggedDays(
        date=dates[both],
        level_code=np.where(is_cold, 3, days.heat_level[both] - 1).astype(np.int8),
        rail_temperature_C=np.where(is_cold, tmin[both], tmax[both]),
        neutral_temperature_C=np.where(is_cold, cold_neutral_C[both], heat_neutral_C[both]),
        rise_K=np.where(is_cold, days.cold_rise_K[both], days.rise_K[both]),
        allowable_rise_K=np.where(is_cold, cold_limit, allow[both]),
    )
    annual = annual_counts(years, v, days.heat_level, days.cold, season_days, groups)
    return dict(
        id=section_id,
        name=name,
        first_date=dates[0].astype(dt.date),
        last_date=dates[-1].astype(dt.date),
        screened_days=int(v.sum()),
        missing_days=int(n - v.sum()),
        heat_days_by_level=by_level,
        cold_days=int(days.cold.sum()),
        worst_day=worst,
        worst_days=worst_list,
        worst_cold_day=worst_cold,
        annual=annual,
        trend=annual_trend(annual, typical_year),
        flagged=flagged,
    )


# --------------------------------------------------------------------------
# Glue: sections and the Assessor
# --------------------------------------------------------------------------


@dataclass(frozen=True)
class _RecordView:
    """A daily series cut to the screening window (shared by every section on it)."""

    dates: np.ndarray  # datetime64[D]
    day: np.ndarray  # int64 days since epoch
    years: np.ndarray  # season years
    rail_max_C: np.ndarray  # warming applied
    rail_min_C: np.ndarray
    record_first: dt.date
    record_last: dt.date
    typical_year: bool
    station: str
    warnings: tuple
    inputs: dict  # how the record was read: tz, time_step
    groups: tuple  # numpy.unique(years, return_inverse=True)
    season_days: np.ndarray  # days of each unique year's season
    months: tuple | None = None  # month range screened (None: all)


def _critical_of(stab) -> tuple[float, str]:
    low = getattr(stab, "lower_critical_rise_K", None)
    if low is not None and math.isfinite(low):
        return float(low), "lower critical rise"
    up = getattr(stab, "upper_critical_rise_K", None)
    if up is not None and math.isfinite(up):
        return float(up), "upper critical rise (progressive response)"
    return math.nan, "none (the stability analysis gives no critical rise)"


class Screener:
    """Screen sections with an :class:`~trackplan.assess.Assessor` (one per run).

    The daily rail series come from ``assessor.daily`` (cached per record and
    orientation); each record's cut to the window is kept; stability results
    are kept per track and ballast state (key: every section field the track
    input is built from, see :meth:`_track_key`).
    """

    def __init__(self, assessor, options: ScreenOptions | None = None):
        self.assessor = assessor
        self.options = (options or ScreenOptions()).validate()
        self._views: dict = {}
        self._calendars: dict = {}  # keyed by the date index's length and ends (checked equal on a hit)
        self._stab: dict = {}
        self._resistance: dict = {}

    # -- caches ---------------------------------------------------------
    def _calendar(self, daily, where: str, months=None):
        """Window of a record's dates (shared by every orientation of the record)."""
        idx = daily.index
        ckey = (len(idx), idx[0] if len(idx) else None, idx[-1] if len(idx) else None, months)
        hit = self._calendars.get(ckey)
        if hit is not None and not (hit[0] is idx or hit[0].equals(idx)):
            hit = None
            ckey = ckey + (id(idx),)
        if hit is None and ckey not in self._calendars:
            o = self.options
            dates_all = np.asarray(idx.values, dtype="datetime64[D]")
            if dates_all.size == 0:
                raise InputError("the climate record has no days", f"{where} climate")
            first, last = dates_all[0].astype(dt.date), dates_all[-1].astype(dt.date)
            sel = np.ones(dates_all.size, dtype=bool)
            if o.start is not None:
                sel &= dates_all >= np.datetime64(o.start, "D")
            if o.end is not None:
                sel &= dates_all <= np.datetime64(o.end, "D")
            y, m = _ymd(dates_all)
            sel &= month_selection(m, months)
            if not sel.any():
                raise InputError(
                    f"nothing to screen: the climate record covers {first.isoformat()} to {last.isoformat()}"
                    + ("" if months is None else f", months {months[0]}-{months[1]}")
                    + "; widen --from/--to or --months", "--from/--to")
            sy = season_year(y[sel], m[sel], months)
            groups = np.unique(sy, return_inverse=True)
            self._calendars[ckey] = (idx, sel, dates_all[sel], (dates_all[sel] - _EPOCH).astype(np.int64), sy,
                                     groups, season_lengths(groups[0], months), first, last)
        return self._calendars[ckey][1:]

    def _view(self, section) -> _RecordView:
        daily, meta, key = self.assessor.daily(section)
        if key not in self._views:
            o = self.options
            where = f"{section.file.name} [sections.{section.id}]"
            lat = key[1] if len(key) > 1 and isinstance(key[1], float) else section.latitude_deg
            months = station_months(o.months, o.season, lat)
            sel, dates, day, sy, groups, season_days, first, last = self._calendar(daily, where, months)
            station = str(meta.get("station") or section.climate_path.stem)
            season_warn = () if o.season is not None else winter_warnings(months, lat, station)
            self._views[key] = _RecordView(
                dates=dates,
                day=day,
                years=sy,
                rail_max_C=daily["rail_max_C"].to_numpy(dtype=float)[sel] + o.warming_K,
                rail_min_C=daily["rail_min_C"].to_numpy(dtype=float)[sel] + o.warming_K,
                record_first=first,
                record_last=last,
                typical_year=bool(meta.get("typical_year")),
                station=station,
                warnings=tuple(meta.get("warnings", [])) + tuple(daily.attrs.get("warnings", [])) + season_warn,
                inputs={"tz": meta.get("tz"), "time_step": meta.get("time_step")},
                groups=groups,
                season_days=season_days,
                months=months,
            )
        return self._views[key]

    @staticmethod
    def _track_key(section, ballast: str) -> tuple:
        return (section.profile.name, section.profile.area_m2, section.steel.E_Pa, section.steel.alpha_per_K,
                section.sleeper, section.sleeper_spacing_m, section.shoulder, section.radius_m,
                section.misalignment_m, section.misalignment_length_m, section.stability_overrides, ballast)

    def stability(self, section, ballast: str):
        k = self._track_key(section, ballast)
        if k not in self._stab:
            self._stab[k] = self.assessor.stability(section, ballast)
        return self._stab[k]

    def resistance(self, section) -> float:
        k = self._track_key(section, section.ballast)
        if k not in self._resistance:
            self._resistance[k] = float(self.assessor.longitudinal_resistance(section))
        return self._resistance[k]

    # -- one section ----------------------------------------------------
    def screen(self, section) -> SectionScreen:
        """Screen one section; raises InputError for events the record cannot hold."""
        from trackplan.sections import BALLAST_STATES, DISTURBING_EVENTS, NEUTRAL_EVENTS

        o = self.options
        where = f"{section.file.name} [sections.{section.id}]"
        view = self._view(section)
        for ev in section.events:
            if ev.date > view.record_last:
                extra = (f" (the record is a typical year labelled {view.record_first.year}: dated events cannot "
                         "be placed in it; screen a copy of the section without events, and use "
                         "--neutral-override for a changed neutral temperature)") if view.typical_year else (
                         "; screening replays events on their dates inside the record: drop the event, use a "
                         "record that covers it, or --neutral-override for its neutral temperature")
                raise InputError(f"{ev.kind} event on {ev.date.isoformat()} is after the end of the climate record "
                                 f"({view.record_last.isoformat()}){extra}", f"{where} events")
        day = view.day
        notes = []
        if o.neutral_override_C is not None:
            neutral = np.full(day.shape, float(o.neutral_override_C))
            notes.append(f"what-if: neutral temperature {o.neutral_override_C:.1f} degC on every day "
                         f"(drift allowance {section.drift_allowance_K:.1f} K still applies on the heat side)")
        else:
            changes = [(day_number(ev.date), ev.neutral_temperature_C) for ev in section.events
                       if ev.kind in NEUTRAL_EVENTS and ev.neutral_temperature_C is not None]
            neutral = neutral_by_day(day, section.neutral_temperature_C, changes)
            nd = section.neutral_date
            first_change = min([c[0] for c in changes], default=None)
            if nd is not None and view.dates[0] < np.datetime64(nd, "D") and (
                    first_change is None or view.day[0] < first_change):
                notes.append(f"days before the neutral date {nd.isoformat()} are screened with the recorded "
                             f"neutral temperature {section.neutral_temperature_C:.1f} degC (a replay of the "
                             "climate on the section as recorded)")
        if o.warming_K:
            notes.append(f"what-if: rail temperatures shifted by {o.warming_K:+.1f} K on every day")

        own = section.ballast
        own_stab = self.stability(section, own)
        a_own = float(own_stab.allowable_rise_K)
        c_own, basis = _critical_of(own_stab)
        dist = [(day_number(ev.date), ev.recovery_days) for ev in section.events
                if ev.kind in DISTURBING_EVENTS and ev.recovery_days > 0]
        touching = [(e, r) for e, r in dist if e <= day[-1] and e + r > day[0]] if day.size else []
        states = list(reversed(BALLAST_STATES[BALLAST_STATES.index(own):]))  # disturbed ... own
        if touching and len(states) > 1:
            stabs = [self.stability(section, s) for s in states[:-1]] + [own_stab]
            a_knots = [float(s.allowable_rise_K) for s in stabs]
            c_knots = [_critical_of(s)[0] for s in stabs]
            allowable = track_state_by_day(day, a_knots, touching)
            critical = track_state_by_day(day, c_knots, touching)
            in_window = np.zeros(day.shape, dtype=bool)
            for e, r in touching:
                in_window |= (day >= e) & (day < e + r)
            disturbed_days = int(in_window.sum())
        else:
            allowable = np.full(day.shape, a_own)
            critical = np.full(day.shape, c_own)
            disturbed_days = 0

        st, A = section.steel, section.profile.area_m2
        r = self.resistance(section)
        heat_neutral = neutral - section.drift_allowance_K
        days = screen_days(view.rail_max_C, view.rail_min_C, heat_neutral, neutral, allowable, critical,
                           st.E_Pa, A, st.alpha_per_K, r, section.gap_limit_m, section.tension_stress_limit_Pa,
                           o.watch_fraction)
        cold_limit = cold_limit_rise_K(st.E_Pa, A, st.alpha_per_K, r, section.gap_limit_m,
                                       section.tension_stress_limit_Pa)
        summary = summarise_days(section.id, section.name, view.dates, view.years, view.season_days, days,
                                 view.rail_max_C, view.rail_min_C, heat_neutral, neutral, allowable, cold_limit,
                                 view.typical_year, view.groups)
        return SectionScreen(
            **summary,
            allowable_rise_K=a_own,
            critical_rise_K=c_own,
            critical_basis=basis,
            response=getattr(own_stab, "response", None),
            heat_neutral_temperature_C=float(heat_neutral[-1]),
            cold_neutral_temperature_C=float(neutral[-1]),
            drift_allowance_K=section.drift_allowance_K,
            cold_limit_rise_K=cold_limit,
            disturbed_days=disturbed_days,
            station=view.station,
            months=month_list(view.months),
            notes=notes,
            warnings=list(view.warnings),
            climate_path=section.climate_path,
            inputs=dict(view.inputs),
        )

    def screen_all(self, sections, progress=None, engine=None) -> ScreenResult:
        """Screen every section by climate record (on a Dask ``engine`` when large); problems collected."""
        from trackplan.sections import DISTURBING_EVENTS

        disturbed = [s for s in sections if any(ev.kind in DISTURBING_EVENTS for ev in s.events)]
        self.assessor.prepare_stability(sections)  # distinct tracks solved ahead, in parallel when many
        if disturbed:
            self.assessor.prepare_stability(disturbed, ballasts=("partial", "disturbed"))
        from trackplan.assess import map_record_groups, section_problem

        def work(indices):
            part = {}
            for i in indices:
                try:
                    part[i] = self.screen(sections[i])
                except Exception as exc:  # a problem of this section; the others go on
                    part[i] = section_problem(sections[i], exc)
            return part

        out = map_record_groups(work, sections, progress, engine)
        results = [out[i] for i in range(len(sections)) if isinstance(out.get(i), SectionScreen)]
        problems = [out[i] for i in sorted(out) if isinstance(out[i], InputError)]
        return ScreenResult(self.options, results, problems)


# --------------------------------------------------------------------------
# Tables for files and JSON (read the same objects as the terminal)
# --------------------------------------------------------------------------

FLAGGED_COLUMNS = ("section", "date", "level", "rail_temperature_C", "neutral_temperature_C", "rise_K",
                   "allowable_rise_K")


def flagged_frame(result: ScreenResult):
    """Every flagged day of every section (columns :data:`FLAGGED_COLUMNS`)."""
    import pandas as pd

    secs = result.sections
    if not secs:
        return pd.DataFrame(columns=list(FLAGGED_COLUMNS))
    n = [len(s.flagged) for s in secs]
    cat = lambda name: np.concatenate([getattr(s.flagged, name) for s in secs])
    ids = pd.Categorical.from_codes(np.repeat(np.arange(len(secs)), n), [s.id for s in secs])
    return pd.DataFrame({
        "section": ids,
        # datetime64 at midnight: written as YYYY-MM-DD
        "date": cat("date").astype("datetime64[s]"),
        "level": pd.Categorical.from_codes(cat("level_code"), list(FLAG_NAMES)),
        "rail_temperature_C": np.round(cat("rail_temperature_C"), 2),
        "neutral_temperature_C": np.round(cat("neutral_temperature_C"), 2),
        "rise_K": np.round(cat("rise_K"), 2),
        "allowable_rise_K": np.round(cat("allowable_rise_K"), 2),
    })


def annual_frame(result: ScreenResult):
    """Per-section, per-year counts (one row per section and year)."""
    import pandas as pd

    parts = []
    for s in result.sections:
        a = s.annual
        parts.append(pd.DataFrame({
            "section": np.full(a.year.size, s.id, dtype=object),
            "year": a.year,
            "season_days": a.season_days,
            "screened_days": a.screened_days,
            "missing_days": a.missing_days,
            "watch_days": a.watch_days,
            "restrict_days": a.restrict_days,
            "critical_days": a.critical_days,
            "cold_days": a.cold_days,
            "complete": a.complete,
        }))
    if not parts:
        return pd.DataFrame(columns=["section", "year", "season_days", "screened_days", "missing_days",
                                     "watch_days", "restrict_days", "critical_days", "cold_days", "complete"])
    return pd.concat(parts, ignore_index=True)


def _day_json(d: Day | None) -> dict | None:
    if d is None:
        return None
    # on the cold side the limit is a (negative) rise at which tension or the break gap reaches its limit
    limit_key = "cold_limit_rise_K" if d.side == "cold" else "allowable_rise_K"
    return {"date": d.date.isoformat(), "side": d.side, "level": d.level, "rail_temperature_C": d.rail_temperature_C,
            "neutral_temperature_C": d.neutral_temperature_C, "rise_K": d.rise_K,
            limit_key: d.allowable_rise_K, "margin_K": d.margin_K}


def section_json(s: SectionScreen) -> dict:
    """JSON object of one section (SI, units in key names)."""
    t = s.trend
    return {
        "id": s.id,
        "name": s.name,
        "station": s.station,
        "months": list(s.months),
        "first_date": s.first_date.isoformat(),
        "last_date": s.last_date.isoformat(),
        "screened_days": s.screened_days,
        "missing_days": s.missing_days,
        "complete_years": s.complete_years,
        "heat_days_by_level": dict(s.heat_days_by_level),
        "cold_days": s.cold_days,
        "days_per_year": {lev: s.days_per_year(lev) for lev in LEVELS + (COLD_LEVEL,)},
        "worst_day": _day_json(s.worst_day),
        "worst_cold_day": _day_json(s.worst_cold_day),
        "trend": {
            "heat_days_per_decade": t.heat_days_per_decade,
            "heat_days_per_decade_se": t.heat_days_per_decade_se,
            "restrict_days_per_decade": t.restrict_days_per_decade,
            "cold_days_per_decade": t.cold_days_per_decade,
            "years_used": t.years_used,
            "note": t.note,
        },
        "allowable_rise_K": s.allowable_rise_K,
        "critical_rise_K": s.critical_rise_K if math.isfinite(s.critical_rise_K) else None,
        "critical_basis": s.critical_basis,
        "response": s.response,
        "heat_neutral_temperature_C": s.heat_neutral_temperature_C,
        "cold_neutral_temperature_C": s.cold_neutral_temperature_C,
        "drift_allowance_K": s.drift_allowance_K,
        "cold_limit_rise_K": s.cold_limit_rise_K,
        "disturbed_days": s.disturbed_days,
        "annual": [
            {"year": int(s.annual.year[i]), "season_days": int(s.annual.season_days[i]),
             "screened_days": int(s.annual.screened_days[i]), "missing_days": int(s.annual.missing_days[i]),
             "watch_days": int(s.annual.watch_days[i]), "restrict_days": int(s.annual.restrict_days[i]),
             "critical_days": int(s.annual.critical_days[i]), "cold_days": int(s.annual.cold_days[i]),
             "complete": bool(s.annual.complete[i])}
            for i in range(s.annual.year.size)
        ],
        "notes": list(s.notes),
        "inputs": dict(s.inputs),
        "warnings": notices.to_json(s.warnings),
    }


def options_json(o: ScreenOptions) -> dict:
    return {
        "from_date": o.start.isoformat() if o.start else None,
        "to_date": o.end.isoformat() if o.end else None,
        "months": list(o.months) if o.months else None,
        "season": o.season,
        "warming_K": o.warming_K,
        "neutral_override_C": o.neutral_override_C,
        "watch_fraction": o.watch_fraction,
    }


def rank_key(s: SectionScreen) -> tuple:
    """Worst first: most critical, then restrict, then watch days; then the smallest worst-day margin."""
    h = s.heat_days_by_level
    m = s.worst_day.margin_K if s.worst_day is not None else math.inf
    return (-h["critical"], -h["restrict"], -h["watch"], -s.cold_days, m)
