"""What every weather-record reader shares: quantities, the reading context, metadata and times.

The canonical quantities and their units, the context that names the file and
line in messages and collects warnings, metadata lines, time zones, the parsing
of timestamps and dates and their order. The readers of each format family are
``readers_csv``, ``readers_typical``, ``readers_ghcn``, ``readers_fixed`` and
``readers_cf``; the checks of the values and the regular grid are in
``readers_checks``; :func:`trackplan.weather.read_record` dispatches between them.
"""

from __future__ import annotations

import datetime as _dt
import re
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd

from trackplan import notices, ranges, units
from trackplan.errors import InputError, excerpt


#: Year that typical-year files (TMY3, EPW) are re-labelled to (not a leap year).
TYPICAL_YEAR = 1990

#: Longest run of missing steps filled by linear interpolation (hourly records).
MAX_INTERPOLATED_STEPS = 2

#: A calendar year is complete enough when this share of its values is present ...
YEAR_MIN_COVERAGE = ranges.YEAR_MIN_COVERAGE
#: ... and every month has at least this share.
MONTH_MIN_COVERAGE = ranges.MONTH_MIN_COVERAGE

HOURLY_COLUMNS = (
    "air_temperature_C",
    "ghi_W_m2",
    "dni_W_m2",
    "dhi_W_m2",
    "wind_speed_m_s",
    "relative_humidity_pct",
    "cloud_fraction",
)
DAILY_COLUMNS = ("tmax_C", "tmin_C", "sunshine_fraction", "cloud_fraction")

# --------------------------------------------------------------------------
# Quantities of our CSV
# --------------------------------------------------------------------------


@dataclass(frozen=True)
class _Quantity:
    column: str  # canonical column
    kind: str  # units kind, or "fraction" / "percent"
    step: str  # "hourly", "daily" or "any"
    lo: float  # hard physical limits in SI (outside: impossible)
    hi: float


def _si_label(q: "_Quantity") -> str:
    return {"percent": "%", "fraction": "(fraction)"}.get(q.kind) or units.SI_UNIT[q.kind]


_AIR = _Quantity("air_temperature_C", "temperature", "hourly", -90.0, 65.0)
_GHI = _Quantity("ghi_W_m2", "irradiance", "hourly", -50.0, 1600.0)
_DNI = _Quantity("dni_W_m2", "irradiance", "hourly", -50.0, 1400.0)
_DHI = _Quantity("dhi_W_m2", "irradiance", "hourly", -50.0, 1000.0)
_WIND = _Quantity("wind_speed_m_s", "speed", "hourly", 0.0, 110.0)
_RH = _Quantity("relative_humidity_pct", "percent", "hourly", 0.0, 103.0)
_CLOUD = _Quantity("cloud_fraction", "fraction", "any", 0.0, 1.0)
_TMAX = _Quantity("tmax_C", "temperature", "daily", -90.0, 65.0)
_TMIN = _Quantity("tmin_C", "temperature", "daily", -90.0, 65.0)
_SUN = _Quantity("sunshine_fraction", "fraction", "daily", 0.0, 1.0)

#: Quantity names accepted in our CSV header (lower case, ``_`` for spaces).
CSV_QUANTITIES: dict[str, _Quantity] = {
    "air_temperature": _AIR,
    "temperature": _AIR,
    "temp_air": _AIR,
    "air_temp": _AIR,
    "t_air": _AIR,
    "dry_bulb": _AIR,
    "ghi": _GHI,
    "global_horizontal_irradiance": _GHI,
    "dni": _DNI,
    "direct_normal_irradiance": _DNI,
    "dhi": _DHI,
    "diffuse_horizontal_irradiance": _DHI,
    "wind_speed": _WIND,
    "wind": _WIND,
    "relative_humidity": _RH,
    "rh": _RH,
    "cloud_fraction": _CLOUD,
    "cloud_cover": _CLOUD,
    "cloudiness": _CLOUD,
    "tmax": _TMAX,
    "max_temperature": _TMAX,
    "max_air_temperature": _TMAX,
    "tmin": _TMIN,
    "min_temperature": _TMIN,
    "min_air_temperature": _TMIN,
    "sunshine_fraction": _SUN,
    "sunshine": _SUN,
    "relative_sunshine": _SUN,
}

