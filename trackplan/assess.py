"""Section assessment: climate -> design rail temperatures, track -> allowable rise,
then the neutral target and the pre-summer verdict.

This is the orchestration layer between the section file and the physics
modules (:mod:`trackplan.weather`, :mod:`trackplan.railtemp`,
:mod:`trackplan.extremes`, :mod:`trackplan.stability`, :mod:`trackplan.target`,
:mod:`trackplan.check`). It holds the caches that make a network of many
sections sharing a few climate records affordable:

* each climate record is read once;
* daily rail extremes are computed once per record, place, shade, rail profile,
  method and track orientation: the azimuth modulo 180 degrees (a track is the
  same in both directions) rounded to :data:`AZIMUTH_STEP_DEG` (1 degree). On the
  30-year Kestrel Plains sample with 60E1 rail, turning the track by a whole
  degree changes the daily maximum rail temperature by at most 0.15 K (99th
  percentile 0.13 K) and the daily minimum by under 0.001 K, so rounding to the
  nearest degree costs under 0.08 K. Sections are processed grouped by record so
  the record's solar geometry is prepared once;
* design extremes once per daily series and return period;
* the stability curve once per distinct track; when a run needs many distinct
  tracks, they are solved first in parallel processes (one per core).
"""

from __future__ import annotations

import calendar
from dataclasses import dataclass, field
from pathlib import Path

from trackplan import check as check_mod
from trackplan import notices
from trackplan import target as target_mod
from trackplan.errors import InputError, TrackplanError
from trackplan.sections import Section

#: Track azimuths are rounded to this step for the daily rail extremes [deg].
AZIMUTH_STEP_DEG = 1.0
#: Below this many distinct uncached tracks, stability runs in this process.
PARALLEL_MIN_TRACKS = 16


@dataclass
class ClimateResult:
    """Design rail temperatures of a section, with where they come from."""

    design: object  # trackplan.extremes.DesignExtremes
    method: str
    station: str
    hot_month: str | None
    warnings: list[str] = field(default_factory=list)
    tz: str | None = None  # zone the record's timestamps were read in
    time_step: str | None = None  # "hourly" or "daily", from the timestamps

    @property
    def design_max_C(self) -> float:
        return float(self.design.design_max_rail_temperature_C)

    @property
    def design_min_C(self) -> float:
        return float(self.design.design_min_rail_temperature_C)


@dataclass
class SectionAssessment:
    """Everything computed for one section."""

    section: Section
    climate: ClimateResult
    stability: object  # trackplan.stability.StabilityResult
    longitudinal_resistance_N_per_m: float
    target: target_mod.TargetResult
    check: check_mod.CheckResult
    practice: list[target_mod.PracticeRule]

    @property
    def allowable_rise_K(self) -> float:
        return float(self.stability.allowable_rise_K)


def _hot_month(daily) -> str | None:
    """The month in which the hot season starts: the earliest month that holds at
    least 10 % of the years' hottest days (``None`` if the record has no dates)."""
    import numpy as np

    s = daily["rail_max_C"].dropna()
    if s.empty:
        return None
    years = s.index.year
    idx = s.groupby(years).idxmax()
    months = np.array([d.month for d in idx])
    # order months starting after the coldest part of the year (hemisphere-neutral)
    counts = np.bincount(months, minlength=13)[1:]
    peak = int(np.argmax(counts))
    order = [(peak - 6 + k) % 12 for k in range(12)]
    total = counts.sum()
    acc = 0
    for m in order:
        acc += counts[m]
        if counts[m] >= 0.1 * total:
            return calendar.month_name[m + 1]
    return calendar.month_name[peak + 1]  # pragma: no cover


