"""Future risk days of a section from a bias-adjusted climate-projection ensemble.

The pure core of ``trackplan outlook``. For each run (model and scenario,
:mod:`trackplan.projections`) and each section:

1. **Station record**: the section's own climate record gives the observed
   daily maximum and minimum air temperature (hourly records: the daily max/min
   of days with at least 75 % of their hours, as the rail temperature path does).
2. **Nearest grid cell** of the run's grid to the section (great circle, the
   distance is reported). A section farther from the cell centre than the
   cell's spacing to its nearest neighbour is outside the grid.
3. **Bias adjustment** (:func:`adjust_cell`), once per (station record, grid
   cell, model, scenario): quantile delta mapping (Cannon et al. 2015) of
   ``tasmax`` and of ``tasmin`` against the station's daily maximum and
   minimum, additive (temperatures), trained by calendar month over the common
   years of the baseline, the station record and the run, with 50 quantiles;
   the implementation is ``xsdba.QuantileDeltaMapping`` (Ouranos). The model's
   days are adjusted window by window (each 30-year chart window, the baseline
   and each period separately), so that the quantile of a day is taken within
   its own climate, as the method intends. For training, the station record is
   put on the model's calendar with ``xarray``'s ``convert_calendar`` (29
   February dropped for ``noleap``; for ``360_day``, 5 or 6 days a year dropped
   evenly through the year, ``align_on="year"``): only the training sample
   loses days, the model's days are all kept. A day whose adjusted minimum
   ends above its adjusted maximum (the two variables are adjusted apart) gets
   the minimum set to the maximum; their number is reported.
4. **Rail temperature**: the daily-extremes path of
   :func:`trackplan.railtemp.daily_extremes_path` (daily maximum air plus the
   steady solar excess at the clear-sky peak of that day of the year; daily
   minimum rail = minimum air), for the section's rail, place, track azimuth and
   shade. On a ``360_day`` or ``noleap`` calendar the model's day ``j`` of a year
   of ``L`` days takes the sun of day ``round((j - 0.5) 365 / L + 0.5)`` of a
   365-day year.
5. **Risk levels per day** with :func:`trackplan.screening.screen_days`, the
   section's thresholds exactly as ``screen`` uses them on days outside any
   disturbance window: the latest recorded neutral temperature (after the last
   destressing or renewal; or ``--neutral-override``) less the drift allowance on
   the heat side, undrifted on the cold side; the allowable and critical rises of
   the section's own ballast state. Dated events are not replayed into the future
   (no future tamping is known): the outlook is "the section as it is now, in
   that climate".
6. **Per window**: restrict, critical and cold days per year (mean over the
   complete model years; ``restrict`` counts days at restrict but below
   critical, as ``screen`` does), scaled to a 365.25-day year (a model year is
   one seasonal cycle: on a 360-day calendar each day stands for 365.25/360 real
   days), and the design maximum rail temperature: the Gumbel return level of
   the window's annual maxima for the section's return period (no milder than
   the window's highest day), as :mod:`trackplan.extremes` does for records.
7. **Ensemble** (:func:`ensemble_stats`): over the models of a scenario, the
   median and the 10th and 90th percentiles (linear interpolation) of each
   figure, and of each model's change from its own baseline window.

What bias adjustment can and cannot do
--------------------------------------
It makes the model's distribution of daily temperatures at the grid cell
match the station's over the baseline, month by month, and carries the
model's projected change of each quantile into the future. It cannot correct a
model's wrong change (the climate signal is the model's), nor sequences the
model gets wrong (heat-wave length, persistence), nor add local detail the
grid cannot see beyond what the station record shows; a short or
unrepresentative station record makes the adjustment uncertain. The spread
between models is part of the answer, not noise to be averaged away.

References
----------
Cannon, A. J., Sobie, S. R. and Murdock, T. Q. (2015). Bias correction of GCM
precipitation by quantile mapping: how well do methods preserve changes in
quantiles and extremes? Journal of Climate 28, 6938-6959.
Dupuis, E. et al. xsdba: statistical downscaling and bias adjustment
(Ouranos), ``xsdba.QuantileDeltaMapping``.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, fields

import numpy as np

from trackplan.errors import InputError
from trackplan.thermal import ColdSide

#: Quantiles of the QDM transfer function.
QDM_QUANTILES = 50
#: Fewer common baseline years than this is warned about.
MIN_TRAINING_YEARS = 20
#: Window length and step of the fan chart [years].
CHART_WINDOW_YEARS = 30
CHART_STEP_YEARS = 10
#: A model year counts when this fraction of its days has data.
YEAR_MIN_COVERAGE = 0.9
#: Step of the air-maximum grid of the tabulated rail temperature path [K].
RAIL_TABLE_STEP_K = 2.0
#: Days of a mean calendar year (counts per model year are scaled to it).
MEAN_YEAR_DAYS = 365.25
STATS = ("restrict_days_per_year", "critical_days_per_year", "cold_days_per_year", "design_max_rail_temperature_C")

BIAS_ADJUSTMENT_NOTE = (
    "Bias adjustment (quantile delta mapping, Cannon et al. 2015, by calendar month) makes each model's daily "
    "maximum and minimum at the grid cell match the station record over the baseline and carries the model's "
    "change of each quantile forward. It cannot correct a model's wrong climate change, its heat-wave length or "
    "persistence, nor detail the station record does not show; the spread between models is part of the answer.")


@dataclass(frozen=True)
class Window:
    first_year: int
    last_year: int

    @property
    def label(self) -> str:
        return f"{self.first_year}-{self.last_year}"

    @property
    def mid_year(self) -> float:
        return (self.first_year + self.last_year) / 2.0


def parse_window(text: str, where: str) -> Window:
    """``Y1-Y2`` (inclusive) as a :class:`Window`."""
    parts = str(text).strip().split("-")
    try:
        a, b = int(parts[0]), int(parts[1])
        if len(parts) != 2:
            raise ValueError
    except (ValueError, IndexError):
        raise InputError(f"cannot read {text!r} as years Y1-Y2, e.g. 1991-2020", where) from None
    if not (1800 <= a <= b <= 2300):
        raise InputError(f"{text!r}: need 1800 <= Y1 <= Y2 <= 2300", where)
    if b - a + 1 < 10:
        raise InputError(f"{text!r} is {b - a + 1} years; a period needs at least 10 (30 is usual)", where)
    return Window(a, b)


@dataclass(frozen=True, kw_only=True)
class SectionSpec:
    """What the outlook needs of a section (SI; thresholds as screening uses them).

    Built by keyword only; the cold-side figures (steel, rail area, longitudinal
    resistance, gap and tension limits) travel as one :class:`trackplan.thermal.ColdSide`.
    """

    id: str
    name: str
    record: str  # path of the station record
    latitude_deg: float
    longitude_deg: float
    profile: object  # trackplan.rails.RailProfile
    site: object  # trackplan.railtemp.RailSite
    heat_neutral_C: float
    cold_neutral_C: float
    allowable_rise_K: float
    critical_rise_K: float
    cold: ColdSide
    return_period_years: float
    watch_fraction: float


@dataclass
class StationDaily:
    """Observed daily air extremes of a station record (Gregorian dates)."""

    path: str
    station: str
    latitude_deg: float | None
    longitude_deg: float | None
    elevation_m: float
    dates: np.ndarray  # datetime64[D]
    tmax_C: np.ndarray
    tmin_C: np.ndarray
    warnings: list = field(default_factory=list)


def station_daily(path: str) -> StationDaily:
    """Read a station record and return its daily maximum and minimum air temperature."""
    from trackplan import weather
    from trackplan.railtemp import _hourly_to_daily_air

    df, meta = weather.read_record(path, where=str(path))
    if meta.get("typical_year"):
        raise InputError("a typical-year file cannot train a bias adjustment (it is not a sequence of real "
                         "years); give the section a multi-year station record", str(path))
    daily = _hourly_to_daily_air(df) if meta.get("time_step") == "hourly" else df
    if "tmax_C" not in daily.columns or "tmin_C" not in daily.columns:
        raise InputError("the record gives no daily maximum and minimum air temperature", str(path))
    return StationDaily(str(path), str(meta.get("station") or path), meta.get("latitude_deg"),
                        meta.get("longitude_deg"), float(meta.get("elevation_m") or 0.0),
                        np.asarray(daily.index.values, dtype="datetime64[D]"),
                        daily["tmax_C"].to_numpy(float), daily["tmin_C"].to_numpy(float),
                        list(meta.get("warnings", [])))


@dataclass
class AdjustedWindow:
    window: Window
    year: np.ndarray
    day_of_year: np.ndarray
    days_in_year: np.ndarray
    tmax_C: np.ndarray  # float32
    tmin_C: np.ndarray


@dataclass
class AdjustedRun:
    """The bias-adjusted daily air extremes of one (station record, grid cell, run)."""

    key: tuple
    calendar: str
    training: Window
    windows: dict  # label -> AdjustedWindow
    notes: list
    seconds: float = 0.0  # wall time of the task [s]
    cpu_seconds: float = 0.0  # processor time of the task [s]
    read_seconds: float = 0.0  # wall time reading the cell [s]


def _model_time(year: np.ndarray, calendar: str):
    """cftime dates of a full model calendar starting on 1 January of ``year[0]``."""
    import cftime

    return cftime.num2date(np.arange(year.size, dtype=float), f"days since {int(year[0])}-01-01", calendar)


def obs_on_model_calendar(dates, calendar: str, model_year, model_doy) -> np.ndarray:
    """Position in the model's series of each station day, or -1 where the model calendar has no such day.

    ``noleap``/``365_day``: 29 February has no place. ``360_day``: day ``d`` of a
    year of ``N`` days goes to day ``floor((d - 1) 360 / N) + 1``; of the days
    landing on one model day only the first is kept (5 or 6 a year dropped,
    spread evenly, like ``align_on="year"`` of xarray's ``convert_calendar``).
    Gregorian-type and ``all_leap`` calendars keep the date.
    """
    import pandas as pd

    idx = pd.DatetimeIndex(np.asarray(dates, dtype="datetime64[D]"))
    y = idx.year.to_numpy()
    d = idx.day_of_year.to_numpy()
    leap = idx.is_leap_year
    if calendar in ("noleap", "365_day"):
        keep = ~((idx.month == 2) & (idx.day == 29))
        d = np.where(leap & (d > 59), d - 1, d)
    elif calendar == "360_day":
        n = np.where(leap, 366, 365)
        d = (d - 1) * 360 // n + 1
        keep = np.r_[True, (y[1:] != y[:-1]) | (d[1:] != d[:-1])]
    elif calendar in ("all_leap", "366_day"):
        d = np.where(~leap & (d > 59), d + 1, d)
        keep = np.ones(y.size, dtype=bool)
    else:
        keep = np.ones(y.size, dtype=bool)
    keys = np.asarray(model_year, dtype=np.int64) * 1000 + np.asarray(model_doy)
    want = y.astype(np.int64) * 1000 + d
    pos = np.searchsorted(keys, want)
    pos = np.clip(pos, 0, keys.size - 1)
    found = keep & (keys[pos] == want)
    return np.where(found, pos, -1)


def _coord_time(year, doy, calendar: str):
    """cftime dates from years and days of the year on a fixed-length calendar."""
    import cftime

    year = np.asarray(year, dtype=np.int64)
    doy = np.asarray(doy, dtype=np.int64)
    y0 = int(year.min())
    n = {"360_day": 360, "noleap": 365, "365_day": 365}.get(calendar, 366)
    return cftime.num2date((year - y0) * n + doy - 1, f"days since {y0}-01-01", calendar)


def adjust_cell(obs: StationDaily, series, baseline: Window, windows: list, key: tuple = ()) -> AdjustedRun:
    """Quantile delta mapping of one cell's tasmax and tasmin against the station.

    Parameters
    ----------
    obs : StationDaily
        Observed daily maximum and minimum air temperature [degC].
    series : trackplan.projections.CellSeries
        The run's daily series at the cell [degC], on its calendar.
    baseline : Window
        Training years (cut to the years the station and the run share).
    windows : list of Window
        Windows adjusted one by one (outside the run's years: left out).
    key : tuple
        Label carried into the result.

    Returns
    -------
    AdjustedRun

    Raises
    ------
    InputError
        No year of the baseline is shared by the station record and the run.
    """
    import time

    import xarray as xr
    import xsdba

    t0 = time.perf_counter()
    cal = series.calendar
    obs_years = obs.dates.astype("datetime64[Y]").astype(int) + 1970
    first = max(baseline.first_year, int(obs_years.min()), int(series.year.min()))
    last = min(baseline.last_year, int(obs_years.max()), int(series.year.max()))
    notes = []
    if first > last:
        raise InputError(
            f"no overlap for the baseline {baseline.label}: the station record covers {obs_years.min()}-"
            f"{obs_years.max()} and the run {series.year.min()}-{series.year.max()}", obs.path)
    if last - first + 1 < MIN_TRAINING_YEARS:
        notes.append(f"bias adjustment trained on {last - first + 1} years ({first}-{last}), fewer than "
                     f"{MIN_TRAINING_YEARS}: uncertain")
    elif (first, last) != (baseline.first_year, baseline.last_year):
        notes.append(f"bias adjustment trained on {first}-{last}, the part of the baseline {baseline.label} "
                     "the station record and the run share")
    # one coordinate calendar for the method (only the month of a day matters to it): the model's own
    # for fixed-length years, all_leap (29 February kept where it exists) for Gregorian-type ones
    ccal = cal if cal in ("noleap", "365_day", "360_day", "all_leap", "366_day") else "all_leap"
    mtime = _model_time(series.year, cal)
    month = np.array([t.month for t in mtime])
    mday = np.array([t.day for t in mtime])
    cum = np.cumsum([0] + ([30] * 12 if ccal == "360_day" else [31, 28 if ccal in ("noleap", "365_day") else 29,
                                                                  31, 30, 31, 30, 31, 31, 30, 31, 30, 31]))
    cdoy = cum[month - 1] + mday  # day of year on the coordinate calendar
    clen = int(cum[-1])
    pos = obs_on_model_calendar(obs.dates, cal, series.year, series.day_of_year)
    sel = (obs_years >= first) & (obs_years <= last) & (pos >= 0)
    n_in = int(((obs_years >= first) & (obs_years <= last)).sum())
    if int(sel.sum()) < n_in:
        notes.append(f"{n_in - int(sel.sum())} of {n_in} station days have no place on the model's {cal} "
                     "calendar and are left out of the training")
    pos = pos[sel]
    tr_time = _coord_time(series.year[pos], cdoy[pos], ccal)
    # windows of one length are adjusted together, stacked on a 'window' dimension
    usable = [w for w in windows if w.first_year >= series.year.min() and w.last_year <= series.year.max()]
    by_len: dict = {}
    for w in usable:
        by_len.setdefault(w.last_year - w.first_year + 1, []).append(w)
    result = {}
    for var, o, m in (("tasmax", obs.tmax_C, series.tasmax_C), ("tasmin", obs.tmin_C, series.tasmin_C)):
        ok = np.isfinite(o[sel]) & np.isfinite(m[pos])
        ref = xr.DataArray(o[sel][ok], dims="time", coords={"time": tr_time[ok]}, attrs={"units": "degC"})
        hist = xr.DataArray(m[pos][ok], dims="time", coords={"time": tr_time[ok]}, attrs={"units": "degC"})
        qdm = xsdba.QuantileDeltaMapping.train(ref, hist, nquantiles=QDM_QUANTILES, group="time.month", kind="+")
        for nyears, ws in by_len.items():
            stack = np.full((len(ws), nyears * clen), np.nan)
            places = []
            for k, w in enumerate(ws):
                idx = np.flatnonzero((series.year >= w.first_year) & (series.year <= w.last_year))
                tpos = (series.year[idx] - w.first_year) * clen + cdoy[idx] - 1
                stack[k, tpos] = m[idx]
                places.append((idx, tpos))
            ty = np.repeat(np.arange(2001, 2001 + nyears), clen)
            td = np.tile(np.arange(1, clen + 1), nyears)
            sim = xr.DataArray(stack, dims=("window", "time"), coords={"time": _coord_time(ty, td, ccal)},
                               attrs={"units": "degC"})
            adj = np.asarray(qdm.adjust(sim, interp="nearest", extrapolation="constant")
                             .transpose("window", "time").values, dtype=np.float32)
            for k, w in enumerate(ws):
                idx, tpos = places[k]
                result[(var, w)] = (idx, adj[k, tpos])
    out_windows = {}
    swapped = 0
    for w in usable:
        if ("tasmax", w) not in result:
            continue
        idx, tx = result[("tasmax", w)]
        _, tn = result[("tasmin", w)]
        bad = np.isfinite(tx) & np.isfinite(tn) & (tn > tx)
        swapped += int(bad.sum())
        tn = np.where(bad, tx, tn)
        out_windows[w.label] = AdjustedWindow(w, series.year[idx], series.day_of_year[idx],
                                              series.days_in_year[idx], tx, tn)
    if swapped:
        notes.append(f"{swapped} adjusted day(s) with the minimum above the maximum: minimum set to the maximum")
    return AdjustedRun(key, cal, Window(first, last), out_windows, notes + list(series.notes),
                       time.perf_counter() - t0)


def reference_days(day_of_year, days_in_year) -> np.ndarray:
    """Day (1..365) of the 365-day reference year whose sun stands for each model day."""
    j = np.asarray(day_of_year, dtype=float)
    L = np.asarray(days_in_year, dtype=float)
    return np.clip(np.round((j - 0.5) * 365.0 / L + 0.5), 1, 365).astype(int)


def rail_excess_table(spec: SectionSpec, lo_C: float, hi_C: float):
    """Rail maximum less air maximum [K] by reference day (365) and air maximum on a grid [degC].

    Each entry is :func:`trackplan.railtemp.daily_extremes_path` for that day of
    the year and that air maximum (the 2001 calendar stands for every year).
    """
    import pandas as pd

    from trackplan.railtemp import daily_extremes_path

    step = RAIL_TABLE_STEP_K
    lo = math.floor(lo_C / step) * step
    hi = max(math.ceil(hi_C / step) * step, lo + step)
    grid = np.arange(lo, hi + step / 2, step)
    idx = pd.Timestamp("2001-01-01") + pd.to_timedelta(np.repeat(np.arange(365), grid.size), unit="D")
    t = np.tile(grid, 365)
    out, _ = daily_extremes_path(pd.DataFrame({"tmax_C": t, "tmin_C": t}, index=idx), {}, spec.profile, spec.site)
    return grid, out["rail_max_C"].to_numpy(float).reshape(365, grid.size) - grid[None, :]


def rail_path(tmax_C, tmin_C, day_of_year, days_in_year, spec: SectionSpec, table=None):
    """Daily maximum and minimum rail temperature [degC] from adjusted daily air extremes [degC].

    Notes
    -----
    The daily-extremes path ``T_rail,max = T_ss(T_air,max, peak sun of the day)``
    is tabulated per reference day on air maxima every
    :data:`RAIL_TABLE_STEP_K` and interpolated linearly in the air maximum (the
    excess over the air changes slowly with it: the largest difference from the
    direct evaluation is under 0.01 K, see the tests); ``T_rail,min = T_air,min``.
    ``table``: a :func:`rail_excess_table` of the section covering the air maxima given
    (made here when None).
    """
    tmax = np.asarray(tmax_C, dtype=float)
    ok = np.isfinite(tmax)
    rmax = np.full(tmax.shape, np.nan)
    if ok.any():
        grid, table = table or rail_excess_table(spec, float(tmax[ok].min()), float(tmax[ok].max()))
        if tmax[ok].min() < grid[0] or tmax[ok].max() > grid[-1]:
            raise ValueError("the rail excess table does not cover the air maxima")
        ref = reference_days(day_of_year, days_in_year)[ok] - 1
        pos = (tmax[ok] - grid[0]) / RAIL_TABLE_STEP_K
        k = np.clip(np.floor(pos).astype(int), 0, grid.size - 2)
        w = pos - k
        rmax[ok] = tmax[ok] + table[ref, k] * (1.0 - w) + table[ref, k + 1] * w
    return rmax, np.asarray(tmin_C, dtype=float)


def window_figures(rail_max_C, rail_min_C, year, days_in_year, spec: SectionSpec) -> dict:
    """Restrict, critical and cold days per year and the design maximum of one window."""
    from trackplan import extremes, screening

    days = screening.screen_days(
        rail_max_C, rail_min_C, heat_neutral_C=spec.heat_neutral_C, cold_neutral_C=spec.cold_neutral_C,
        allowable_rise_K=spec.allowable_rise_K, critical_rise_K=spec.critical_rise_K,
        **{f.name: getattr(spec.cold, f.name) for f in fields(spec.cold)},
        watch_fraction=spec.watch_fraction)
    uy, first_idx, inv = np.unique(year, return_index=True, return_inverse=True)
    season = np.asarray(days_in_year)[first_idx]
    counts = screening.annual_counts(year, days.valid, days.heat_level, days.cold, season, (uy, inv))
    ok = counts.screened_days >= YEAR_MIN_COVERAGE * counts.season_days
    if not ok.any():
        return {"years": 0}
    scale = MEAN_YEAR_DAYS / float(np.mean(counts.season_days[ok]))
    maxima = np.full(uy.size, np.nan)
    np.fmax.at(maxima, inv, np.where(days.valid, rail_max_C, np.nan))
    annual = maxima[ok]
    design = math.nan
    if np.isfinite(annual).sum() >= extremes.MIN_FIT_YEARS:
        fit = extremes.fit_extremes(annual, "gumbel", "max", ci_method="none")
        design = max(float(fit.return_level(spec.return_period_years)), float(np.nanmax(annual)))
    return {
        "years": int(ok.sum()),
        "restrict_days_per_year": float(counts.restrict_days[ok].mean() * scale),
        "critical_days_per_year": float(counts.critical_days[ok].mean() * scale),
        "cold_days_per_year": float(counts.cold_days[ok].mean() * scale),
        "design_max_rail_temperature_C": design,
    }


def _joined(adj: AdjustedRun):
    wins = list(adj.windows.values())
    cat = lambda name: np.concatenate([getattr(w, name) for w in wins])
    return wins, cat("tmax_C"), cat("tmin_C"), cat("day_of_year"), cat("days_in_year"), \
        np.cumsum([0] + [w.tmax_C.size for w in wins])


def screen_runs(adjusted: dict, plan: list) -> dict:
    """Figures of sections on several adjusted runs.

    Parameters
    ----------
    adjusted : dict
        ``key -> AdjustedRun`` (other values, e.g. an error, are skipped).
    plan : list of (SectionSpec, list of key)
        Each section with the keys of the runs it is on.

    Returns
    -------
    dict
        ``(section id, key) -> {window label: figures}``. The rail excess table of
        a section is made once for all its runs (it depends on the section only).
    """
    joined = {k: _joined(a) for k, a in adjusted.items() if isinstance(a, AdjustedRun) and a.windows}
    out = {}
    for spec, keys in plan:
        keys = [k for k in keys if k in joined]
        if not keys:
            continue
        lo = min(float(np.nanmin(joined[k][1])) for k in keys)
        hi = max(float(np.nanmax(joined[k][1])) for k in keys)
        table = rail_excess_table(spec, lo, hi)
        for k in keys:
            wins, tmax, tmin, doy, dly, bounds = joined[k]
            rmax, rmin = rail_path(tmax, tmin, doy, dly, spec, table)
            out[(spec.id, k)] = {w.window.label: window_figures(rmax[a:b], rmin[a:b], w.year, w.days_in_year, spec)
                                 for w, a, b in zip(wins, bounds[:-1], bounds[1:])}
    return out


def screen_run(adj: AdjustedRun, specs: list) -> dict:
    """Figures of every section on one adjusted run: ``{section id: {window label: figures}}``."""
    res = screen_runs({0: adj}, [(spec, [0]) for spec in specs])
    return {spec.id: res.get((spec.id, 0), {}) for spec in specs}


def percentiles(values) -> dict | None:
    """``{median, p10, p90}`` of finite values (linear interpolation), or None."""
    v = np.asarray([x for x in values if x is not None and math.isfinite(x)], dtype=float)
    if v.size == 0:
        return None
    p10, p50, p90 = np.percentile(v, [10, 50, 90])
    return {"median": float(p50), "p10": float(p10), "p90": float(p90)}


def ensemble_stats(per_model: dict, baseline: Window, windows: list) -> list[dict]:
    """Ensemble figures of one section and scenario.

    Parameters
    ----------
    per_model : dict
        ``{model: {window label: figures}}`` (from :func:`screen_run`).
    baseline : Window
    windows : list of Window
        Windows to report (the baseline among them or not).

    Returns
    -------
    list of dict
        Per window: ``period``, ``models`` (count with figures), each statistic
        as ``{median, p10, p90}`` and ``change_from_baseline`` of each.
    """
    rows = []
    for w in windows:
        models = [m for m, per in per_model.items() if per.get(w.label, {}).get("years")]
        row = {"period": w.label, "first_year": w.first_year, "last_year": w.last_year,
               "baseline": w == baseline, "models": len(models), "model_names": sorted(models)}
        change = {}
        for s in STATS:
            row[s] = percentiles(per_model[m][w.label][s] for m in models)
            deltas = []
            for m in models:
                b = per_model[m].get(baseline.label, {})
                if b.get("years"):
                    deltas.append(per_model[m][w.label][s] - b[s])
            key = s.replace("_C", "_K") if s.endswith("_C") else s
            change[key] = percentiles(deltas)
        row["change_from_baseline"] = change
        rows.append(row)
    return rows


def chart_windows(first_year: int, last_year: int, baseline: Window) -> list:
    """30-year windows every 10 years, aligned on the baseline's start, inside the years given."""
    out = []
    start = baseline.first_year - CHART_STEP_YEARS * ((baseline.first_year - first_year) // CHART_STEP_YEARS)
    while start + CHART_WINDOW_YEARS - 1 <= last_year:
        if start >= first_year:
            out.append(Window(start, start + CHART_WINDOW_YEARS - 1))
        start += CHART_STEP_YEARS
    return out
