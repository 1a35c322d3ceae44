"""Buckling probability of the sections of a network: orchestration of :mod:`trackplan.risk`.

For each section: its record's daily maximum rail temperatures cut to the season (through the
same :class:`trackplan.screening.Screener` as ``screen``, so both see the same days), the
stand-in of its track family (:mod:`trackplan.surrogate`), its spreads (defaults by neutral
basis, then its ``[sections.ID.risk]`` table), and the Monte Carlo estimates: as it is, with each
uncertain input held at its median (drivers), with the neutral temperature measured now, and
with the ballast consolidated (what to do first). See ``docs/methods/risk.md``.
"""

from __future__ import annotations

import datetime as dt
import math
from dataclasses import dataclass, field

import numpy as np

from trackplan import risk
from trackplan.errors import InputError, TrackplanError

#: Seasons by name: ``summer`` at each station's hemisphere (:mod:`trackplan.seasons`), ``year``
#: the whole year; or a month range ``M-M``.
SEASONS = ("summer", "year")
#: Random points on which each stand-in's error is measured when it is built for a run.
BUILD_TEST_POINTS = 40


def season_months(season: str, latitude_deg: float, where: str | None = None):
    """Months of a season name or ``M-M`` range at a latitude (southern summer: November-March)."""
    from trackplan.screening import parse_months

    if season == "summer":
        from trackplan import seasons

        return seasons.season_months("summer", latitude_deg, where)
    if season == "year":
        return None
    try:
        return parse_months(season, where)
    except InputError:
        raise InputError(f"unknown season {season!r}; accepted: {', '.join(SEASONS)} or a month range such as 6-8",
                         where, field="season") from None


@dataclass(frozen=True)
class RiskOptions:
    """What to run (SI).

    Attributes
    ----------
    samples : int
        Monte Carlo samples per section and what-if.
    seed : int
        Seed of the draws (the same seed gives the same result).
    season : str
        ``summer``, ``year`` or a month range ``M-M``.
    today : datetime.date or None
        Date of the assessment (years since the neutral temperature was set); default today.
    axes : list or None
        Grid axes of the stand-ins (default :func:`trackplan.surrogate._axes`).
    cache_folder : path or None
        Where stand-ins are cached (default :func:`trackplan.surrogate.cache_dir`).
    uncertainty : Uncertainty or None
        Spreads for every section instead of the defaults and section tables (checks, what-ifs).
    drivers : bool
        Estimate the probability with each input held at its median.
    """

    samples: int = 10_000
    seed: int = 1
    season: str = "summer"
    today: dt.date | None = None
    axes: list | None = None
    cache_folder: object = None
    uncertainty: object = None
    drivers: bool = True

    def validate(self) -> "RiskOptions":
        if not isinstance(self.samples, int) or not 100 <= self.samples <= 10_000_000:
            raise InputError(f"{self.samples!r} samples is outside 100..10,000,000", field="samples")
        if not isinstance(self.seed, int) or self.seed < 0:
            raise InputError(f"seed {self.seed!r} must be a whole number 0 or more", field="seed")
        season_months(self.season, 0.0)
        return self


@dataclass
class SectionRisk:
    """Buckling probability of one section (the table, JSON, CSV and plot read this object)."""

    id: str
    name: str
    estimate: risk.Estimate
    drivers: dict  # driver -> probability drop when held at its median
    measured: risk.Estimate
    consolidated: risk.Estimate | None  # None: already consolidated
    uncertainty: risk.Uncertainty
    neutral_temperature_C: float
    misalignment_m: float
    buckling_rise_K: float  # at the median inputs (full model)
    seasons: list  # season years of the record used
    months: tuple | None
    station: str
    notes: list = field(default_factory=list)

    @property
    def probability(self) -> float:
        return self.estimate.probability

    @property
    def measure_gain(self) -> float:
        return self.estimate.probability - self.measured.probability

    @property
    def consolidate_gain(self) -> float:
        return 0.0 if self.consolidated is None else self.estimate.probability - self.consolidated.probability

    @property
    def first_action(self) -> tuple[str, float]:
        """The what-if with the larger drop: ``("measure neutral" | "consolidate", drop)``."""
        if self.consolidate_gain > self.measure_gain:
            return "consolidate", self.consolidate_gain
        return "measure neutral", self.measure_gain