class Assessor:
    """Assess sections with shared caches (one instance per run).

    Parameters
    ----------
    return_period_years : float, optional
        Overrides every section's return period.
    distribution : str
        Extreme-value distribution (``gumbel`` or ``gev``).
    priority : str
        What an empty neutral window gives way to (``heat`` or ``cold``; see
        :func:`trackplan.target.recommend_neutral`).
    columns : dict, optional
        Column mapping from the command line; overrides each section's ``columns``.
    tz : str, optional
        Zone of naive timestamps from the command line; overrides each section's ``tz``.
    allow_short : bool
        Fit return levels on records shorter than the minimum for the return period.
    """

    def __init__(self, return_period_years: float | None = None, distribution: str = "gumbel",
                 priority: str = "heat", columns: dict | None = None, tz: str | None = None,
                 allow_short: bool = False):
        self.return_period_years = return_period_years
        self.distribution = distribution
        self.priority = priority
        self.columns = columns or {}
        self.tz = tz
        self.allow_short = allow_short
        self._records: dict = {}
        self._daily: dict = {}
        self._design: dict = {}
        self._stability: dict = {}

    # -- climate --------------------------------------------------------
    def record(self, path: Path, where: str, section: Section | None = None):
        from trackplan import columns, weather

        base = {c.name: c for c in section.climate_columns} if section is not None else {}
        mapping = columns.merge(base, self.columns)
        tz = self.tz or (section.climate_tz if section is not None else None)
        site = (section.latitude_deg, section.longitude_deg) if section is not None else None
        confirmed = bool(section.climate_units_confirmed) if section is not None else False
        key = self.record_key(path, section) + (confirmed,)
        if key not in self._records:
            try:
                self._records[key] = weather.read_record(path, where=where, columns=mapping, tz=tz, site=site,
                                                         units_confirmed=confirmed)
            except InputError as exc:
                self._records[key] = (where, exc)  # a bad record is read once, reported for each section
        hit = self._records[key]
        if isinstance(hit, tuple) and len(hit) == 2 and isinstance(hit[1], InputError):
            label, exc = hit
            w = exc.where or ""
            raise exc.relocated(where + w[len(label):]) if w.startswith(label) else exc
        return hit

    def record_key(self, path: Path, section: Section | None) -> tuple:
        """What a record read depends on: file, column mapping, zone; the site only through the
        nominal zone of its longitude, or the nearest cell of a gridded file."""
        from trackplan import columns, readers_cf

        base = {c.name: c for c in section.climate_columns} if section is not None else {}
        tz = self.tz or (section.climate_tz if section is not None else None)
        lat = section.latitude_deg if section is not None else None
        lon = section.longitude_deg if section is not None else None
        site = (lat, lon) if readers_cf.is_netcdf(path) else (None if lon is None else round(lon / 15.0))
        return (str(path), columns.key(columns.merge(base, self.columns)), tz, site)

    def site_for(self, section: Section, meta: dict):
        from trackplan.railtemp import RailSite

        lat = section.latitude_deg if section.latitude_deg is not None else meta.get("latitude_deg")
        lon = section.longitude_deg if section.longitude_deg is not None else meta.get("longitude_deg")
        if lat is None or lon is None:
            raise InputError("no latitude/longitude in the section or its climate record; add latitude and "
                             "longitude to the section", f"{section.file.name} [sections.{section.id}]")
        return RailSite(
            latitude_deg=float(lat),
            longitude_deg=float(lon),
            elevation_m=float(meta.get("elevation_m") or 0.0),
            track_azimuth_deg=float(round(section.track_azimuth_deg / AZIMUTH_STEP_DEG) * AZIMUTH_STEP_DEG % 180.0),
            shade_factor=section.shade_factor,
        )

    def daily(self, section: Section):
        """Daily rail extremes for the section (cached; azimuth rounded to the step)."""
        from trackplan import railtemp

        where = f"{section.file.name} [sections.{section.id}] climate {section.climate_path.name}"
        df, meta = self.record(section.climate_path, where, section)
        site = self.site_for(section, meta)
        key = (self.record_key(section.climate_path, section), round(site.latitude_deg, 4), round(site.longitude_deg, 4),
               round(site.shade_factor, 3), section.profile.name, section.rail_temperature_method,
               site.track_azimuth_deg)
        if key not in self._daily:
            self._daily[key] = railtemp.daily_rail_extremes(df, meta, section.profile, site,
                                                            section.rail_temperature_method)
        return self._daily[key], meta, key

    def climate(self, section: Section) -> ClimateResult:
        """Design rail temperatures for the section (cached)."""
        from trackplan import extremes

        daily, meta, key = self.daily(section)
        rp = self.return_period_years or section.return_period_years
        dkey = (key, rp, self.distribution)
        if dkey not in self._design:
            design = extremes.design_extremes(daily, return_period_years=rp, distribution=self.distribution,
                                              typical_year=bool(meta.get("typical_year")),
                                              years=meta.get("years"), allow_short=self.allow_short)
            self._design[dkey] = (design, _hot_month(daily))
        design, month = self._design[dkey]
        warnings = notices.merge(meta.get("warnings"), daily.attrs.get("warnings"), design.warnings)
        return ClimateResult(design, daily.attrs.get("method", section.rail_temperature_method),
                             str(meta.get("station", section.climate_path.stem)), month, warnings,
                             meta.get("tz"), meta.get("time_step"))

    # -- track ----------------------------------------------------------
    def track_input(self, section: Section, ballast: str | None = None):
        """The stability inputs of the section's track (or with another ballast state), built
        through :func:`trackplan.track.build_track` like every other door."""
        from trackplan.track import build_track

        return build_track(
            section.profile, section.steel, sleeper=section.sleeper, ballast=ballast or section.ballast,
            shoulder=section.shoulder, sleeper_spacing_m=section.sleeper_spacing_m, radius_m=section.radius_m,
            misalignment_m=section.misalignment_m, misalignment_length_m=section.misalignment_length_m,
            loading=section.loading, overrides=dict(section.stability_overrides),
            where=f"{section.file.name}: section {section.id}")

    def stability(self, section: Section, ballast: str | None = None):
        """Stability result for the section's track (or with another ballast state)."""
        from trackplan import stability

        inp = self.track_input(section, ballast)
        hit = self._stability.get(inp)
        if hit is not None:
            if isinstance(hit, Exception):
                raise hit
            return hit
        return stability.analyse_stability(inp)

    def prepare_stability(self, sections: list[Section], ballasts: tuple = (None,)) -> None:
        """Solve the distinct tracks of ``sections`` ahead, in parallel processes when there
        are many (results, and explained failures, are kept for :meth:`stability`)."""
        import os

        inputs = []
        for sec in sections:
            for b in ballasts:
                try:
                    inp = self.track_input(sec, b)
                except InputError:
                    continue  # reported when the section itself is assessed
                if inp not in self._stability and inp not in inputs:
                    inputs.append(inp)
        ctx = _fork_context()
        if len(inputs) < PARALLEL_MIN_TRACKS or ctx is None:
            return
        from concurrent.futures import ProcessPoolExecutor

        with ProcessPoolExecutor(max_workers=min(os.cpu_count() or 1, 8), mp_context=ctx) as pool:
            for inp, res in zip(inputs, pool.map(_solve_track, inputs, chunksize=4)):
                self._stability[inp] = res

    def longitudinal_resistance(self, section: Section) -> float:
        """Longitudinal resistance per rail for the cold side [N/m] (the preset's when held rigid)."""
        inp = self.track_input(section)
        r = inp.longitudinal_resistance_N_per_m
        if r is None:
            from trackplan.track import build_track

            r = build_track(section.profile, section.steel, sleeper=section.sleeper, ballast=section.ballast,
                            shoulder=section.shoulder, sleeper_spacing_m=section.sleeper_spacing_m,
                            loading="none").longitudinal_resistance_N_per_m
        return float(r)

    # -- the whole assessment -------------------------------------------
    def assess(self, section: Section) -> SectionAssessment:
        clim = self.climate(section)
        stab = self.stability(section)
        r = self.longitudinal_resistance(section)
        st = section.steel
        A = section.profile.area_m2
        cold = dict(E_Pa=st.E_Pa, area_m2=A, alpha_per_K=st.alpha_per_K, resistance_N_per_m=r,
                    gap_limit_m=section.gap_limit_m, tension_stress_limit_Pa=section.tension_stress_limit_Pa)
        tgt = target_mod.recommend_neutral(
            design_max_C=clim.design_max_C, design_min_C=clim.design_min_C,
            allowable_rise_K=float(stab.allowable_rise_K), drift_allowance_K=section.drift_allowance_K, **cold,
            laying_tolerance_K=section.laying_tolerance_K, priority=self.priority,
        )
        chk = check_mod.check_section(
            latest_neutral_C=section.latest_neutral_temperature_C, drift_allowance_K=section.drift_allowance_K,
            design_max_C=clim.design_max_C, design_min_C=clim.design_min_C,
            allowable_rise_K=float(stab.allowable_rise_K), **cold,
            target_C=tgt.target_neutral_temperature_C, destress_before=clim.hot_month,
            neutral_basis=section.neutral_basis,
        )
        annual = clim.design.annual
        rec_max = float(annual["max_rail_temperature_C"].max()) if len(annual) else None
        rec_min = float(annual["min_rail_temperature_C"].min()) if len(annual) else None
        practice = target_mod.regional_practice(rec_max, rec_min, clim.design_max_C, clim.design_min_C,
                                                tunnel=section.shade_factor >= 0.9)
        return SectionAssessment(section, clim, stab, r, tgt, chk, practice)

    def assess_all(self, sections: list[Section], progress=None,
                   engine=None) -> tuple[list[SectionAssessment], list[TrackplanError]]:
        """Assess every section, grouped by climate record; problems are collected, not raised.

        With many sections and a Dask ``engine`` (:mod:`trackplan.engine`), the climate
        records are shared out between its workers (each record's sections stay together,
        so its solar geometry is still prepared once).

        Returns the assessments in the order of ``sections`` and the problems found.
        """
        self.prepare_stability(sections)
        out = map_record_groups(lambda idx: self._assess_indices(sections, idx),
                                sections, progress, engine)
        results = [out[i] for i in range(len(sections)) if isinstance(out.get(i), SectionAssessment)]
        problems = [out[i] for i in sorted(out) if isinstance(out[i], TrackplanError)]
        return results, problems

    def _assess_indices(self, sections, indices) -> dict:
        part: dict = {}
        for i in indices:
            try:
                part[i] = self.assess(sections[i])
            except Exception as exc:  # every failure is a problem of this section; the others go on
                part[i] = section_problem(sections[i], exc)
        return part