#: Units for dimensionless fractions: factor to a 0-1 fraction.
_FRACTION_UNITS = {"1": 1.0, "fraction": 1.0, "-": 1.0, "%": 0.01, "percent": 0.01, "pct": 0.01,
                   "okta": 1 / 8, "oktas": 1 / 8, "tenths": 0.1}


_META_RE = re.compile(r"^\s*#\s*([A-Za-z_][\w \-]*?)\s*[:=]\s*(.*?)\s*$")
_OFFSET_RE = re.compile(r"^(?:UTC|GMT)?\s*([+-])\s*(\d{1,2})(?::?(\d{2}))?$", re.IGNORECASE)
_TS_OFFSET_RE = re.compile(r"(?:Z|[+-]\d{2}:?\d{2})$")
_GHCN_RE = re.compile(r"^[A-Z]{2}[A-Z0-9]{9},\d{8},[A-Z0-9]{4},")


# --------------------------------------------------------------------------
# Context: file label, lines, warnings
# --------------------------------------------------------------------------


@dataclass
class _Ctx:
    label: str
    path: str
    warnings: list[str] = field(default_factory=list)
    columns: dict | None = None  # column mapping (trackplan.columns), CSV records
    tz: str | None = None  # zone for naive timestamps, from the command line or section file
    site_lon: float | None = None  # the site's longitude [deg], for the zone when nothing else says
    site_lat: float | None = None  # the site's latitude [deg], for the nearest cell of a gridded file
    units_confirmed: bool = False

    def at(self, line: int | None = None, column: str | None = None) -> str:
        s = self.label
        if line is not None:
            s += f" line {line}"
        if column is not None:
            s += f" column {column}"
        return s

    def warn(self, text: str, line: int | None = None, column: str | None = None, code: str | None = None) -> None:
        t = f"{self.at(line, column)}: {text}"
        self.warnings.append(notices.Notice(t, code or notices.classify(text), self.at(line, column)))


def _read_text(path: Path, ctx: _Ctx) -> str:
    from trackplan import safeio

    raw = safeio.read_bytes(path, ctx.label, safeio.MAX_RECORD_BYTES, safeio.MAX_DECOMPRESSED_BYTES)
    return safeio.decode_text(raw, ctx.label, fallback="latin-1")


def _first_lines(text: str, n: int) -> list[str]:
    out: list[str] = []
    start = 0
    while len(out) < n and start < len(text):
        end = text.find("\n", start)
        if end < 0:
            end = len(text)
        out.append(text[start:end].rstrip("\r"))
        start = end + 1
    return out


def _sniff(text: str) -> str:
    lines = [ln for ln in _first_lines(text, 60)]
    first = lines[0] if lines else ""
    if first.upper().startswith("LOCATION,"):
        return "epw"
    if len(lines) > 1 and lines[1].startswith("Date (MM/DD/YYYY)"):
        return "tmy3"
    data = [ln for ln in lines if ln.strip() and not ln.lstrip().startswith("#")]
    if data and _GHCN_RE.match(data[0]):
        return "ghcn-daily-csv"
    return "trackplan-csv"


def _file_stamp(p: Path) -> tuple:
    """Size and modification time [ns] of the file read, for caches keyed on a record's path."""
    try:
        st = p.stat()
    except OSError:  # pragma: no cover - the file was read a moment ago
        return ()
    return (st.st_size, st.st_mtime_ns, st.st_ino)


def _base_meta() -> dict:
    return {
        "station": None,
        "station_id": None,
        "latitude_deg": None,
        "longitude_deg": None,
        "elevation_m": None,
        "tz": None,
        "utc_offset_h": None,
        "time_step": None,
        "time_step_s": None,
        "source_format": None,
        "path": None,
        "typical_year": False,
        "source_years": None,
        "wind_height_m": None,
        "irradiance_timing": None,
        "solar_position_shift_min": 0.0,
        "units_in_file": {},
        "warnings": [],
        "gaps": {},
        "years": [],
        "year_coverage": {},
        "missing_years": [],
        "extra": {},
    }