@dataclass
class RiskResult:
    options: RiskOptions
    sections: list
    problems: list
    surrogate_max_error_pct: float | None
    surrogate_families: int
    fallback_calls: int = 0
    surrogate_max_overstatement_pct: float | None = None

    @property
    def network_expected_buckles_per_year(self) -> float:
        return float(sum(s.probability for s in self.sections))

    @property
    def network_standard_error(self) -> float:
        return float(math.sqrt(sum(s.estimate.standard_error ** 2 for s in self.sections)))


def years_since(section, today: dt.date) -> float | None:
    """Years from the latest neutral-setting date (the neutral date or a later destressing or
    renewal) to ``today``; None when undated."""
    from trackplan.sections import NEUTRAL_EVENTS

    dates = [section.neutral_date] if section.neutral_date is not None else []
    dates += [ev.date for ev in section.events if ev.kind in NEUTRAL_EVENTS and ev.neutral_temperature_C is not None]
    if not dates:
        return None
    return max(0.0, (today - max(dates)).days / 365.25)


class RiskRunner:
    """Run the buckling probability of sections (one per run; holds the stand-ins and screener)."""

    def __init__(self, options: RiskOptions | None = None, assessor=None):
        from trackplan.assess import Assessor

        self.options = (options or RiskOptions()).validate()
        self.assessor = assessor or Assessor()
        self._screeners: dict = {}
        self._surrogates: dict = {}
        self.errors: list = []

    # -- pieces ---------------------------------------------------------
    def screener(self, months):
        from trackplan.screening import ScreenOptions, Screener

        if months not in self._screeners:
            self._screeners[months] = Screener(self.assessor, ScreenOptions(months=months))
        return self._screeners[months]

    def months_of(self, section):
        daily, meta, _ = self.assessor.daily(section)
        lat = section.latitude_deg if section.latitude_deg is not None else meta.get("latitude_deg") or 0.0
        return season_months(self.options.season, float(lat))

    def surrogate(self, inp):
        from trackplan import surrogate

        fam = surrogate.family_input(inp)
        if fam not in self._surrogates:
            self._surrogates[fam] = surrogate.load_or_build(
                inp, self.options.axes, self.options.cache_folder,
                test_points=BUILD_TEST_POINTS if self.options.axes is None else 0)
        return self._surrogates[fam]

    def capacity(self, inp, u: risk.Uncertainty):
        """``capacity(pf, lf, mis)``: the stand-in, or the full model when nothing varies."""
        from trackplan import surrogate

        if self.capacity_fixed(u):
            fam = surrogate.family_input(inp)

            def exact(pf, lf, mis):
                v = surrogate.full_model(fam, 1.0, 1.0, float(np.asarray(mis).flat[0]))[0]
                return np.full(np.shape(pf), v)
            return exact
        return self.surrogate(inp)

    # -- one section ----------------------------------------------------
    def section_risk(self, section) -> SectionRisk:
        from trackplan import surrogate

        o = self.options
        months = self.months_of(section)
        view = self.screener(months)._view(section)
        uniq, inverse = view.groups
        valid = np.isfinite(view.rail_max_C)
        cover = np.bincount(inverse, weights=valid.astype(float), minlength=uniq.size) / np.maximum(view.season_days, 1)
        keep = cover >= risk.SEASON_MIN_COVERAGE
        where = f"{section.file.name} [sections.{section.id}]"
        if not keep.any():
            raise InputError(f"no season of the climate record has {risk.SEASON_MIN_COVERAGE:.0%} of its days",
                             f"{where} climate")
        remap = np.cumsum(keep) - 1
        day_mask = keep[inverse]
        seasons = [int(y) for y in uniq[keep]]
        today = o.today or dt.date.today()
        if o.uncertainty is not None:
            u = o.uncertainty
        else:
            ov = dict(section.risk)  # validated SI values (trackplan.sections, trackplan.risk.parse_overrides)
            u = risk.uncertainty_for(section.neutral_basis, years_since(section, today), ov)
        inp = self.assessor.track_input(section)
        hot = risk.top_days(view.rail_max_C[day_mask], remap[inverse[day_mask]], len(seasons),
                            u.rail_temperature_daily_sd_K)
        d = risk.draw(risk.section_seed(o.seed, section.id), o.samples, len(seasons), risk.TOP_DAYS_MAX)
        tn0 = float(section.latest_neutral_temperature_C)
        m0 = float(section.misalignment_m)
        memo = {}

        def cap(track, uu):
            """Buckling rise of each sample, evaluated once per track and capacity spreads."""
            key = (track, uu.peak_resistance_cov, uu.longitudinal_resistance_cov, uu.misalignment_spread)
            if key not in memo:
                memo[key] = self.capacity(track, uu)(*risk.capacity_inputs(uu, m0, d.z))
            return memo[key]

        base = risk.run(hot, tn0, u, cap(inp, u), m0, d)
        drivers = {}
        if o.drivers:
            for name in risk.DRIVERS:
                uf = u.fixed(name)
                if uf == u:
                    drivers[name] = 0.0
                    continue
                hot_f = hot if name != "rail_temperature" else risk.top_days(
                    view.rail_max_C[day_mask], remap[inverse[day_mask]], len(seasons), 0.0)
                drivers[name] = base.probability - risk.run(hot_f, tn0, uf, cap(inp, uf), m0, d).probability
        measured = risk.run(hot, tn0, u.measured(), cap(inp, u), m0, d)
        consolidated = None
        if section.ballast != "consolidated":
            inp_c = self.assessor.track_input(section, "consolidated")
            consolidated = risk.run(hot, tn0, u, cap(inp_c, u), m0, d)
        median_rise = surrogate.full_model(surrogate.family_input(inp), 1.0, 1.0, m0)[0]
        notes = []
        if section.events:
            notes.append("the ballast state is the section's own on every day (recovery windows after tamping "
                         "or ballast work are not in the probability)")
        return SectionRisk(section.id, section.name, base, drivers, measured, consolidated, u, tn0, m0,
                           float(median_rise), seasons, months, view.station, notes)

    def prepare(self, sections) -> None:
        """Load or build the stand-ins of every family the sections need (before any fork, so
        worker processes inherit them)."""
        if self.options.uncertainty is not None and self.capacity_fixed(self.options.uncertainty):
            return
        for sec in sections:
            for ballast in (None, "consolidated"):
                if ballast is not None and sec.ballast == "consolidated":
                    continue
                try:
                    self.surrogate(self.assessor.track_input(sec, ballast))
                except TrackplanError:
                    continue  # reported when the section itself is run

    @staticmethod
    def capacity_fixed(u) -> bool:
        return u.peak_resistance_cov == 0 and u.longitudinal_resistance_cov == 0 and u.misalignment_spread == 0

    def run_all(self, sections, progress=None) -> RiskResult:
        """Every section; bad sections are collected as problems, the others computed.

        Sections are grouped by climate record; with many sections the groups are shared out
        between forked worker processes (:func:`trackplan.assess.map_record_groups`).
        """
        from trackplan.assess import map_record_groups

        self.prepare(sections)

        def work(indices):
            part = {}
            for i in indices:
                try:
                    part[i] = self.section_risk(sections[i])
                except TrackplanError as exc:  # bad input or a model that gives no number: a problem of the section
                    part[i] = exc
            return part

        got = map_record_groups(work, sections, progress)
        out = [got[i] for i in range(len(sections)) if isinstance(got.get(i), SectionRisk)]
        problems = [got[i] for i in sorted(got) if isinstance(got[i], TrackplanError)]
        errs = [s.measured_error for s in self._surrogates.values() if s.measured_error is not None]
        out.sort(key=lambda r: (-r.probability, r.id))
        overs = [s.measured_overstatement for s in self._surrogates.values() if s.measured_overstatement is not None]
        return RiskResult(self.options, out, problems, max(errs) if errs else None, len(self._surrogates),
                          sum(s.fallback_calls for s in self._surrogates.values()), max(overs) if overs else None)
