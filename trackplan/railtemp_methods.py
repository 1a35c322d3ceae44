"""The rail temperature methods: a weather record -> daily rail extremes.

1. the transient heat balance of an hourly record;
2. the daily-extremes path (daily air extremes plus the steady solar excess at
   the clear-sky peak of the date);
3. the rule of thumb air + 30 degF.

Each ``run(df, meta, profile, site, params, prepared) -> (daily, warnings)`` is
registered in :data:`trackplan.railtemp.METHODS`. Equations and sources in the
documentation of :mod:`trackplan.railtemp` and docs/methods/rail-temperature.md.
"""

from __future__ import annotations

from collections import OrderedDict
from dataclasses import dataclass

import numpy as np

from trackplan.errors import InputError
from trackplan.notices import Notice
from trackplan.rails import RailProfile
from trackplan.railtemp_forcing import PreparedRecord, _clear_sky, _prepared_for, solar_position
from trackplan.railtemp_physics import (
    _K0,
    AIR_PLUS_30F_K,
    DEFAULT_PARAMETERS,
    HeatBalanceParameters,
    RailSite,
    _assemble,
    _coefficients,
    _steady,
    exponential_scan,
    rail_geometry,
)


# --------------------------------------------------------------------------
# Method 1: transient heat balance
# --------------------------------------------------------------------------


def transient_rail_temperature(prep: PreparedRecord, profile: RailProfile, site: RailSite,
                               params: HeatBalanceParameters = DEFAULT_PARAMETERS) -> np.ndarray:
    """Rail temperature at each step of a prepared record [degC] (array).

    Notes
    -----
    Over each step the forcing is held constant and the radiation term is
    linearised about that step's steady-state temperature ``T_ss`` (tangent
    coefficient ``4 eps sigma P_r T_ss**3``), so the balance becomes
    ``C dT/dt = -K (T - T_ss)`` with ``C = m' c`` and
    ``K = h_c P_c + 4 eps sigma P_r T_ss**3``. Its exact solution over a step
    ``dt`` is the exponential step

        T[n] = T_ss[n] + (T[n-1] - T_ss[n]) exp(-dt K / C),

    stable for any step (the time constant ``C/K`` is about an hour, so plain
    explicit Euler at 1 h would not be). Under constant forcing ``T`` tends to
    the nonlinear steady state exactly. The recurrence is evaluated with
    :func:`exponential_scan`. The transient restarts at ``T_ss`` at the first
    step, after a gap and after missing forcing; steps with missing forcing
    are NaN.
    """
    geometry = rail_geometry(profile, params)
    sky = prep.sky(params)
    c = _assemble(sky, geometry, site, params)
    T_ss, K = _steady(sky.ta_K, c)
    valid = np.isfinite(T_ss)
    log_a = prep.step_s * K
    log_a *= -1.0 / geometry.heat_capacity_J_per_m_K
    restart = prep.restart | ~valid
    restart[1:] |= ~valid[:-1]
    log_a[restart] = -np.inf
    T = exponential_scan(log_a, np.where(valid, -np.expm1(log_a) * T_ss, 0.0))
    T[~valid] = np.nan
    return T - _K0


def rail_temperature_hourly(df, meta: dict, profile: RailProfile, site: RailSite,
                            params: HeatBalanceParameters = DEFAULT_PARAMETERS,
                            prepared: PreparedRecord | None = None):
    """Transient rail temperature at each timestamp of an hourly record.

    Parameters
    ----------
    df : pandas.DataFrame
        Hourly record (see :func:`prepare_solar` for the columns).
    meta : dict
        Reader metadata.
    profile : RailProfile
        Rail section.
    site : RailSite
        Place, track azimuth, shade, surface properties.
    params : HeatBalanceParameters
        Model coefficients.
    prepared : PreparedRecord, optional
        Output of :func:`prepare_solar` for this record and place (reused).

    Returns
    -------
    pandas.Series
        ``rail_temperature_C`` [degC] on the record's index; ``attrs`` holds
        ``warnings`` (list of str).

    Notes
    -----
    See :func:`steady_rail_temperature` for the balance and
    :func:`transient_rail_temperature` for the integrator.
    """
    import pandas as pd

    prep = prepared if prepared is not None else _prepared_for(df, meta, site, params)
    T = transient_rail_temperature(prep, profile, site, params)
    s = pd.Series(T, index=df.index, name="rail_temperature_C")
    s.attrs["warnings"] = list(prep.warnings)
    return s