# --------------------------------------------------------------------------
# Metadata lines and time zones
# --------------------------------------------------------------------------


def _fixed_tz(offset_h: float) -> _dt.timezone:
    return _dt.timezone(_dt.timedelta(hours=offset_h))


def _offset_text(offset_h: float) -> str:
    sign = "+" if offset_h >= 0 else "-"
    m = round(abs(offset_h) * 60)
    return f"UTC{sign}{m // 60:02d}:{m % 60:02d}"


def _parse_timezone(text: str, where: str | None, year: int = 2001) -> tuple[str, float]:
    """Return ``(tz text, standard offset [h])`` for a timezone metadata value."""
    t = text.strip()
    if t.upper() in ("UTC", "GMT", "Z"):
        return "UTC", 0.0
    m = _OFFSET_RE.match(t)
    if m:
        sign = -1.0 if m.group(1) == "-" else 1.0
        hours = int(m.group(2)) + int(m.group(3) or 0) / 60.0
        off = sign * hours
        if abs(off) > 14:
            raise InputError(f"time zone offset {excerpt(t)} is outside -12..+14 h", where, field="tz")
        return _offset_text(off), off
    try:
        from zoneinfo import ZoneInfo

        zi = ZoneInfo(t)
    except Exception:
        raise InputError(
            f"unknown time zone {excerpt(t)}; write UTC, a fixed offset such as 'UTC-06:00' or '+05:30', "
            "or an IANA name such as 'America/Chicago'",
            where, field="tz",
        ) from None
    d = _dt.datetime(year, 1, 15, 12, tzinfo=zi)
    std = (d.utcoffset() - d.dst()).total_seconds() / 3600.0
    return t, std


def _parse_meta_lines(lines: list[tuple[int, str, str]], meta: dict, ctx: _Ctx) -> None:
    """Fill ``meta`` from ``(line, key, value)`` metadata lines."""
    for ln, key, value in lines:
        k = key.strip().lower().replace(" ", "_").replace("-", "_")
        where = ctx.at(ln) + f" ({key})"
        if k in ("station", "name", "station_name"):
            meta["station"] = value
        elif k in ("station_id", "id", "wmo", "usaf"):
            meta["station_id"] = value
        elif k in ("latitude", "lat"):
            meta["latitude_deg"] = _parse_coordinate(value, "latitude", 90.0, where)
        elif k in ("longitude", "lon", "long"):
            meta["longitude_deg"] = _parse_coordinate(value, "longitude", 180.0, where)
        elif k in ("elevation", "altitude", "height_above_sea_level"):
            meta["elevation_m"] = units.parse(value, "length", where)
        elif k in ("timezone", "time_zone", "tz"):
            meta["_tz_text"] = (value, where)
        elif k in ("wind_height", "anemometer_height"):
            meta["wind_height_m"] = units.parse(value, "length", where)
        elif k in ("units_confirmed", "unit_confirmed", "units_checked"):
            v = value.strip().lower()
            if v not in ("yes", "true", "no", "false"):
                raise InputError(f"'{key}' must be yes or no", where)
            meta["units_confirmed"] = v in ("yes", "true")
        elif k == "irradiance_timing":
            v = value.strip().lower()
            if v not in ("instant", "hour-ending", "hour-beginning"):
                raise InputError(
                    f"irradiance_timing {excerpt(value)}; accepted: instant, hour-ending, hour-beginning", where
                )
            meta["irradiance_timing"] = v
        else:
            meta["extra"][key.strip()] = value


def _parse_coordinate(value: str, name: str, limit: float, where: str) -> float:
    v = value.strip()
    m = re.match(r"^([-+]?(?:\d+\.?\d*|\.\d+))\s*(deg|degree|degrees|°)?$", v, re.IGNORECASE)
    if not m:
        raise InputError(
            f"cannot read {name} {excerpt(value)}; write decimal degrees, "
            f"{'north' if name == 'latitude' else 'east'} positive, e.g. "
            f"'{'41.2' if name == 'latitude' else '-97.4'}'",
            where,
        )
    x = float(m.group(1))
    if not -limit <= x <= limit:
        raise InputError(f"{name} {x:g} is outside -{limit:g}..{limit:g} degrees", where)
    return x


