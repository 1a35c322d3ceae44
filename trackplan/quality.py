"""Record quality: is this a record of real weather, and what does it hold?

Checks run on every record read (:func:`trackplan.weather.read_record`), each a
warning with a stable code (:mod:`trackplan.notices`):

* ``smoothed_series``: a smoothed or climatological series (normals, a
  model's mean year, an interpolated product) is not a record of weather: its
  extremes are 10-15 K milder than any real year's. The statistic is the
  standard deviation of the day-to-day change of the daily maximum
  temperature, ``s_d = std(Tmax[d] - Tmax[d-1])`` [K], over the record (daily
  maximum of the hourly air temperature for hourly records). Below
  :data:`SMOOTH_STD_K` the series is taken as smoothed. Measured on real
  records shipped by registry packages (``tests/test_quality.py``): Seattle
  daily station record 2012-2015 (vega_datasets ``seattle-weather.csv``)
  2.9 K; TMY3 Sand Point, AK and Greensboro, NC (pvlib data) 2.3 K and
  4.2 K; against 0.13 K and 0.09 K for the hourly climatological series of
  Seattle and San Francisco 2010 (vega_datasets ``seattle-temps.csv``,
  ``sf-temps.csv``). The threshold 0.5 K lies a factor of about 4.5 below
  the quietest real record measured and about 4 above the smoothed ones (a
  planning choice; a very quiet tropical maritime station may come nearer
  to it, so the warning does not refuse the record);
* ``typical_year``: a typical-year file (TMY3, EPW) is made of months from
  different years: it stands for no year and has no return level;
* ``short_record``: fewer than :data:`SHORT_YEARS` complete years (the
  design values say more for the return period asked, :mod:`trackplan.extremes`);
* ``repeated_years``: two calendar years of the record with the same daily
  maxima (a year copied to fill a gap, or a typical year repeated) on at least
  :data:`REPEAT_SHARE` of their common days.

It also holds the irradiance timing check of hourly records (wrong time zone,
sign of the longitude, daylight-saving clock).

References
----------
Spencer, J. W. (1971). Fourier series representation of the position of the
sun. Search 2(5), 172 (equation of time, via Iqbal, M. (1983). An
Introduction to Solar Radiation. Academic Press).
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from trackplan.notices import Notice

#: Below this standard deviation of the day-to-day change of the daily maximum [K], a
#: series is smoothed or climatological (see the module documentation; a planning choice).
SMOOTH_STD_K = 0.5
#: At least this many day-to-day changes are needed for the smoothness statistic.
SMOOTH_MIN_DAYS = 60
#: Fewer complete years than this: the ``short_record`` warning (as trackplan.extremes.SHORT_RECORD_YEARS).
SHORT_YEARS = 10
#: Two years whose daily maxima agree (within 0.05 K) on this share of common days are repeats.
REPEAT_SHARE = 0.9


def daily_max_C(data: pd.DataFrame, meta: dict) -> pd.Series:
    """Daily maximum temperature [degC] of a record (daily ``tmax_C`` or the hourly air's)."""
    if "tmax_C" in data:
        return data["tmax_C"]
    s = data["air_temperature_C"]
    idx = s.index.tz_localize(None) if getattr(s.index, "tz", None) is not None else s.index
    s = pd.Series(s.to_numpy(float), index=idx)
    g = s.groupby(idx.normalize())
    out = g.max()
    n = g.count()
    steps = 86400.0 / float(meta.get("time_step_s") or 3600.0)
    return out.where(n >= 0.75 * steps)


def day_to_day_std_K(tmax: pd.Series) -> tuple[float, int]:
    """Standard deviation [K] of the change of the daily maximum from one day to the next.

    Parameters
    ----------
    tmax : pandas.Series
        Daily maximum temperature [degC] on a regular daily index (NaN: missing).

    Returns
    -------
    (float, int)
        ``std(Tmax[d] - Tmax[d-1])`` over pairs of consecutive days with both
        values [K] (ddof 1), and the number of pairs.
    """
    x = tmax.to_numpy(float)
    d = np.diff(x)
    d = d[np.isfinite(d)]
    if d.size < 2:
        return float("nan"), int(d.size)
    return float(np.std(d, ddof=1)), int(d.size)


def repeated_years(tmax: pd.Series) -> list[tuple[int, int]]:
    """Pairs of years whose daily maxima agree on :data:`REPEAT_SHARE` of common days (29 Feb dropped)."""
    idx = pd.DatetimeIndex(tmax.index)
    x = tmax.to_numpy(float)
    keep = ~((idx.month == 2) & (idx.day == 29)) & np.isfinite(x)
    year = idx.year.to_numpy()[keep]
    doy = idx.day_of_year.to_numpy()[keep] - 1
    leap = idx.is_leap_year[keep]
    doy = np.where(leap & (doy > 59), doy - 1, doy)  # 29 Feb dropped: 1 March is day 59 every year
    y0 = int(year.min()) if year.size else 0
    ny = int(year.max()) - y0 + 1 if year.size else 0
    grid = np.full((ny, 365), np.nan)
    grid[year - y0, doy] = x[keep]
    years = {y0 + k: grid[k] for k in range(ny) if np.isfinite(grid[k]).sum() >= 180}
    ys = sorted(years)
    if len(ys) < 2:
        return []
    G = np.array([years[y] for y in ys])
    fin = np.isfinite(G)
    both = (fin[:, None, :] & fin[None, :, :]).sum(axis=2)
    with np.errstate(invalid="ignore"):
        same = (np.abs(G[:, None, :] - G[None, :, :]) < 0.05).sum(axis=2)
    i, j = np.nonzero(np.triu((both >= 180) & (same >= REPEAT_SHARE * np.maximum(both, 1)), k=1))
    return [(ys[a], ys[b]) for a, b in zip(i, j)]


def check_record(data: pd.DataFrame, meta: dict, label: str) -> list[Notice]:
    """The record-quality warnings of a record (see the module documentation)."""
    out: list[Notice] = []
    if meta.get("typical_year"):
        out.append(Notice(f"{label}: a typical-year file ({meta.get('source_format')}) is made of months from "
                          "different years; it stands for no particular year, so it gives observed extremes, "
                          "not return levels", "typical_year", label))
    n_years = len(meta.get("years") or [])
    if not meta.get("typical_year") and n_years < SHORT_YEARS:
        out.append(Notice(f"{label}: short record: {n_years} complete year(s), fewer than {SHORT_YEARS}; annual "
                          "extremes, counts and trends rest on few years", "short_record", label))
    if "tmax_C" not in data and "air_temperature_C" not in data:
        return out
    tmax = daily_max_C(data, meta)
    sd, n = day_to_day_std_K(tmax)
    meta["day_to_day_std_K"] = None if not np.isfinite(sd) else round(sd, 3)
    if n >= SMOOTH_MIN_DAYS and sd < SMOOTH_STD_K:
        out.append(Notice(
            f"{label}: the daily maximum changes from day to day with a standard deviation of {sd:.2f} K, "
            f"far below any weather station's (threshold {SMOOTH_STD_K:g} K; station records measured 2.3-4.2 K): this looks "
            "like a smoothed or climatological series (normals, a mean year), whose extremes are much milder "
            "than real weather; use a station record", "smoothed_series", label))
    if not meta.get("typical_year"):
        pairs = repeated_years(tmax)
        if pairs:
            out.append(Notice(
                f"{label}: years with the same daily maxima (a copied year): "
                + ", ".join(f"{a} and {b}" for a, b in pairs[:5])
                + "; the repeats count once in a fair record", "repeated_years", label))
    return out


def finish_record(data: pd.DataFrame, meta: dict, ctx) -> tuple[pd.DataFrame, dict]:
    """Quality checks of a record just read; fills ``meta["warnings"]`` (the reader's and these)."""
    ctx.warnings.extend(check_record(data, meta, ctx.label))
    meta["warnings"] = ctx.warnings
    return data, meta


def _equation_of_time_min(doy: np.ndarray) -> np.ndarray:
    """Equation of time [min] (Spencer 1971, via Iqbal 1983)."""
    g = 2 * np.pi * (doy - 1) / 365.0
    return 229.18 * (0.000075 + 0.001868 * np.cos(g) - 0.032077 * np.sin(g)
                     - 0.014615 * np.cos(2 * g) - 0.040849 * np.sin(2 * g))


def _check_solar_timing(data: pd.DataFrame, meta: dict, ctx) -> None:
    """Warn when irradiance does not peak near solar noon (time zone, longitude, DST)."""
    lon, off = meta.get("longitude_deg"), meta.get("utc_offset_h")
    if "ghi_W_m2" not in data or lon is None or off is None:
        return
    g = data["ghi_W_m2"].to_numpy()
    ok = ~np.isnan(g) & (g > 0)
    if ok.sum() < 24 * 5:
        return
    idx = data.index
    hour = (idx.hour + idx.minute / 60.0).to_numpy() + meta.get("solar_position_shift_min", 0.0) / 60.0
    month = idx.month.to_numpy()
    w = np.where(ok, g, 0.0)
    sw = np.bincount(month - 1, weights=w, minlength=12)
    shw = np.bincount(month - 1, weights=w * hour, minlength=12)
    have = sw > 0
    centre = np.where(have, shw / np.where(have, sw, 1.0), np.nan)
    mid_doy = np.array([15, 46, 74, 105, 135, 166, 196, 227, 258, 288, 319, 349])
    noon = 12.0 - _equation_of_time_min(mid_doy) / 60.0 - (lon - 15.0 * off) / 15.0
    diff = (centre - noon)[have]
    if len(diff) == 0:
        return
    med = float(np.median(diff))
    if abs(med) > 1.0:
        ctx.warn(
            f"irradiance is centred {med:+.1f} h from solar noon (longitude {lon:g}, {meta.get('tz')}); "
            "check the time zone, the sign of the longitude (east positive) and the timestamp convention"
        )
    elif have.sum() >= 10 and float(diff.max() - diff.min()) > 0.7:
        months = [int(i) + 1 for i, d in zip(np.flatnonzero(have), diff) if d - diff.min() > 0.5]
        ctx.warn(
            f"irradiance peaks about {float(diff.max() - diff.min()):.1f} h later in months {months} than in "
            "the others; the clock may follow daylight saving time (timestamps must be standard time or "
            "carry their offset)"
        )


