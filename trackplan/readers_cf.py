"""Reader of a point series from a CF-convention NetCDF file (``cf-netcdf``).

Climate model output and gridded observations are written as NetCDF following
the CF conventions (Eaton et al., NetCDF Climate and Forecast Metadata
Conventions). This reader takes one series at the grid cell nearest the site:

* variables ``tasmax`` and ``tasmin`` (daily maximum and minimum near-surface
  air temperature) give a daily record; ``tas`` at a step under a day gives an
  hourly (or 3-hourly...) record. Daily-mean ``tas`` alone cannot give daily
  extremes and is refused;
* the unit comes from each variable's ``units`` attribute (``K``, ``degC``,
  ``degrees_C``, ``Celsius``, ``degF``); a variable without one is refused;
* the cell nearest the site (``--lat``/``--lon`` or the section's) by
  great-circle distance, for 1-D or 2-D (curvilinear) ``lat``/``lon``
  coordinates, longitudes in -180..180 or 0..360; a file of one point needs no
  site;
* times are decoded by cftime in the file's calendar (CF section 4.4.1):
  ``standard``/``gregorian``, ``proleptic_gregorian``, ``julian``, ``noleap``
  (``365_day``), ``all_leap`` (``366_day``) and ``360_day``. Each model day
  keeps its year, month and day; a model day with no calendar date (30
  February of a ``360_day`` year, 29 February of a common year in
  ``all_leap``) is dropped, and a date the model calendar lacks (31 July in
  ``360_day``, 29 February in ``noleap``) stays a missing day: both are
  counted in a ``calendar`` warning, never silent.

Sub-daily times are taken as UTC (CF times without a zone) and shown in the
zone given for the record, else the nominal zone of the site's longitude.

References
----------
Eaton, B. et al. NetCDF Climate and Forecast (CF) Metadata Conventions,
version 1.10 (2022), sections 3.1 (units), 4.4 (time, calendars), 5 (coordinates).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from trackplan.errors import InputError, option_ref

_MAGIC = (b"CDF\x01", b"CDF\x02", b"CDF\x05", b"\x89HDF\r\n\x1a\n")
_UNITS = {"k": "K", "kelvin": "K", "kelvins": "K", "degk": "K", "deg_k": "K",
          "degc": "degC", "deg_c": "degC", "degrees_c": "degC", "degree_c": "degC", "celsius": "degC",
          "degree_celsius": "degC", "degrees_celsius": "degC", "c": "degC", "°c": "degC",
          "degf": "degF", "degrees_f": "degF", "fahrenheit": "degF"}


def is_netcdf(path: Path) -> bool:
    """True when the file starts with a NetCDF classic or NetCDF-4 (HDF5) signature."""
    try:
        with open(path, "rb") as fh:
            head = fh.read(8)
    except OSError:
        return False
    return any(head.startswith(m) for m in _MAGIC)


def _unit(var, name: str, where: str) -> str:
    u = str(var.attrs.get("units", "")).strip()
    if not u:
        raise InputError(f"variable {name} has no 'units' attribute; a unit is never guessed (CF 3.1: K or degC)",
                         where)
    key = u.lower().replace(" ", "_")
    if key not in _UNITS:
        raise InputError(f"variable {name} has units {u!r}; accepted: K, degC (degrees_C, Celsius), degF", where)
    return _UNITS[key]


def _coord(ds, names):
    for n in names:
        if n in ds.coords or n in ds.variables:
            return ds[n]
    return None


def _nearest(ds, var, lat, lon, where: str):
    """The series of ``var`` at the cell nearest (lat, lon), and the cell's coordinates."""
    la = _coord(ds, ("lat", "latitude", "nav_lat"))
    lo = _coord(ds, ("lon", "longitude", "nav_lon"))
    da = ds[var]
    tdim = [d for d in da.dims if d == "time" or "time" in d]
    space = [d for d in da.dims if d not in tdim]
    if not space:
        cell = (float(la.values.ravel()[0]) if la is not None else lat,
                float(lo.values.ravel()[0]) if lo is not None else lon)
        return da, cell
    if la is None or lo is None:
        raise InputError(f"variable {var} has dimensions {da.dims} but the file has no lat/lon coordinates", where)
    if lat is None or lon is None:
        if int(np.prod([da.sizes[d] for d in space])) == 1:
            return da.squeeze(drop=True), (float(la.values.ravel()[0]), float(lo.values.ravel()[0]))
        raise InputError("a gridded file is read at the cell nearest the site; give "
                         f"{option_ref('latitude')} and {option_ref('longitude')} (or the section's latitude and "
                         "longitude)", where)
    LA, LO = np.asarray(la.values, float), np.asarray(lo.values, float)
    if LA.ndim == 1 and LO.ndim == 1:
        LA, LO = np.meshgrid(LA, LO, indexing="ij")
        dims = (la.dims[0], lo.dims[0])
    else:
        dims = la.dims
    p1, p2 = np.radians(lat), np.radians(LA)
    dl = np.radians(((LO - lon + 180.0) % 360.0) - 180.0)
    c = np.sin(p1) * np.sin(p2) + np.cos(p1) * np.cos(p2) * np.cos(dl)
    k = np.unravel_index(int(np.nanargmax(c)), LA.shape)
    sel = dict(zip(dims, k))
    cell_lon = float(((LO[k] + 180.0) % 360.0) - 180.0)
    return da.isel(sel).squeeze(drop=True), (float(LA[k]), cell_lon)