# --------------------------------------------------------------------------


def _parser_message(exc: Exception) -> str:
    """The CSV parser's own words (they name a line and a field count, not the file's content),
    shortened; a stray quote typically shows as a field running to the end of the file."""
    text = " ".join(str(exc).split())
    text = text[:160] + ("..." if len(text) > 160 else "")
    if "EOF inside string" in text or "quote" in text.lower():
        text += "; a stray quote character? quote marks must come in pairs"
    return "".join(c if c.isprintable() else "?" for c in text)


def _read_csv_text(text: str, dtypes: dict, kw: dict, what: str, where: str):
    """Parse CSV text with the given column types; ``(frame, typed)``.

    A malformed file raises :class:`InputError` with the parser's own words. When a column
    does not fit its type (a ValueError from the parser), the text is read again as strings and
    returned with ``typed = False``, so that the caller can name the offending cell.
    """
    import io

    import pandas as pd

    try:
        return pd.read_csv(io.StringIO(text), dtype=dtypes, **kw), True
    except pd.errors.ParserError as exc:  # a ValueError too: caught first
        raise InputError(f"malformed {what} ({_parser_message(exc)})", where) from None
    except ValueError:
        try:
            return pd.read_csv(io.StringIO(text), dtype=str, **kw), False
        except (pd.errors.ParserError, ValueError) as exc:
            raise InputError(f"malformed {what} ({_parser_message(exc)})", where) from None


def _unit_factor(unit: str, q: _Quantity, where: str) -> tuple[float, float]:
    """``(factor, offset)`` so that SI = value * factor + offset."""
    u = unit.strip()
    if q.kind in ("fraction", "percent"):
        f = _FRACTION_UNITS.get(u.lower())
        if f is None:
            raise InputError(
                f"unknown unit '{u}' for a fraction; accepted: 1, %, percent, okta, tenths", where
            )
        return (f * 100.0 if q.kind == "percent" else f), 0.0
    o = units.to_si(0.0, u, q.kind, where)
    f = units.to_si(1.0, u, q.kind, where) - o
    return f, o


def _raise_bad_number(raw: pd.DataFrame, cols: list[str], names: list[str], header_line: int, ctx: _Ctx):
    """Find the first cell that is not a number and raise with its line and column."""
    best = None
    for h in cols:
        s = raw[h]
        num = pd.to_numeric(s, errors="coerce")
        bad = (s.notna() & num.isna()).to_numpy()
        if bad.any():
            i = int(np.argmax(bad))
            if best is None or i < best[0]:
                best = (i, h, s.iloc[i])
    if best is None:
        raise InputError("cannot read the numeric columns", ctx.label)
    i, h, val = best
    k = names.index(h) + 1
    raise InputError(
        f"{excerpt(val)} is not a number (column {excerpt(h)} holds numbers; leave a missing value empty)",
        ctx.at(header_line + 1 + i, f"{k} {excerpt(h)}"),
    )


def _bad_time_row(parsed: pd.Series | pd.DatetimeIndex, tcol: pd.Series, lines, ctx, what: str):
    bad = np.asarray(pd.isna(parsed)) & tcol.notna().to_numpy()
    i = int(np.argmax(bad))
    raise InputError(
        f"cannot read {excerpt(tcol.iloc[i])} as {what}", ctx.at(int(lines[i]), "1")
    )


