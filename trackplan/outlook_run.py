"""Orchestration of ``trackplan outlook``: the task graph on the Dask engine.

Tasks (each a plain function of :mod:`trackplan.outlook` or
:mod:`trackplan.projections`, run on a worker):

1. ``station``: read each station record once, daily air max/min;
2. ``adjust``: per (station record, grid cell, model, scenario): read the cell's
   daily series (historical then scenario) and bias-adjust it window by window;
3. ``screen``: per group of at most :data:`SECTIONS_PER_TASK` sections of one
   station record, with every adjusted run they are on: rail temperature path
   (its table made once per section), risk levels, figures per window.

The client then forms the ensemble statistics. Stability results are solved
on the client by :class:`trackplan.assess.Assessor` (its own preparation, in
parallel when many tracks), as ``screen`` does; problems (bad sections, files,
models, baselines) are collected and the rest computed.
"""

from __future__ import annotations

import dataclasses
import math
import time
from dataclasses import dataclass, field

from trackplan.errors import InputError, TrackplanError
from trackplan import outlook as core
from trackplan.thermal import ColdSide

#: Sections of one adjusted run handled by one task.
SECTIONS_PER_TASK = 50
#: The sun of the rail temperature path is taken at the section's place rounded to this step [deg]
#: (0.1 degree, about 11 km). Moving a place of the example network by 0.05 degree changes the tabulated
#: rail maximum by at most 0.15 K, the order of the 1-degree azimuth rounding of trackplan.assess.
SUN_GRID_DEG = 0.1


@dataclass
class OutlookOptions:
    baseline: core.Window = core.Window(1991, 2020)
    periods: tuple = (core.Window(2021, 2050), core.Window(2041, 2070), core.Window(2071, 2100))
    scenarios: tuple = ()
    neutral_override_C: float | None = None
    watch_fraction: float = 0.8
    return_period_years: float | None = None


@dataclass
class SectionOutlook:
    id: str
    name: str
    station: str
    record: str
    neutral_C: float
    heat_neutral_C: float
    allowable_rise_K: float
    critical_rise_K: float
    cells: list  # {model, scenario, latitude_deg, longitude_deg, distance_km}
    periods: list  # ensemble rows, per scenario
    chart: dict  # scenario -> rows over the chart windows
    notes: list = field(default_factory=list)


@dataclass
class OutlookResult:
    options: OutlookOptions
    engine: dict
    sections: list
    problems: list
    warnings: list  # trackplan.notices.Notice
    runs: list  # {"model", "scenario", "calendar", "files"}
    timings: dict


def _err(exc: InputError) -> tuple:
    return ("error", exc.bare_message, exc.where)


def _task_station(path: str):
    try:
        return core.station_daily(path)
    except InputError as exc:
        return _err(exc)


def _task_adjust(obs, run, cell, baseline, windows, key):
    from trackplan import projections

    if isinstance(obs, tuple):
        return obs
    try:
        t0, c0 = time.perf_counter(), time.process_time()
        series = projections.read_cell(run, cell)
        t1 = time.perf_counter()
        adj = core.adjust_cell(obs, series, baseline, windows, key)
        adj.seconds += t1 - t0
        adj.cpu_seconds = time.process_time() - c0
        adj.read_seconds = t1 - t0
        return adj
    except InputError as exc:
        return _err(exc)
    except (OSError, RuntimeError, KeyError, IndexError, ValueError) as exc:
        # a file that opened but cannot be read at this cell, or data the method refuses: reported, not raised
        text = (str(exc).splitlines() or [""])[0][:200]
        return ("error", f"could not read or adjust the cell ({cell.latitude_deg:.2f}, {cell.longitude_deg:.2f}): "
                         f"{type(exc).__name__}: {text}", ", ".join(f.path.name for f in run.files))


def _task_screen(adjusted, plan):
    t0, c0 = time.perf_counter(), time.process_time()
    out = core.screen_runs(adjusted, plan)
    return out, time.perf_counter() - t0, time.process_time() - c0