def _daily_from_hourly(prep: PreparedRecord, rail_C: np.ndarray, min_fraction: float = 0.75):
    """Daily max/min of rail and air temperature; days with too few samples are NaN.

    The air extremes and the sample counts do not depend on the rail and are
    computed once per prepared record.
    """
    import pandas as pd

    starts = prep.day_starts
    cached = prep._skies.get("daily_air")
    ok = np.isfinite(rail_C)
    if cached is None or not np.array_equal(cached[0], ok):
        air = prep.air_C
        counts = np.add.reduceat(ok.astype(float), starts)
        air_max = np.maximum.reduceat(np.where(ok, air, -np.inf), starts)
        air_min = np.minimum.reduceat(np.where(ok, air, np.inf), starts)
        short = counts < min_fraction * prep.samples_per_day
        cached = (ok, short, air_max, air_min)
        prep._skies["daily_air"] = cached
    _, short, air_max, air_min = cached
    if ok.all():
        rmax = np.maximum.reduceat(rail_C, starts)
        rmin = np.minimum.reduceat(rail_C, starts)
    else:
        rmax = np.maximum.reduceat(np.where(ok, rail_C, -np.inf), starts)
        rmin = np.minimum.reduceat(np.where(ok, rail_C, np.inf), starts)
    cols = {"rail_max_C": rmax, "rail_min_C": rmin, "air_max_C": air_max.copy(), "air_min_C": air_min.copy()}
    for v in cols.values():
        v[short] = np.nan
    return pd.DataFrame(cols, index=prep.dates), int(short.sum())


def _heat_balance_daily(df, meta, profile, site, params, prepared):
    prep = prepared if prepared is not None else _prepared_for(df, meta, site, params)
    rail = transient_rail_temperature(prep, profile, site, params)
    daily, n_short = _daily_from_hourly(prep, rail)
    warnings = list(prep.warnings)
    if n_short:
        warnings.append(Notice(f"{n_short} day(s) with less than 75% of their hours left out of the daily extremes", 'incomplete_years'))
    return daily, warnings


# --------------------------------------------------------------------------
# Method 2: daily-extremes path
# --------------------------------------------------------------------------


def sunshine_factor(sunshine_fraction):
    """Irradiance on a day with relative sunshine ``n/N`` relative to a clear day.

    ``(a + b s) / (a + b)`` with the Angstrom-Prescott coefficients
    a = 0.25, b = 0.50 (FAO-56, eq. 35): 1 for a sunny day, 1/3 for an
    overcast one.
    """
    s = np.clip(np.asarray(sunshine_fraction, dtype=float), 0.0, 1.0)
    return (0.25 + 0.50 * s) / 0.75


def cloud_factor(cloud_fraction):
    """Irradiance under cloud cover ``C`` (0-1) relative to clear sky.

    ``1 - 0.75 C**3.4`` (Kasten & Czeplak 1980).
    """
    c = np.clip(np.asarray(cloud_fraction, dtype=float), 0.0, 1.0)
    return 1.0 - 0.75 * c**3.4


@dataclass(frozen=True)
class _PeakSun:
    """Clear-sky sun at the moment of largest rail excess, by day of year (1..366)."""

    ghi: np.ndarray
    dni: np.ndarray
    dhi: np.ndarray
    elev: np.ndarray
    az: np.ndarray


_PEAK_CACHE: "OrderedDict[tuple, tuple]" = OrderedDict()


