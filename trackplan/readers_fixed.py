"""Readers of fixed-width station records: GHCN-Daily ``.dly`` and ISD-Lite.

Both layouts are read by the column positions of their published format
descriptions (1-based, inclusive, as the descriptions give them):

GHCN-Daily ``.dly`` (``ghcn-daily-dly``; NOAA NCEI, GHCN-Daily readme.txt,
section III; Menne et al. 2012): one line per station, month and element::

    ID        1-11   station identifier
    YEAR     12-15
    MONTH    16-17
    ELEMENT  18-21   TMAX, TMIN (tenths of degC), PSUN (percent), ACSH (percent), ...
    VALUE1   22-26   day 1, -9999 missing
    MFLAG1   27
    QFLAG1   28      blank: passed the archive's quality checks
    SFLAG1   29
    VALUE2   30-34 ... and so on, 8 characters per day, up to day 31 (VALUE31 262-266)

Days that do not exist (31 April) hold -9999 and are dropped; no other day is
dropped or invented. A value with a Q-FLAG failed the archive's checks and is
read as missing (``quality_flag`` warning). Elements read: ``TMAX``, ``TMIN``,
``PSUN`` -> ``sunshine_fraction``, ``ACSH`` -> ``cloud_fraction``.

ISD-Lite (``isd-lite``; NOAA NCEI, "ISD-Lite format", isd-lite-format.pdf):
hourly values from the Integrated Surface Database, one line per hour, times
in UTC, -9999 missing::

    YEAR                   1-4
    MONTH                  6-7
    DAY                    9-10
    HOUR                  12-13   UTC
    AIR TEMPERATURE       14-19   degC x 10
    DEW POINT             20-25   degC x 10 (not read)
    SEA LEVEL PRESSURE    26-31   hPa x 10 (not read)
    WIND DIRECTION        32-37   deg (not read)
    WIND SPEED            38-43   m/s x 10
    SKY COVER CODE        44-49   0-8 oktas; 9 and above (obscured) read as missing
    PRECIPITATION 1 H     50-55   mm x 10 (not read)
    PRECIPITATION 6 H     56-61   mm x 10 (not read)

The timestamps are moved from UTC to the site's standard offset: the zone
given for the record (``--tz``), else the nominal zone of the site's longitude,
else UTC. Neither layout carries coordinates: optional ``# key: value`` lines
at the top (as in our CSV), ``--lat``/``--lon`` or the section's, and for
``.dly`` a ``ghcnd-stations.txt`` beside the file.

References
----------
Menne, M. J., Durre, I., Vose, R. S., Gleason, B. E. and Houston, T. G. (2012).
An overview of the Global Historical Climatology Network-Daily database.
J. Atmos. Oceanic Technol. 29, 897-910; NOAA NCEI GHCN-Daily readme.txt.
NOAA NCEI, Integrated Surface Database Lite (ISD-Lite) format description,
isd-lite-format.pdf; Smith, A., Lott, N. and Vose, R. (2011). The Integrated
Surface Database: recent developments and partnerships. BAMS 92, 704-708.
"""

from __future__ import annotations

import re
from pathlib import Path

import numpy as np
import pandas as pd

from trackplan import weather as W
from trackplan.errors import InputError, option_ref

_DLY_RE = re.compile(r"^[A-Z]{2}[A-Z0-9]{9}\d{4}(0[1-9]|1[0-2])[A-Z0-9]{4}.{8}")
_ISD_RE = re.compile(r"^\d{4} (0[1-9]|1[0-2]) [0-3]\d [0-2]\d[ \-\d]{6}[ \-\d]{6}")

_DLY_ELEMENTS = {"TMAX": ("tmax_C", 0.1), "TMIN": ("tmin_C", 0.1),
                 "PSUN": ("sunshine_fraction", 0.01), "ACSH": ("cloud_fraction", 0.01)}


def _data_lines(text: str, ctx) -> tuple[list[tuple[int, str]], dict]:
    """Lines of data with their numbers, and the metadata of ``# key: value`` lines at the top."""
    meta = W._base_meta()
    meta_lines, rows = [], []
    for ln, line in enumerate(text.splitlines(), start=1):
        s = line.rstrip("\r")
        if not s.strip():
            continue
        if s.lstrip().startswith("#"):
            m = W._META_RE.match(s.strip())
            if m and not rows:
                meta_lines.append((ln, m.group(1), m.group(2)))
            continue
        rows.append((ln, s))
    W._parse_meta_lines(meta_lines, meta, ctx)
    return rows, meta