def section_spec(section, assessor, meta: dict, options: OutlookOptions) -> core.SectionSpec:
    """The section's thresholds exactly as screening takes them on a day outside any disturbance window."""
    from trackplan import screening
    from trackplan.sections import NEUTRAL_EVENTS

    if options.neutral_override_C is not None:
        neutral = float(options.neutral_override_C)
    else:
        changes = [(screening.day_number(ev.date), ev.neutral_temperature_C) for ev in section.events
                   if ev.kind in NEUTRAL_EVENTS and ev.neutral_temperature_C is not None]
        neutral = float(screening.neutral_by_day([screening.day_number("2300-01-01")],
                                                 section.neutral_temperature_C, changes)[0])
    stab = assessor.stability(section)
    critical, _ = screening._critical_of(stab)
    site = assessor.site_for(section, meta)
    # the sun of the rail path at the place rounded to SUN_GRID_DEG (shared by neighbouring sections)
    sun_site = dataclasses.replace(site, latitude_deg=round(site.latitude_deg / SUN_GRID_DEG) * SUN_GRID_DEG,
                                   longitude_deg=round(site.longitude_deg / SUN_GRID_DEG) * SUN_GRID_DEG)
    return core.SectionSpec(
        id=section.id, name=section.name, record=str(section.climate_path),
        latitude_deg=site.latitude_deg, longitude_deg=site.longitude_deg, profile=section.profile, site=sun_site,
        heat_neutral_C=neutral - section.drift_allowance_K, cold_neutral_C=neutral,
        allowable_rise_K=float(stab.allowable_rise_K), critical_rise_K=float(critical),
        cold=ColdSide(E_Pa=section.steel.E_Pa, area_m2=section.profile.area_m2, alpha_per_K=section.steel.alpha_per_K,
                      resistance_N_per_m=float(assessor.longitudinal_resistance(section)),
                      gap_limit_m=section.gap_limit_m, tension_stress_limit_Pa=section.tension_stress_limit_Pa),
        return_period_years=float(options.return_period_years or section.return_period_years),
        watch_fraction=options.watch_fraction,
    )


def _warning(code: str, message: str, where: str | None):
    from trackplan.notices import Notice

    return Notice(message, code, where)