def _clear_sky_year(site: RailSite, step_min: int = 10):
    """Clear-sky sun over a reference (non-leap) year every ``step_min`` minutes."""
    import pandas as pd

    key = (round(site.latitude_deg, 4), round(site.longitude_deg, 4), round(site.elevation_m, 0), step_min)
    hit = _PEAK_CACHE.get(key)
    if hit is not None:
        return hit
    off = round(site.longitude_deg / 15.0)
    tz = "UTC" if off == 0 else f"Etc/GMT{-off:+d}"
    times = pd.date_range("2001-01-01", "2001-12-31 23:59", freq=f"{step_min}min", tz=tz)
    elev, az = solar_position(times, site.latitude_deg, site.longitude_deg, site.elevation_m)
    up = elev > 0
    t_up, e_up, a_up = times[up], elev[up], az[up]
    ghi, dni, dhi = _clear_sky(t_up, site, e_up, a_up)
    doy = t_up.day_of_year.to_numpy()
    hit = (doy, ghi, dni, dhi, e_up, a_up)
    _PEAK_CACHE[key] = hit
    while len(_PEAK_CACHE) > 8:
        _PEAK_CACHE.popitem(last=False)
    return hit


def _peak_sun(profile: RailProfile, site: RailSite, params: HeatBalanceParameters) -> _PeakSun:
    """For each day of year, the clear-sky moment that heats this rail most."""
    doy, ghi, dni, dhi, elev, az = _clear_sky_year(site)
    geometry = rail_geometry(profile, params)
    ref_air = np.full(ghi.shape, 25.0)
    wind = np.full(ghi.shape, params.daily_wind_10m_m_s)
    c = _coefficients(ref_air, ghi, dni, dhi, wind, elev, az, geometry, site, params)
    T, _ = _steady(ref_air + _K0, c)
    out = {k: np.zeros(367) for k in ("ghi", "dni", "dhi", "elev", "az")}
    order = np.lexsort((T, doy))  # by day, then by rail temperature
    last = np.flatnonzero(np.r_[np.diff(doy[order]) != 0, True])
    best = order[last]
    days = doy[best]
    out["ghi"][days], out["dni"][days], out["dhi"][days] = ghi[best], dni[best], dhi[best]
    out["elev"][days], out["az"][days] = elev[best], az[best]
    # day 366 of a leap year: use day 365
    for k in out:
        out[k][366] = out[k][365]
    return _PeakSun(out["ghi"], out["dni"], out["dhi"], out["elev"], out["az"])