def sniff(text: str) -> str | None:
    """``"ghcn-daily-dly"``, ``"isd-lite"`` or None, from the first data line."""
    for line in W._first_lines(text, 60):
        s = line.rstrip()
        if not s.strip() or s.lstrip().startswith("#"):
            continue
        if _DLY_RE.match(s):
            return "ghcn-daily-dly"
        if _ISD_RE.match(s):
            return "isd-lite"
        return None
    return None


def _int(field: str, where: str, what: str) -> int:
    try:
        return int(field)
    except ValueError:
        raise InputError(f"{field.strip()!r} is not a whole number ({what})", where) from None


def read_dly(text: str, ctx) -> tuple[pd.DataFrame, dict]:
    """Read a GHCN-Daily ``.dly`` file (layout in the module documentation)."""
    rows, meta = _data_lines(text, ctx)
    recs: dict[tuple[pd.Timestamp, str], float] = {}
    lines_of: dict[pd.Timestamp, int] = {}
    flagged, sid = [], None
    for ln, s in rows:
        where = ctx.at(ln)
        if len(s) < 29:
            raise InputError(f"line too short ({len(s)} characters) for the GHCN-Daily .dly layout "
                             "(ID 1-11, YEAR 12-15, MONTH 16-17, ELEMENT 18-21, then 31 x 8 characters)", where)
        this = s[0:11]
        if sid is None:
            sid = this
        elif this != sid:
            raise InputError(f"a second station {this!r} (first {sid!r}); give one station per file",
                             ctx.at(ln, "1-11 (ID)"))
        year = _int(s[11:15], ctx.at(ln, "12-15 (YEAR)"), "YEAR")
        month = _int(s[15:17], ctx.at(ln, "16-17 (MONTH)"), "MONTH")
        el = s[17:21]
        if el not in _DLY_ELEMENTS:
            continue
        ndays = pd.Timestamp(year, month, 1).days_in_month
        for d in range(31):
            a = 21 + 8 * d
            field = s[a:a + 5]
            if not field.strip():
                continue
            v = _int(field, ctx.at(ln, f"{a + 1}-{a + 5} (VALUE{d + 1})"), f"VALUE{d + 1}")
            if v == -9999:
                continue
            if d + 1 > ndays:
                raise InputError(f"a {el} value {v} on day {d + 1} of a month of {ndays} days",
                                 ctx.at(ln, f"{a + 1}-{a + 5} (VALUE{d + 1})"))
            date = pd.Timestamp(year, month, d + 1)
            q = s[a + 6:a + 7] if len(s) > a + 6 else " "
            if q.strip():
                flagged.append((ln, el, d + 1, q))
                v = np.nan
            if (date, el) in recs:
                raise InputError(f"second {el} value for {date:%Y-%m-%d}; give each month and element once",
                                 ctx.at(ln))
            recs[(date, el)] = v * _DLY_ELEMENTS[el][1]
            lines_of.setdefault(date, ln)
    if not recs:
        raise InputError("no TMAX or TMIN values; a daily record needs both (GHCN-Daily elements, tenths of "
                         "degC)", ctx.label)
    if flagged:
        ctx.warn(f"{len(flagged)} value(s) with a quality flag (failed the archive's checks) read as missing ("
                 + ", ".join(f"line {ln}: {el} day {d} flag {q}" for ln, el, d, q in flagged[:3]) + ")",
                 code="quality_flag")
    long = pd.Series(recs)
    wide = long.unstack()
    missing = [e for e in ("TMAX", "TMIN") if e not in wide]
    if missing:
        raise InputError(f"no {' or '.join(missing)} values; a daily record needs TMAX and TMIN", ctx.label)
    wide = wide.sort_index()
    data = pd.DataFrame(index=pd.DatetimeIndex(wide.index, name="date"))
    used = {}
    quantities = {"tmax_C": W._TMAX, "tmin_C": W._TMIN, "sunshine_fraction": W._SUN, "cloud_fraction": W._CLOUD}
    for e, (col, _) in _DLY_ELEMENTS.items():
        if e in wide:
            data[col] = wide[e].to_numpy(float)
            used[e] = (col, quantities[col], 1.0, 0.0, "degC" if col.endswith("_C") else "1")
            meta["units_in_file"][col] = "tenths of degC" if col.endswith("_C") else "percent"
    data.index.freq = None
    meta["station_id"] = sid.strip()
    W._ghcn_station_list(Path(ctx.path), meta["station_id"], meta, ctx)
    W._check_latlon(meta, ctx, None)
    if meta["station"] is None:
        meta["station"] = meta["station_id"]
    line_of = np.array([lines_of.get(d, 0) for d in data.index])
    W._check_values(data, meta, line_of, used, ctx)
    data = W._finish(data, meta, ctx, "daily")
    return data, meta


