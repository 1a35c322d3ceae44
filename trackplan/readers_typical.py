"""Readers of typical-year files: TMY3 and EPW (through pvlib's parsers).

Both are re-labelled to one non-leap year (:data:`TYPICAL_YEAR`); the
layouts and their sources are described in :mod:`trackplan.weather`.
"""

from __future__ import annotations

import io

import numpy as np
import pandas as pd

from trackplan.errors import InputError
from trackplan.readers_checks import _finish
from trackplan.readers_common import TYPICAL_YEAR, _base_meta, _check_latlon, _check_order, _Ctx, _fixed_tz, _offset_text


# TMY3 and EPW through pvlib
# --------------------------------------------------------------------------

_TMY3_MAP = {
    "temp_air": "air_temperature_C",
    "ghi": "ghi_W_m2",
    "dni": "dni_W_m2",
    "dhi": "dhi_W_m2",
    "wind_speed": "wind_speed_m_s",
    "relative_humidity": "relative_humidity_pct",
}


def _typical_common(raw: pd.DataFrame, colmap: dict, cloud: pd.Series | None, meta: dict,
                    ctx: _Ctx, missing_markers: dict, header_lines: int = 0) -> pd.DataFrame:
    data = pd.DataFrame(index=raw.index)
    for src, col in colmap.items():
        if src in raw:
            x = pd.to_numeric(raw[src], errors="coerce").to_numpy(dtype=float)
            mk = missing_markers.get(src)
            if mk is not None:
                bad = x >= mk if mk > 0 else x <= mk
                if bad.any():
                    ctx.warn(f"column {src}: {int(bad.sum())} missing-value marker(s) ({mk:g}) read as missing")
                x = np.where(bad, np.nan, x)
            data[col] = x
    if cloud is not None:
        c = pd.to_numeric(cloud, errors="coerce").to_numpy(dtype=float)
        c = np.where((c < 0) | (c > 10), np.nan, c) / 10.0
        data["cloud_fraction"] = c
    off = float(meta["utc_offset_h"])
    data.index = pd.DatetimeIndex(raw.index).tz_convert(_fixed_tz(off))
    data.index.name = "time"
    if len(data) == 0:
        raise InputError("the header but no data rows; a typical-year file has 8760 hourly rows", ctx.label)
    # rows in file order: a duplicated or swapped row is refused, naming its line
    _check_order(data.index, np.arange(len(data)) + header_lines + 1, ctx)
    return data


def _typical_year_meta(m: dict, station: str, station_id, ctx: _Ctx) -> dict:
    """Metadata of a TMY3 or EPW file from pvlib's header dict (both hour-ending, wind at 10 m)."""
    meta = _base_meta()
    meta.update(
        station=station,
        station_id=station_id,
        latitude_deg=float(m["latitude"]),
        longitude_deg=float(m["longitude"]),
        elevation_m=float(m["altitude"]),
        utc_offset_h=float(m["TZ"]),
        tz=_offset_text(float(m["TZ"])),
        typical_year=True,
        wind_height_m=10.0,
        irradiance_timing="hour-ending",
        solar_position_shift_min=-30.0,
    )
    _check_latlon(meta, ctx, 1)
    return meta


def _read_tmy3(text: str, ctx: _Ctx) -> tuple[pd.DataFrame, dict]:
    import pvlib

    try:
        raw0, m = pvlib.iotools.read_tmy3(io.StringIO(text), map_variables=True)
        raw, _ = pvlib.iotools.read_tmy3(io.StringIO(text), map_variables=True, coerce_year=TYPICAL_YEAR)
    except Exception as exc:  # pvlib raises many types on malformed files
        raise InputError(f"cannot read as a TMY3 file ({type(exc).__name__}: {exc})", ctx.label) from None
    meta = _typical_year_meta(
        m, str(m.get('Name', '')).strip().strip('"') + (f", {m['State']}" if m.get('State') else ''),
        str(m.get("USAF")), ctx)
    # month -> source year, from the file's own date column (MM/DD/YYYY)
    dates = raw0["Date (MM/DD/YYYY)"].astype(str)
    mo = dates.str[:2].astype(int).to_numpy()
    yr = dates.str[-4:].astype(int).to_numpy()
    first = np.unique(mo, return_index=True)[1]
    meta["source_years"] = {int(mo[i]): int(yr[i]) for i in first}
    meta["units_in_file"] = {"air_temperature_C": "degC", "ghi_W_m2": "W/m**2", "dni_W_m2": "W/m**2",
                             "dhi_W_m2": "W/m**2", "wind_speed_m_s": "m/s", "relative_humidity_pct": "%"}
    data = _typical_common(raw, _TMY3_MAP, raw.get("TotCld (tenths)"), meta, ctx,
                           {k: -9000.0 for k in _TMY3_MAP}, header_lines=2)
    data = _finish(data, meta, ctx, "hourly")
    return data, meta


_EPW_MISSING = {"temp_air": 99.9, "relative_humidity": 999.0, "ghi": 9999.0, "dni": 9999.0,
                "dhi": 9999.0, "wind_speed": 999.0}


def _read_epw(text: str, ctx: _Ctx) -> tuple[pd.DataFrame, dict]:
    import pvlib

    try:
        raw0, m = pvlib.iotools.read_epw(io.StringIO(text))
        raw, _ = pvlib.iotools.read_epw(io.StringIO(text), coerce_year=TYPICAL_YEAR)
    except Exception as exc:
        raise InputError(f"cannot read as an EPW file ({type(exc).__name__}: {exc})", ctx.label) from None
    name = str(m.get("city", "")).strip()
    for k in ("state-prov", "country"):
        v = str(m.get(k, "")).strip()
        if v and v != "-":
            name += f", {v}"
    meta = _typical_year_meta(m, name, str(m.get("WMO_code", "")).strip() or None, ctx)
    mo, yr = raw0["month"].to_numpy(), raw0["year"].to_numpy()
    first = np.unique(mo, return_index=True)[1]
    meta["source_years"] = {int(mo[i]): int(yr[i]) for i in first}
    meta["units_in_file"] = {"air_temperature_C": "degC", "ghi_W_m2": "W/m**2", "dni_W_m2": "W/m**2",
                             "dhi_W_m2": "W/m**2", "wind_speed_m_s": "m/s", "relative_humidity_pct": "%"}
    # pvlib labels EPW hour h with h-1 (start of the hour); move to the end of the hour.
    raw = raw.copy()
    raw.index = raw.index + pd.Timedelta(hours=1)
    data = _typical_common(raw, _TMY3_MAP, raw.get("total_sky_cover"), meta, ctx, _EPW_MISSING, header_lines=8)
    data = _finish(data, meta, ctx, "hourly")
    return data, meta


# --------------------------------------------------------------------------