def daily_extremes_path(daily, meta: dict, profile: RailProfile, site: RailSite,
                        params: HeatBalanceParameters = DEFAULT_PARAMETERS):
    """Daily rail extremes from daily maximum and minimum air temperature.

    Parameters
    ----------
    daily : pandas.DataFrame
        DatetimeIndex of local dates; ``tmax_C``, ``tmin_C`` [degC]; optional
        ``sunshine_fraction`` or ``cloud_fraction`` (0-1).
    meta : dict
        Reader metadata.
    profile : RailProfile
    site : RailSite
    params : HeatBalanceParameters

    Returns
    -------
    (pandas.DataFrame, list of str)
        Columns ``rail_max_C``, ``rail_min_C``, ``air_max_C``, ``air_min_C``
        [degC] on the dates; and the warnings.

    Notes
    -----
    ``rail_max = T_ss(tmax, sun at the clear-sky moment of that date that
    heats this rail most, wind daily_wind_10m_m_s)``: the steady balance of
    :func:`steady_rail_temperature` with the air at the day's maximum. The
    sun is Ineichen clear sky (pvlib, Linke turbidity climatology), reduced by
    :func:`sunshine_factor` or :func:`cloud_factor` where the record gives
    them. Clear sky, the air maximum at the sun's peak and a light breeze make
    the path conservative (warm). ``rail_min = tmin``: at night the rail runs at
    or slightly below the air (docs/methods/rail-temperature.md).
    """
    import pandas as pd

    for col in ("tmax_C", "tmin_C"):
        if col not in daily.columns:
            raise InputError(f"a daily record needs a {col} column", str(meta.get("path") or "record"))
    warnings: list[str] = []
    peak = _peak_sun(profile, site, params)
    doy = pd.DatetimeIndex(daily.index).day_of_year.to_numpy()
    factor = np.ones(len(daily))
    for col, fn, label in (("sunshine_fraction", sunshine_factor, "sunshine"), ("cloud_fraction", cloud_factor, "cloud")):
        if col in daily.columns:
            v = daily[col].to_numpy(float)
            miss = ~np.isfinite(v)
            factor = np.where(miss, 1.0, fn(np.where(miss, 0.0, v)))
            if miss.any():
                warnings.append(Notice(f"{int(miss.sum())} day(s) without a {label} value taken as clear sky", 'assumed_input'))
            break
    else:
        warnings.append(Notice("daily record without sunshine or cloud: clear sky assumed every day (conservative)", 'assumed_input'))
    tmax = daily["tmax_C"].to_numpy(float)
    tmin = daily["tmin_C"].to_numpy(float)
    geometry = rail_geometry(profile, params)
    wind = np.full(len(daily), params.daily_wind_10m_m_s)
    c = _coefficients(tmax, peak.ghi[doy] * factor, peak.dni[doy] * factor, peak.dhi[doy] * factor, wind,
                      peak.elev[doy], peak.az[doy], geometry, site, params)
    T, _ = _steady(tmax + _K0, c)
    out = pd.DataFrame(
        {"rail_max_C": T - _K0, "rail_min_C": tmin, "air_max_C": tmax, "air_min_C": tmin},
        index=pd.DatetimeIndex(daily.index, name="date"),
    )
    return out, warnings


def _hourly_to_daily_air(df):
    """Daily max/min air temperature of an hourly record (local dates)."""
    import pandas as pd

    idx = df.index.tz_localize(None) if getattr(df.index, "tz", None) is not None else df.index
    s = pd.Series(df["air_temperature_C"].to_numpy(float), index=idx)
    g = s.groupby(idx.normalize())
    cnt = g.count()
    out = pd.DataFrame({"tmax_C": g.max(), "tmin_C": g.min()})
    per_day = cnt.max() if len(cnt) else 24
    out.loc[cnt < 0.75 * per_day, :] = np.nan
    out.index = pd.DatetimeIndex(out.index, name="date")
    return out


def _daily_extremes_method(df, meta, profile, site, params, prepared):
    if meta.get("time_step") == "hourly":
        daily = _hourly_to_daily_air(df)
        extra = ["daily-extremes method on an hourly record: daily max/min air with clear-sky peak sun "
                 "(the record's irradiance and wind are not used)"]
    else:
        daily, extra = df, []
    out, w = daily_extremes_path(daily, meta, profile, site, params)
    return out, extra + w


# --------------------------------------------------------------------------
# Method 3: rules of thumb
# --------------------------------------------------------------------------


def _air_plus_30F(df, meta, profile, site, params, prepared):
    import pandas as pd

    daily = _hourly_to_daily_air(df) if meta.get("time_step") == "hourly" else df
    for col in ("tmax_C", "tmin_C"):
        if col not in daily.columns:
            raise InputError(f"a daily record needs a {col} column", str(meta.get("path") or "record"))
    tmax = daily["tmax_C"].to_numpy(float)
    tmin = daily["tmin_C"].to_numpy(float)
    out = pd.DataFrame(
        {"rail_max_C": tmax + AIR_PLUS_30F_K, "rail_min_C": tmin, "air_max_C": tmax, "air_min_C": tmin},
        index=pd.DatetimeIndex(daily.index, name="date"),
    )
    w = ["air + 30 degF rule of thumb: ignores sun, wind, track orientation, shade and rail profile"]
    return out, w