def read_cf(path: Path, ctx):
    """Read a CF NetCDF point series (see the module documentation) into ``(data, meta)``."""
    import pandas as pd
    import xarray as xr

    from trackplan import readers_fixed
    from trackplan import weather as W

    where = ctx.label
    try:
        ds = xr.open_dataset(path, decode_times=xr.coders.CFDatetimeCoder(use_cftime=True))
    except Exception as exc:  # engines raise many types on damaged files
        raise InputError(f"cannot read as NetCDF ({type(exc).__name__}: {exc})", where) from None
    with ds:
        have = [v for v in ("tasmax", "tasmin", "tas") if v in ds.data_vars]
        if "tasmax" in have and "tasmin" in have:
            names, step = ("tasmax", "tasmin"), "daily"
        elif "tas" in have:
            names, step = ("tas",), "hourly"
        else:
            raise InputError("no tasmax and tasmin (daily) or tas (sub-daily) variable; the file has: "
                             + ", ".join(map(str, ds.data_vars)), where)
        meta = W._base_meta()
        series, units = {}, {}
        for n in names:
            units[n] = _unit(ds[n], n, f"{where} variable {n}")
            da, cell = _nearest(ds, n, ctx.site_lat, ctx.site_lon, where)
            if da.ndim != 1:
                raise InputError(f"variable {n} has more than a time dimension at one cell: {da.dims}", where)
            series[n] = np.asarray(da.values, float)
            times = da[da.dims[0]].values
            cal = str(getattr(times[0], "calendar", "") or ds[da.dims[0]].encoding.get("calendar", "standard"))
    ymdh = np.array([(t.year, t.month, t.day, t.hour, t.minute) for t in times], dtype=int)
    frame = pd.DataFrame({"year": ymdh[:, 0], "month": ymdh[:, 1], "day": ymdh[:, 2],
                          "hour": ymdh[:, 3], "minute": ymdh[:, 4]})
    ok = ~pd.to_datetime(frame, errors="coerce").isna().to_numpy()
    dropped = int((~ok).sum())
    gaps = [(times[k + 1] - times[k]).total_seconds() for k in range(min(len(times) - 1, 100))]
    step_s = float(np.median(gaps)) if gaps else 86400.0
    if step == "hourly" and step_s >= 86400.0:
        raise InputError("tas holds one value a day (daily means); daily extremes need tasmax and tasmin", where)
    t = pd.to_datetime(frame[ok])
    if step == "daily":
        idx = pd.DatetimeIndex(t).normalize()
        idx.name = "date"
        data = pd.DataFrame({"tmax_C": series["tasmax"][ok], "tmin_C": series["tasmin"][ok]}, index=idx)
        cols = {"tasmax": "tmax_C", "tasmin": "tmin_C"}
    else:
        name, off, how = readers_fixed._zone(ctx, {"longitude_deg": cell[1]})
        idx = pd.DatetimeIndex(t).tz_localize("UTC").tz_convert(W._fixed_tz(off))
        idx.name = "time"
        meta["tz"], meta["utc_offset_h"] = name, off
        ctx.warn(f"CF times read as UTC and shown in {name}, {how}", code="time_zone")
        data = pd.DataFrame({"air_temperature_C": series["tas"][ok]}, index=idx)
        cols = {"tas": "air_temperature_C"}
        meta["irradiance_timing"] = "instant"
    for n, c in cols.items():
        o = {"K": -273.15, "degC": 0.0, "degF": -32.0}[units[n]]
        f = 5.0 / 9.0 if units[n] == "degF" else 1.0
        data[c] = (data[c].to_numpy(float) + o) * f
        meta["units_in_file"][c] = units[n]
    if dropped:
        ctx.warn(f"{cal} calendar: {dropped} model day(s) with no calendar date (e.g. 30 February) dropped",
                 code="calendar")
    if cal in ("noleap", "365_day", "360_day", "all_leap", "366_day"):
        full = pd.date_range(idx[0].normalize(), idx[-1].normalize(), freq="D")
        lacking = len(full.difference(pd.DatetimeIndex(idx.tz_localize(None) if idx.tz is not None else idx)
                                      .normalize().unique()))
        if lacking:
            ctx.warn(f"{cal} calendar: {lacking} calendar date(s) the model year lacks (e.g. 31 July, 29 February) "
                     "left missing, not filled", code="calendar")
    meta["latitude_deg"], meta["longitude_deg"] = cell
    meta["station"] = f"{path.name} cell {cell[0]:.3f}, {cell[1]:.3f}"
    meta["extra"]["calendar"] = cal
    if ctx.site_lat is not None and ctx.site_lon is not None:
        d = 6371.0 * np.arccos(np.clip(np.sin(np.radians(ctx.site_lat)) * np.sin(np.radians(cell[0]))
                                       + np.cos(np.radians(ctx.site_lat)) * np.cos(np.radians(cell[0]))
                                       * np.cos(np.radians(cell[1] - ctx.site_lon)), -1, 1))
        ctx.warn(f"grid cell centred {cell[0]:.3f}, {cell[1]:.3f}, {d:.0f} km from the site, read", code="record_note")
    line_of = np.zeros(len(data), int)
    qs = {"tmax_C": W._TMAX, "tmin_C": W._TMIN, "air_temperature_C": W._AIR}
    used = {c: (c, qs[c], 1.0, 0.0, meta["units_in_file"][c]) for c in data.columns}
    meta["source_format"] = "cf-netcdf"
    meta["path"] = str(path)
    W._check_order(data.index, line_of, ctx)
    W._check_values(data, meta, line_of, used, ctx)
    data = W._finish(data, meta, ctx, step)
    return data, meta