#: Field names of the computation modules -> the section file's name of the same field.
SECTION_FIELDS = {"lat": "latitude", "lon": "longitude", "azimuth": "track_azimuth"}


def section_problem(section: Section, exc: BaseException) -> TrackplanError:
    """A failure while assessing ``section`` as a problem of that section (file, section, field).

    An input or model error (:class:`TrackplanError`) that already names a place in a file is
    kept; one raised by a computation module (naming a field, or nothing) is placed in the
    section; anything unforeseen becomes an error of the section that says it is an internal fault.
    """
    from trackplan.errors import excerpt

    where = f"{section.file.name} [sections.{section.id}]"
    if isinstance(exc, TrackplanError):
        if exc.where is None:
            return exc.relocated(where)
        if exc.field is not None and exc.where == exc.field:
            return exc.relocated(f"{where} {SECTION_FIELDS.get(exc.field, exc.field)}")
        return exc
    return InputError(f"could not be assessed: internal error {type(exc).__name__}: {excerpt(exc, 120)} "
                      "(a fault in trackplan; please report it with the section file)", where)


#: Runs with at least this many sections share the climate records out between Dask workers.
PARALLEL_MIN_SECTIONS = 60


def _fork_context():
    """The 'fork' multiprocessing context where there is more than one core, else None."""
    import multiprocessing
    import os

    if (os.cpu_count() or 1) < 2:
        return None
    try:
        return multiprocessing.get_context("fork")
    except ValueError:  # pragma: no cover - platforms without fork
        return None