def _zone(ctx, meta) -> tuple[str, float, str]:
    """Zone for UTC timestamps: ``(tz text, standard offset [h], how chosen)``."""
    if ctx.tz is not None:
        name, off = W._parse_timezone(ctx.tz, None)
        return name, off, "given for the record"
    lon = ctx.site_lon if ctx.site_lon is not None else meta.get("longitude_deg")
    if lon is not None:
        off = float(round(lon / 15.0))
        return W._offset_text(off), off, f"the nominal zone of longitude {lon:g}"
    return "UTC", 0.0, "UTC (no zone and no longitude given)"


def read_isd_lite(text: str, ctx) -> tuple[pd.DataFrame, dict]:
    """Read an ISD-Lite file (layout in the module documentation)."""
    rows, meta = _data_lines(text, ctx)
    n = len(rows)
    year, month, day, hour = (np.empty(n, int) for _ in range(4))
    temp, wind, sky = (np.empty(n) for _ in range(3))
    lines = np.empty(n, int)
    for k, (ln, s) in enumerate(rows):
        if len(s) < 19:
            raise InputError(f"line too short ({len(s)} characters) for the ISD-Lite layout (year 1-4, month 6-7, "
                             "day 9-10, hour 12-13, air temperature 14-19, ...)", ctx.at(ln))
        lines[k] = ln
        year[k] = _int(s[0:4], ctx.at(ln, "1-4 (year)"), "year")
        month[k] = _int(s[5:7], ctx.at(ln, "6-7 (month)"), "month")
        day[k] = _int(s[8:10], ctx.at(ln, "9-10 (day)"), "day")
        hour[k] = _int(s[11:13], ctx.at(ln, "12-13 (hour)"), "hour")
        temp[k] = _int(s[13:19], ctx.at(ln, "14-19 (air temperature)"), "air temperature")
        wind[k] = _int(s[37:43], ctx.at(ln, "38-43 (wind speed)"), "wind speed") if len(s) >= 43 else -9999
        sky[k] = _int(s[43:49], ctx.at(ln, "44-49 (sky cover)"), "sky cover") if len(s) >= 49 else -9999
    t = pd.to_datetime(pd.DataFrame({"year": year, "month": month, "day": day, "hour": hour}), errors="coerce")
    if t.isna().any():
        i = int(np.argmax(t.isna().to_numpy()))
        raise InputError(f"no such date and hour: {year[i]}-{month[i]:02d}-{day[i]:02d} {hour[i]:02d}h",
                         ctx.at(int(lines[i])))
    name, off, how = _zone(ctx, meta)
    idx = pd.DatetimeIndex(t).tz_localize("UTC").tz_convert(W._fixed_tz(off))
    idx.name = "time"
    meta["tz"], meta["utc_offset_h"] = name, off
    if how.startswith("the nominal") or how.startswith("UTC ("):
        ctx.warn(f"ISD-Lite times are UTC; shown in {name}, {how} (give {option_ref('tz')} to choose)", code="time_zone")
    data = pd.DataFrame(index=idx)
    data["air_temperature_C"] = np.where(temp == -9999, np.nan, temp / 10.0)
    if (wind != -9999).any():
        data["wind_speed_m_s"] = np.where(wind == -9999, np.nan, wind / 10.0)
        meta["wind_height_m"] = 10.0
    if ((sky >= 0) & (sky <= 8)).any():
        data["cloud_fraction"] = np.where((sky >= 0) & (sky <= 8), sky / 8.0, np.nan)
    meta["units_in_file"] = {"air_temperature_C": "tenths of degC", "wind_speed_m_s": "tenths of m/s",
                             "cloud_fraction": "okta"}
    meta["irradiance_timing"] = "instant"
    W._check_order(idx, lines, ctx)
    used = {c: (c, q, 1.0, 0.0, u) for c, q, u in (("air_temperature_C", W._AIR, "degC"),
                                                  ("wind_speed_m_s", W._WIND, "m/s"),
                                                  ("cloud_fraction", W._CLOUD, "1")) if c in data}
    W._check_latlon(meta, ctx, None)
    W._check_values(data, meta, lines, used, ctx)
    data = W._finish(data, meta, ctx, "hourly")
    return data, meta


#: Readers by ``source_format``.
READERS = {"ghcn-daily-dly": read_dly, "isd-lite": read_isd_lite}