def run_outlook(sections, projections_dir, options: OutlookOptions, engine) -> OutlookResult:
    """Compute the outlook of ``sections`` over the ensemble in ``projections_dir`` on ``engine``."""
    from trackplan import projections
    from trackplan.assess import Assessor

    t_start = time.perf_counter()
    client = engine.client
    problems: list = []
    warnings: list = []
    ens = projections.scan_ensemble(projections_dir, options.scenarios or None)
    problems += ens.problems
    for n in ens.notes:
        warnings.append(_warning("projection-metadata", n, str(projections_dir)))
    t_scan = time.perf_counter()
    # 1. station records, once each
    records = sorted({str(s.climate_path) for s in sections})
    # task keys are unique to this run (pure=False): an existing cluster may serve other runs at once
    st_futs = {r: client.submit(_task_station, r, pure=False) for r in records}
    stations = {r: f.result() for r, f in st_futs.items()}
    t_station = time.perf_counter()
    # 2. section thresholds on the client (stability solved once per distinct track)
    assessor = Assessor(options.return_period_years)
    good = []
    for s in sections:
        obs = stations[str(s.climate_path)]
        if isinstance(obs, tuple):
            continue
        good.append(s)
    try:
        assessor.prepare_stability(good)
    except TrackplanError:
        pass  # a section whose track cannot be solved is reported below
    specs = {}
    for s in sections:
        where = f"{s.file.name} [sections.{s.id}]"
        obs = stations[str(s.climate_path)]
        if isinstance(obs, tuple):
            problems.append(InputError(f"station record: {obs[1]}", f"{where} climate ({obs[2]})"))
            continue
        meta = {"latitude_deg": obs.latitude_deg, "longitude_deg": obs.longitude_deg}
        try:
            specs[s.id] = section_spec(s, assessor, meta, options)
        except TrackplanError as exc:  # bad input or a model that gives no number: a problem of the section
            problems.append(InputError(exc.bare_message, f"{where} ({exc.where})" if exc.where else where))
    t_spec = time.perf_counter()
    # 3. cells and adjust tasks, once per (record, cell, run)
    adjust_futs, cells, keys_of = {}, {}, {}
    for ri, run in enumerate(ens.runs):
        wins = core.chart_windows(run.first_year, run.last_year, options.baseline)
        for w in (options.baseline, *options.periods):
            if w not in wins:
                if w.first_year >= run.first_year and w.last_year <= run.last_year:
                    wins.append(w)
                else:
                    warnings.append(_warning("period-outside-run", f"{run.label}: period {w.label} is outside the "
                                             f"run's years {run.first_year}-{run.last_year}; left out",
                                             str(run.files[-1].path)))
        for sid, spec in specs.items():
            cell = projections.nearest_cell(run.grid, spec.latitude_deg, spec.longitude_deg)
            cells.setdefault(sid, []).append({
                "model": run.model, "scenario": run.scenario, "latitude_deg": cell.latitude_deg,
                "longitude_deg": cell.longitude_deg, "distance_km": cell.distance_m / 1000.0})
            if not projections.covers(cell):
                problems.append(InputError(
                    f"the grid of {run.label} does not cover the section: the nearest cell centre "
                    f"({cell.latitude_deg:.2f}, {cell.longitude_deg:.2f}) is {cell.distance_m / 1000:.0f} km away, "
                    f"more than the cell spacing {cell.spacing_m / 1000:.0f} km",
                    f"{str(run.files[0].path)} variable tasmax; section {sid}"))
                continue
            key = (spec.record, ri, cell.index)
            if key not in adjust_futs:
                adjust_futs[key] = client.submit(_task_adjust, st_futs[spec.record], run, cell, options.baseline,
                                                 wins, key, pure=False)
            keys_of.setdefault(sid, []).append(key)
    # 4. screen tasks: the sections of one station record in groups, each with every run it is on
    # (the rail excess table of a section is made once for all its runs)
    screen_futs = []
    by_record: dict = {}
    for sid, keys in keys_of.items():
        by_record.setdefault(specs[sid].record, []).append((specs[sid], keys))
    for rec, plan in by_record.items():
        plan.sort(key=lambda p: (p[0].site.latitude_deg, p[0].site.longitude_deg))  # shared sun, cached
        for k in range(0, len(plan), SECTIONS_PER_TASK):
            chunk = plan[k:k + SECTIONS_PER_TASK]
            needed = {key: adjust_futs[key] for _, keys in chunk for key in keys}
            screen_futs.append((chunk, client.submit(_task_screen, needed, chunk, pure=False)))
    # 5. gather
    per = {}  # (sid, scenario) -> {model: {window: figures}}
    adjust_seconds, screen_seconds, adjust_notes = [], [], {}
    adjust_cpu, read_seconds, screen_cpu = [], [], []
    for key, fut in adjust_futs.items():
        res = fut.result()
        if isinstance(res, tuple):
            run = ens.runs[key[1]]
            problems.append(InputError(f"{run.label}: {res[1]}", res[2]))
        else:
            adjust_seconds.append(res.seconds)
            adjust_cpu.append(res.cpu_seconds)
            read_seconds.append(res.read_seconds)
            adjust_notes[key] = res.notes
            res = None
    for chunk, fut in screen_futs:
        figures, secs, cpu = fut.result()
        n_pairs = max(len(figures), 1)
        screen_seconds.append(secs / n_pairs)
        screen_cpu.append(cpu / n_pairs)
        for (sid, key), wins in figures.items():
            run = ens.runs[key[1]]
            per.setdefault((sid, run.scenario), {})[run.model] = wins
    t_done = time.perf_counter()
    # 6. ensemble statistics per section and scenario
    out_sections = []
    scenarios = sorted({r.scenario for r in ens.runs})
    for s in sections:
        if s.id not in specs:
            continue
        spec = specs[s.id]
        rows, chart, notes = [], {}, []
        for scen in scenarios:
            pm = per.get((s.id, scen))
            if not pm:
                continue
            rows += [dict(r, scenario=scen) for r in core.ensemble_stats(pm, options.baseline,
                                                                          [options.baseline, *options.periods])]
            cw = sorted({core.Window(*map(int, lab.split("-"))) for m in pm.values() for lab in m},
                        key=lambda w: (w.first_year, w.last_year))
            cw = [w for w in cw if w.last_year - w.first_year + 1 == core.CHART_WINDOW_YEARS
                  and (w.first_year - options.baseline.first_year) % core.CHART_STEP_YEARS == 0]
            chart[scen] = core.ensemble_stats(pm, options.baseline, cw)
        for key in keys_of.get(s.id, []):
            run = ens.runs[key[1]]
            notes += [f"{run.label}: {n}" for n in adjust_notes.get(key, [])]
        if not rows:
            continue
        station = stations[spec.record]
        out_sections.append(SectionOutlook(
            s.id, s.name, station.station, spec.record, spec.cold_neutral_C, spec.heat_neutral_C,
            spec.allowable_rise_K, spec.critical_rise_K, cells.get(s.id, []), rows, chart,
            list(dict.fromkeys(notes))))
        for n in dict.fromkeys(notes):
            if "fewer than" in n:
                warnings.append(_warning("short-baseline", n, f"{s.file.name} [sections.{s.id}]"))
    runs = [{"model": r.model, "member": r.member, "scenario": r.scenario, "calendar": r.calendar,
             "first_year": r.first_year, "last_year": r.last_year, "files": [str(f.path) for f in r.files]}
            for r in ens.runs]
    med = (lambda v: sorted(v)[len(v) // 2] if v else math.nan)
    timings = {
        "scan_s": t_scan - t_start, "stations_s": t_station - t_scan, "sections_s": t_spec - t_station,
        "tasks_s": t_done - t_spec, "total_s": time.perf_counter() - t_start,
        "adjust_tasks": len(adjust_futs), "screen_tasks": len(screen_futs),
        "section_runs": sum(len(k) for k in keys_of.values()),
        "adjust_task_median_s": med(adjust_seconds), "adjust_task_cpu_median_s": med(adjust_cpu),
        "adjust_task_read_median_s": med(read_seconds),
        "screen_per_section_run_median_s": med(screen_seconds),
        "screen_per_section_run_cpu_median_s": med(screen_cpu),
    }
    return OutlookResult(options, engine.json(), out_sections, problems, warnings, runs, timings)