def _parse_times(tcol: pd.Series, tz_text, tz_where, meta: dict, lines, ctx: _Ctx) -> pd.DatetimeIndex:
    first = str(tcol.iloc[0]).strip()
    with_offset = bool(_TS_OFFSET_RE.search(first))
    what = "an ISO 8601 timestamp (e.g. 1995-07-01T14:00" + (" -06:00)" if with_offset else ")")
    try:
        t = pd.to_datetime(tcol, format="ISO8601", utc=with_offset, errors="coerce")
    except (ValueError, TypeError):
        t = None
    if t is None or t.isna().any():
        if t is None:
            t = pd.to_datetime(tcol, format="ISO8601", utc=with_offset, errors="coerce")
        _bad_time_row(t, tcol, lines, ctx, what + "; all timestamps with an offset or all without")
    year0 = int(t.iloc[0].year)
    if tz_text is not None:
        tzname, off = _parse_timezone(tz_text, tz_where, year0)
    elif with_offset:
        offs = tcol.str.strip().str.extract(r"(Z|[+-]\d{2}:?\d{2})$")[0].unique()
        vals = []
        for o in offs:
            if o == "Z" or pd.isna(o):
                vals.append(0.0)
            else:
                sign = -1.0 if o[0] == "-" else 1.0
                vals.append(sign * (int(o[1:3]) + int(o[-2:]) / 60.0))
        off = min(vals)
        tzname = _offset_text(off)
        if len(set(vals)) > 1:
            ctx.warn(
                f"timestamps carry offsets {sorted(set(vals))} h (daylight saving time); converted "
                f"to the standard offset {tzname}"
            )
    else:
        lon = meta.get("longitude_deg")
        if lon is not None:
            off = float(round(lon / 15.0))
            tzname = _offset_text(off)
            ctx.warn(
                f"no '# timezone:' line and timestamps without offset; read as {tzname}, the nominal "
                f"offset of longitude {lon:g}; add '# timezone: ...' to be sure"
            )
        else:
            off, tzname = 0.0, "UTC"
            ctx.warn("no '# timezone:' line and timestamps without offset; read as UTC; "
                     "add '# timezone: ...' to be sure")
    tz = _fixed_tz(off)
    if with_offset:
        idx = pd.DatetimeIndex(t).tz_convert(tz)
    else:
        idx = pd.DatetimeIndex(t).tz_localize(tz)
    idx.name = "time"
    meta["tz"] = tzname
    meta["utc_offset_h"] = off
    return idx


def _parse_dates(tcol: pd.Series, lines, ctx: _Ctx) -> pd.DatetimeIndex:
    t = pd.to_datetime(tcol, format="ISO8601", errors="coerce")
    if t.isna().any():
        _bad_time_row(t, tcol, lines, ctx, "a date (YYYY-MM-DD)")
    idx = pd.DatetimeIndex(t)
    if idx.tz is not None:
        idx = idx.tz_localize(None)
    notmid = idx != idx.normalize()
    if notmid.any():
        i = int(np.argmax(notmid))
        raise InputError(
            f"{excerpt(tcol.iloc[i])} has a time of day; a daily record has dates only (YYYY-MM-DD)",
            ctx.at(int(lines[i]), "1"),
        )
    idx.name = "date"
    return idx


def _check_order(index: pd.DatetimeIndex, lines, ctx: _Ctx) -> None:
    v = index.asi8
    d = np.diff(v)
    daily = index.name == "date"
    what = "date" if daily else "timestamp"

    def show(t):
        return f"{t:%Y-%m-%d}" if daily else str(t)

    if (d == 0).any():
        i = int(np.argmax(d == 0)) + 1
        raise InputError(
            f"duplicate {what} {show(index[i])} (also on line {int(lines[i - 1])}); give each {what} once"
            + ("" if daily else " (a clock on daylight saving time repeats an hour in autumn: write "
               "standard time, or each timestamp with its offset)"),
            ctx.at(int(lines[i]), "1"),
        )
    if (d < 0).any():
        i = int(np.argmax(d < 0)) + 1
        raise InputError(
            f"{what}s out of order: {show(index[i])} comes after {show(index[i - 1])} "
            f"(line {int(lines[i - 1])}); sort the record by {'date' if daily else 'time'}",
            ctx.at(int(lines[i]), "1"),
        )


# --------------------------------------------------------------------------


def _check_latlon(meta: dict, ctx: _Ctx, line: int | None) -> None:
    """Refuse a record's coordinates outside the range of a latitude or longitude (:mod:`trackplan.ranges`)."""
    for key, name in (("latitude_deg", "latitude"), ("longitude_deg", "longitude")):
        value, (lo, hi) = meta.get(key), ranges.bounds(name)
        if value is not None and not lo <= value <= hi:
            raise InputError(f"{name} {value:g} is outside {lo:g}..{hi:g} degrees", ctx.at(line))
