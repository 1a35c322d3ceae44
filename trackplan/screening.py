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

from trackplan.check import DEFAULT_WATCH_FRACTION  # noqa: F401  (importable from here)
from trackplan import notices
from trackplan.errors import InputError, TrackplanError, option_ref
from trackplan.seasons import month_list, station_months, winter_warnings

# The per-day core and the tables live apart; every name stays importable from here.

from trackplan.screening_core import (  # noqa: F401
    annual_counts,
    annual_trend,
    AnnualCounts,
    classify_heat,
    COLD_LEVEL,
    cold_limit_rise_K,
    day_number,
    DayScreen,
    _EPOCH,
    FLAG_NAMES,
    LEVELS,
    MIN_TREND_YEARS,
    month_selection,
    neutral_by_day,
    NEUTRAL_RANGE_C,
    screen_days,
    season_lengths,
    season_year,
    _slope,
    track_state_by_day,
    Trend,
    WARMING_LIMIT_K,
    YEAR_MIN_COVERAGE,
    _ymd,
)
from trackplan.screening_tables import (  # noqa: F401
    annual_frame,
    _day_json,
    FLAGGED_COLUMNS,
    flagged_frame,
    options_json,
    rank_key,
    section_json,
)


# --------------------------------------------------------------------------
# Options (parsed from the command line)
# --------------------------------------------------------------------------


def parse_date(text: str, where: str) -> dt.date:
    """A date written ``YYYY-MM-DD``."""
    try:
        return dt.date.fromisoformat(str(text).strip())
    except ValueError:
        raise InputError(f"cannot read {text!r} as a date; write YYYY-MM-DD (e.g. 2019-06-14)", where) from None


def parse_months(text: str, where: str | None = None) -> tuple[int, int]:
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
            raise InputError(f"unknown season {self.season!r}; accepted: {', '.join(SEASON_MONTHS)}", field="season")
        if self.season is not None and self.months is not None:
            raise InputError("give a season or a month range, not both", field="season/months")
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
    replay_note: str | None = None  # the note (also in notes) that days before the neutral date were replayed

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
                    + "; widen the dates screened (from, to) or the months", f"{where} climate")
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
                warnings=tuple(notices.merge(meta.get("warnings"), daily.attrs.get("warnings"), season_warn)),
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
                         f"{option_ref('neutral_override')} for a changed neutral temperature)") if view.typical_year else (
                         "; screening replays events on their dates inside the record: drop the event, use a "
                         f"record that covers it, or {option_ref('neutral_override')} for its neutral temperature")
                raise InputError(f"{ev.kind} event on {ev.date.isoformat()} is after the end of the climate record "
                                 f"({view.record_last.isoformat()}){extra}", f"{where} events")
        day = view.day
        notes = []
        replay_note = None
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
                replay_note = (f"days before the neutral date {nd.isoformat()} are screened with the recorded "
                               f"neutral temperature {section.neutral_temperature_C:.1f} degC (a replay of the "
                               "climate on the section as recorded)")
                notes.append(replay_note)
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
        cold = dict(E_Pa=st.E_Pa, area_m2=A, alpha_per_K=st.alpha_per_K, resistance_N_per_m=r,
                    gap_limit_m=section.gap_limit_m, tension_stress_limit_Pa=section.tension_stress_limit_Pa)
        days = screen_days(view.rail_max_C, view.rail_min_C, heat_neutral_C=heat_neutral, cold_neutral_C=neutral,
                           allowable_rise_K=allowable, critical_rise_K=critical, **cold,
                           watch_fraction=o.watch_fraction)
        cold_limit = cold_limit_rise_K(**cold)
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
            replay_note=replay_note,
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
        problems = [out[i] for i in sorted(out) if isinstance(out[i], TrackplanError)]
        return ScreenResult(self.options, results, problems)