def map_record_groups(work, sections, progress=None, engine=None) -> dict:
    """Run ``work(indices)`` over the sections grouped by climate record.

    ``work`` returns a dict ``index -> result or InputError`` for the indices it is
    given (all of one record, in place order, so that the record's solar geometry is
    prepared once). With a Dask ``engine`` (:mod:`trackplan.engine`), at least
    :data:`PARALLEL_MIN_SECTIONS` sections and more than one record, each group is a
    task on the engine's workers (``work`` and its results travel pickled: they
    should hold only what is needed); otherwise the groups run here, one after the
    other. Returns the merged dict.
    """
    groups: dict[str, list[int]] = {}
    for i in sorted(range(len(sections)), key=lambda i: (str(sections[i].climate_path),
                                                         sections[i].latitude_deg or 0.0,
                                                         sections[i].longitude_deg or 0.0)):
        groups.setdefault(str(sections[i].climate_path), []).append(i)
    out: dict = {}
    if not use_engine(engine, sections, groups):
        for idx in groups.values():
            out.update(work(idx))
            if progress is not None:
                for _ in idx:
                    progress()
        return out
    from dask.distributed import as_completed

    client = engine.client
    futures = [client.submit(work, idx, pure=False) for idx in sorted(groups.values(), key=len, reverse=True)]
    for fut in as_completed(futures):
        part = fut.result()
        out.update(part)
        if progress is not None:
            for _ in part:
                progress()
    return out


def use_engine(engine, sections, groups=None) -> bool:
    """Whether a run of ``sections`` goes to the Dask engine (large enough, several records)."""
    if engine is None or len(sections) < PARALLEL_MIN_SECTIONS:
        return False
    n_groups = len(groups) if groups is not None else len({str(s.climate_path) for s in sections})
    return n_groups > 1


def _solve_track(inp):
    """Worker: the stability result of one track, or the explained failure (returned, not raised)."""
    from trackplan import stability

    try:
        return stability.analyse_stability(inp)
    except TrackplanError as exc:  # bad input or a model that cannot give a number
        return exc
    except Exception as exc:  # returned, so that one track cannot stop the pool
        from trackplan.errors import excerpt

        return InputError(f"the stability analysis failed: internal error {type(exc).__name__}: "
                          f"{excerpt(exc, 120)} (a fault in trackplan; please report it)")
