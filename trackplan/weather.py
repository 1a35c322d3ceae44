"""Weather records: read the files people have into one canonical table.

:func:`read_record` reads a weather record and returns ``(data, meta)``: a
:class:`pandas.DataFrame` with canonical column names in SI units and a
metadata dict. The file format is recognised from its content (gzip is
recognised from its first bytes, whatever the file is called):

======================  ===================================================
``source_format``       what is read
======================  ===================================================
``trackplan-csv``       our own CSV (below), hourly or daily, ``.csv`` or
                        ``.csv.gz``
``tmy3``                US NSRDB typical meteorological year files (TMY3),
                        through :func:`pvlib.iotools.read_tmy3`
``epw``                 EnergyPlus weather files, through
                        :func:`pvlib.iotools.read_epw`
``ghcn-daily-csv``      daily station records in the GHCN-Daily
                        "by_station" CSV layout of the US national climate
                        archive (NOAA NCEI), below
``ghcn-daily-dly``      GHCN-Daily ``.dly`` fixed width
                        (:mod:`trackplan.readers_fixed`)
``isd-lite``            hourly ISD-Lite fixed width (:mod:`trackplan.readers_fixed`)
``cf-netcdf``           a point series from CF-convention NetCDF
                        (:mod:`trackplan.readers_cf`)
======================  ===================================================

Any CSV as published is read with a column mapping (:mod:`trackplan.columns`):
which column holds which quantity, in what unit. Every record passes the
quality checks of :mod:`trackplan.quality`; warnings are
:class:`trackplan.notices.Notice` objects (text with a stable code).

Canonical columns
-----------------
Hourly (or finer) records have a tz-aware :class:`pandas.DatetimeIndex` named
``time`` in the station's fixed *standard-time* offset (never daylight saving
time), made regular: a timestamp missing from the file appears as a row of NaN.

=========================  ===========  ===========================================
column                     unit         notes
=========================  ===========  ===========================================
``air_temperature_C``      [degC]       always present
``ghi_W_m2``               [W/m**2]     global horizontal irradiance, optional
``dni_W_m2``               [W/m**2]     direct normal irradiance, optional
``dhi_W_m2``               [W/m**2]     diffuse horizontal irradiance, optional
``wind_speed_m_s``         [m/s]        at ``meta["wind_height_m"]`` (10 m unless
                                        the file says otherwise), optional
``relative_humidity_pct``  [%]          optional
``cloud_fraction``         [1]          0-1, optional (TMY3/EPW total sky cover)
=========================  ===========  ===========================================

Daily records have a tz-naive, freq-less :class:`pandas.DatetimeIndex` of local
dates named ``date`` (made regular: a missing date is a row of NaN) and the
columns ``tmax_C`` and ``tmin_C`` [degC], optionally ``sunshine_fraction``
(0-1, of the possible sunshine) and ``cloud_fraction`` (0-1, daytime mean).

Timestamp convention (what instant a row's values apply to):

* ``trackplan-csv``: every value applies at its timestamp (instantaneous, or
  a mean centred on it), unless a metadata line ``# irradiance_timing:
  hour-ending`` (or ``hour-beginning``) says that irradiance is the mean of
  the hour ending (beginning) at the timestamp.
* ``tmy3``: pvlib's index, unchanged: the hour *ending* at the timestamp.
  Temperature, humidity and wind are the values at the timestamp;
  irradiance is the mean of the hour ending at it (TMY3 User's Manual,
  Wilcox and Marion 2008).
* ``epw``: pvlib labels EPW hour ``h`` (1-24) with the start of that hour
  (``h - 1``); here the index is moved one hour later, to the *end* of the
  hour, so that temperature and wind are the values at the timestamp
  ("at the time indicated", EnergyPlus Auxiliary Programs, Weather
  Converter) and irradiance is the mean of the hour ending at it, as for TMY3.

``meta["irradiance_timing"]`` is ``"instant"``, ``"hour-ending"`` or
``"hour-beginning"`` and ``meta["solar_position_shift_min"]`` is the shift [min]
to add to a timestamp to reach the middle of the irradiance averaging interval
(-30 for hour-ending hourly data), where solar position should be computed.
Typical-year files (TMY3, EPW) are re-labelled to the single year
:data:`TYPICAL_YEAR` (pvlib's ``coerce_year``); their last row, midnight at
the end of 31 December, falls on 1 January of the next year, as in pvlib.

Metadata
--------
``station``, ``station_id``, ``latitude_deg``, ``longitude_deg`` (east positive),
``elevation_m``, ``tz`` (IANA name or fixed offset text such as ``"UTC-06:00"``),
``utc_offset_h`` (standard-time offset [h]), ``time_step`` (``"hourly"`` or
``"daily"``), ``time_step_s``, ``source_format``, ``path``, ``typical_year``,
``source_years`` (typical years: month -> year the data came from),
``wind_height_m``, ``irradiance_timing``, ``solar_position_shift_min``,
``units_in_file`` (column -> unit as written), ``warnings`` (list of text, each
naming the file and line where possible), ``gaps``, ``years`` (complete-enough
calendar years: at least 90 % of the year's values and at least 70 % of every
month's), ``year_coverage`` (year -> fraction present), ``missing_years``
(years inside the record with no data at all), ``extra`` (other ``# key:
value`` lines). A value the file does not give is ``None``.

``gaps`` describes missing values of the main quantity (air temperature;
daily: tmax or tmin) after the short interpolation: ``count`` (number of
runs), ``missing`` (number of missing steps), ``longest_h`` (hourly) or
``longest_days`` (daily), ``interpolated`` (values filled), ``first`` (the
first few gaps: start, end, length).

Gaps and short interpolation
----------------------------
In hourly records a run of at most :data:`MAX_INTERPOLATED_STEPS` consecutive
missing steps (values or whole timestamps) between two valid values is filled
by linear interpolation in time, column by column; every longer gap stays NaN.
Both are reported in ``meta["warnings"]``. Daily records are never filled.

Our own CSV (``trackplan-csv``)
-------------------------------
::

    # station: Kestrel Plains
    # latitude: 41.20
    # longitude: -97.40
    # elevation: 480 m
    # timezone: UTC-06:00
    time,air_temperature [degF],ghi [W/m**2],wind_speed [m/s]
    1995-01-01T00:00,21.4,0,3.2

* Optional metadata lines ``# key: value`` before the header: ``station``
  (or ``name``), ``station_id``, ``latitude`` and ``longitude`` (decimal
  degrees, north and east positive; a bare number or ``deg``), ``elevation``
  (with a unit: ``480 m``, ``1575 ft``), ``timezone`` (``UTC``, a fixed offset
  ``UTC-06:00`` / ``-06:00`` / ``+05:30``, or an IANA name such as
  ``America/Chicago``), ``wind_height`` (with a unit, default 10 m),
  ``irradiance_timing`` (``instant``, ``hour-ending``, ``hour-beginning``),
  ``units confirmed`` (``yes``: the temperature unit in the header is right even
  where the values look like another unit, see
  :func:`trackplan.record_checks.unit_slip`). Other keys are kept in ``meta["extra"]``.
* The header: a timestamp column (``time``, ``date``, ``datetime``... or
  mapped); the time step comes from the timestamps (daily when every
  timestamp is at midnight a day or more apart), never from the column's
  name. Every quantity column carries its unit in brackets, or a mapping
  gives it. Quantities
  (aliases in :data:`CSV_QUANTITIES`): ``air_temperature``, ``ghi``, ``dni``,
  ``dhi``, ``wind_speed``, ``relative_humidity``, ``cloud_fraction``;
  daily ``tmax``, ``tmin``, ``sunshine_fraction``, ``cloud_fraction``.
  Temperature, irradiance and speed units are read by
  :func:`trackplan.units.to_si` (``degC``, ``degF``, ``K``; ``W/m**2``,
  ``kW/m**2``; ``m/s``, ``km/h``, ``mph``, ``knot``); fractions in ``[1]``,
  ``[%]``, ``[okta]`` or ``[tenths]``. Columns of other quantities are
  ignored, with a warning.
* Timestamps: ISO 8601. Without an offset they are read as clock times in
  the stated *standard-time* offset (an IANA zone gives its standard offset;
  daylight saving time is never applied: write offsets with each timestamp,
  ``2020-07-01T14:00-05:00``, if the clock followed it). With offsets they are
  converted to the standard offset (the stated zone's, else the smallest
  offset seen). A zone given for the record (``tz`` argument: ``--tz`` or
  the section's ``tz``) replaces the file's. Without any zone, naive
  timestamps are read in the nominal offset of the site's longitude, else the
  file's (``round(lon/15)`` h), else UTC, with a warning.
* Empty cells, ``NA`` and ``NaN`` are missing values.

Daily station records (``ghcn-daily-csv``)
------------------------------------------
The GHCN-Daily "by_station" CSV layout (NOAA NCEI, readme-by_station.txt;
Menne et al. 2012): no header, one element per line, eight fields::

    ID,YYYYMMDD,ELEMENT,VALUE,M-FLAG,Q-FLAG,S-FLAG,OBS-TIME
    XXC00012345,19950101,TMAX,156,,,S,

Elements read: ``TMAX`` and ``TMIN`` in tenths of degC, ``PSUN`` (percent of
possible sunshine) -> ``sunshine_fraction``, ``ACSH`` (average cloudiness,
sunrise to sunset, percent) -> ``cloud_fraction``; other elements are ignored.
``-9999`` is missing; a value with a quality flag (Q-FLAG not blank) failed
the archive's checks and is treated as missing, with a warning. One station
per file. Station name and coordinates come from optional ``# key: value``
lines at the top (as in our CSV) or, when a ``ghcnd-stations.txt`` file (the
archive's station list, fixed width) lies in the same folder, from it.

Validation
----------
Raised as :class:`~trackplan.errors.InputError` naming file, line or column:
an empty file, a header without units, an unknown unit, text in a numeric
column, a bad timestamp, duplicate or unordered timestamps, latitude outside
-90..90, longitude outside -180..180, a column whose values are
systematically outside physical limits in the stated unit but plausible in
another (e.g. a degC column holding degF). Reported as warnings: gaps, a
year missing entirely, isolated impossible values (removed, i.e. set
missing), implausible values with the likely unit mistake, tmin above tmax,
irradiance peaking away from solar noon (wrong time zone, longitude sign or
daylight-saving clock time).

References
----------
.. [1] Wilcox, S. and Marion, W. (2008). Users Manual for TMY3 Data Sets.
   NREL/TP-581-43156.
.. [2] EnergyPlus Auxiliary Programs, "Weather Converter Program: EnergyPlus
   Weather File (EPW) Data Dictionary".
.. [3] Menne, M. J., Durre, I., Vose, R. S., Gleason, B. E. and Houston, T. G.
   (2012). An overview of the Global Historical Climatology Network-Daily
   database. J. Atmos. Oceanic Technol. 29, 897-910; NOAA NCEI GHCN-Daily
   readme.txt and readme-by_station.txt.
.. [4] Spencer, J. W. (1971). Fourier series representation of the position
   of the sun. Search 2(5), 172 (equation of time, used in the time-zone check).
"""

from __future__ import annotations

import datetime as _dt
import io
import re
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd

from trackplan import columns, notices, record_checks, units
from trackplan.errors import InputError, excerpt

#: Year that typical-year files (TMY3, EPW) are re-labelled to (not a leap year).
TYPICAL_YEAR = 1990

#: Longest run of missing steps filled by linear interpolation (hourly records).
MAX_INTERPOLATED_STEPS = 2

#: A calendar year is complete enough when this share of its values is present ...
YEAR_MIN_COVERAGE = 0.90
#: ... and every month has at least this share.
MONTH_MIN_COVERAGE = 0.70

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


def _readers():
    """Readers by ``source_format`` (the dispatch table of :func:`read_record`)."""
    return {
        "trackplan-csv": _read_trackplan_csv,
        "tmy3": _read_tmy3,
        "epw": _read_epw,
        "ghcn-daily-csv": _read_ghcn_daily,
    }


SOURCE_FORMATS = ("trackplan-csv", "tmy3", "epw", "ghcn-daily-csv", "ghcn-daily-dly", "isd-lite", "cf-netcdf")


#: Sample climates shipped as package data: key -> file name (synthetic, fictional stations;
#: see climate_samples/README.md).
SAMPLE_FILES = {
    "kestrel_plains": "kestrel_plains_hourly.csv.gz",
    "gullhaven_quay": "gullhaven_quay_hourly.csv.gz",
    "quennick_sands": "quennick_sands_daily.csv.gz",
}


def sample_records() -> dict[str, Path]:
    """Paths of the synthetic sample climates installed with the package.

    Returns
    -------
    dict
        Key (``kestrel_plains``: hot continental, hourly; ``gullhaven_quay``:
        mild maritime, southern hemisphere, hourly; ``quennick_sands``: hot
        arid, daily max/min) -> path of the ``.csv.gz`` file, readable with
        :func:`read_record`.
    """
    from trackplan.samples import folder

    base = folder("climate_samples")
    return {k: Path(str(base / name)) for k, name in SAMPLE_FILES.items()}


def read_record(path, *, where: str | None = None, columns: dict | None = None, tz: str | None = None,
                site: tuple | None = None, units_confirmed: bool = False) -> tuple[pd.DataFrame, dict]:
    """Read a weather record into canonical columns (SI) and metadata.

    Parameters
    ----------
    path : str or path-like
        The file: our CSV (``.csv`` or ``.csv.gz``), TMY3, EPW, or a
        GHCN-Daily by_station CSV (see the module documentation).
    where : str, optional
        How to name the file in messages (default: the path as given).
    columns : dict, optional
        Column mapping of a CSV record (:func:`trackplan.columns.parse_options`).
    tz : str, optional
        Zone of naive timestamps (``UTC``, ``UTC-08:00``, an IANA name).
    site : (float or None, float or None), optional
        The site's latitude and longitude [deg]: the longitude gives the zone
        of naive timestamps when nothing else does; a gridded file is read at
        the cell nearest the site.
    units_confirmed : bool
        The temperature unit written in the file is confirmed by the caller (a section's
        ``climate_units_confirmed``): a record that looks like another unit is then read
        with a warning instead of refused (a file confirms it itself with a line
        ``# units confirmed: yes``).

    Returns
    -------
    data : pandas.DataFrame
        Hourly: tz-aware index ``time``, columns ``air_temperature_C`` [degC]
        and, where present, ``ghi_W_m2``, ``dni_W_m2``, ``dhi_W_m2`` [W/m**2],
        ``wind_speed_m_s`` [m/s], ``relative_humidity_pct`` [%],
        ``cloud_fraction`` [1]. Daily: index ``date`` (local dates),
        ``tmax_C``, ``tmin_C`` [degC], optional ``sunshine_fraction``,
        ``cloud_fraction`` [1].
    meta : dict
        Station, coordinates, time zone, time step, warnings, gaps and
        complete years (keys listed in the module documentation).

    Raises
    ------
    InputError
        What cannot be used, naming the file and line or column.
    """
    p = Path(path)
    lat, lon = site if site is not None else (None, None)
    ctx = _Ctx(label=where or str(path), path=str(p), columns=columns, tz=tz, site_lon=lon, site_lat=lat,
               units_confirmed=units_confirmed)
    from trackplan import quality, readers_cf, readers_fixed, safeio

    # before any reader opens it (a FIFO would block, a device never end)
    safeio.check_regular(p, ctx.label, safeio.MAX_RECORD_BYTES)
    if readers_cf.is_netcdf(p):
        data, meta = readers_cf.read_cf(p, ctx)
        meta["file_stamp"] = _file_stamp(p)
        return quality.finish_record(data, meta, ctx)
    text = _read_text(p, ctx)
    if not text.strip():
        raise InputError(
            "the file is empty; expected a weather record (our CSV with a header such as "
            "'time,air_temperature [degC]', TMY3, EPW or GHCN-Daily CSV)",
            ctx.label,
        )
    fmt = readers_fixed.sniff(text) or _sniff(text)
    if columns and fmt != "trackplan-csv":
        raise InputError(f"a column mapping applies to CSV records; this is a {fmt} file, whose columns its "
                         "format defines", next(iter(columns.values())).where)
    data, meta = {**_readers(), **readers_fixed.READERS}[fmt](text, ctx)
    meta["source_format"] = fmt
    meta["path"] = str(p)
    meta["file_stamp"] = _file_stamp(p)
    return quality.finish_record(data, meta, ctx)


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


def _parse_timezone(text: str, where: str, year: int = 2001) -> tuple[str, float]:
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
            raise InputError(f"time zone offset {excerpt(t)} is outside -12..+14 h", where)
        return _offset_text(off), off
    try:
        from zoneinfo import ZoneInfo

        zi = ZoneInfo(t)
    except Exception:
        raise InputError(
            f"unknown time zone {excerpt(t)}; write UTC, a fixed offset such as 'UTC-06:00' or '+05:30', "
            "or an IANA name such as 'America/Chicago'",
            where,
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
# Our CSV
# --------------------------------------------------------------------------


def _read_trackplan_csv(text: str, ctx: _Ctx) -> tuple[pd.DataFrame, dict]:
    meta = _base_meta()
    # metadata lines and the header
    meta_lines: list[tuple[int, str, str]] = []
    header = None
    header_line = 0
    pos = 0
    lineno = 0
    while pos < len(text):
        end = text.find("\n", pos)
        if end < 0:
            end = len(text)
        line = text[pos:end].rstrip("\r")
        lineno += 1
        pos = end + 1
        s = line.strip()
        if not s:
            continue
        if s.startswith("#"):
            m = _META_RE.match(s)
            if m:
                meta_lines.append((lineno, m.group(1), m.group(2)))
            continue
        header = line
        header_line = lineno
        break
    if header is None:
        raise InputError(
            "no header and no data, only comment lines; expected a header such as "
            "'time,air_temperature [degC]' or 'date,tmax [degC],tmin [degC]'",
            ctx.label,
        )
    _parse_meta_lines(meta_lines, meta, ctx)

    names = [h.strip() for h in header.split(",")]
    tname, cand, ignored = columns.csv_plan(names, ctx.columns, CSV_QUANTITIES, ctx.at(header_line))
    used = {h: (q.column, q, *_unit_factor(u, q, w), u) for h, (q, u, w, _) in cand.items()}

    # the data, vectorised
    dtypes = {tname: str}
    dtypes.update({h: "float64" for h in used})
    read_kw = dict(
        skiprows=header_line - 1,
        header=0,
        usecols=[tname, *used],
        skip_blank_lines=False,
        skipinitialspace=True,
    )
    try:
        raw = pd.read_csv(io.StringIO(text), dtype=dtypes, **read_kw)
    except pd.errors.ParserError as exc:  # a ValueError too: caught first
        raise InputError(f"malformed CSV ({_parser_message(exc)})", ctx.label) from None
    except ValueError:
        try:
            raw = pd.read_csv(io.StringIO(text), dtype=str, **read_kw)
        except (pd.errors.ParserError, ValueError) as exc:
            raise InputError(f"malformed CSV ({_parser_message(exc)})", ctx.label) from None
        _raise_bad_number(raw, list(used), names, header_line, ctx)
        raise  # pragma: no cover - the line above always raises
    # drop blank lines (all empty), remember file line of each row
    lines = np.arange(len(raw)) + header_line + 1
    blank = raw[tname].isna().to_numpy() & raw[list(used)].isna().all(axis=1).to_numpy()
    if blank.any():
        raw = raw.loc[~blank]
        lines = lines[~blank]
    if len(raw) == 0:
        raise InputError("header but no data rows", ctx.at(header_line))
    tcol = raw[tname]
    bad_t = tcol.isna().to_numpy()
    if bad_t.any():
        i = int(np.argmax(bad_t))
        raise InputError(f"empty {excerpt(tname)} cell; every row needs a timestamp", ctx.at(int(lines[i]), "1"))

    tz_text, tz_where = meta.pop("_tz_text", (None, None))
    tcol, step_kind = columns.step_of(tcol, lines, ctx)
    used = columns.csv_keep(used, cand, ignored, names, step_kind, ctx, ctx.at(header_line))
    data = pd.DataFrame(index=pd.RangeIndex(len(raw)))
    for h, (col, q, f, o, unit) in used.items():
        data[col] = raw[h].to_numpy(dtype=float) * f + o
        meta["units_in_file"][col] = unit
    tz_text, tz_where = columns.zone_text(tz_text, tz_where, ctx, step_kind)
    if step_kind == "hourly":
        index = _parse_times(tcol, tz_text, tz_where, meta, lines, ctx)
    else:
        index = _parse_dates(tcol, lines, ctx)
        if tz_text is not None:
            meta["tz"], meta["utc_offset_h"] = _parse_timezone(tz_text, tz_where)
    data.index = index
    _check_order(index, lines, ctx)

    if step_kind == "hourly":
        if meta["wind_height_m"] is None and "wind_speed_m_s" in data:
            meta["wind_height_m"] = 10.0
        timing = meta["irradiance_timing"] or "instant"
        meta["irradiance_timing"] = timing
    _check_values(data, meta, lines, used, ctx)
    data = _finish(data, meta, ctx, step_kind)
    return data, meta


def _parser_message(exc: Exception) -> str:
    """The CSV parser's own words (they name a line and a field count, not the file's content),
    shortened; a stray quote typically shows as a field running to the end of the file."""
    text = " ".join(str(exc).split())
    text = text[:160] + ("..." if len(text) > 160 else "")
    if "EOF inside string" in text or "quote" in text.lower():
        text += "; a stray quote character? quote marks must come in pairs"
    return "".join(c if c.isprintable() else "?" for c in text)


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
# Plausibility
# --------------------------------------------------------------------------


def _lines_text(lines, mask, values, limit: int = 3) -> str:
    idx = np.flatnonzero(mask)[:limit]
    return ", ".join(f"line {int(lines[i])}: {values[i]:g}" for i in idx)


def _check_values(data: pd.DataFrame, meta: dict, lines, used: dict, ctx: _Ctx) -> None:
    """Flag impossible and implausible values, with the likely unit mistake."""
    by_col = {v[0]: (h, v) for h, v in used.items()}
    lat = meta.get("latitude_deg")
    for col in list(data.columns):
        h, (_, q, f, o, unit) = by_col[col]
        x = data[col].to_numpy()
        raw = (x - o) / f  # as written in the file
        valid = ~np.isnan(x)
        n = int(valid.sum())
        if n == 0:
            ctx.warn(f"column {excerpt(h)} holds no values")
            continue
        out = valid & ((x < q.lo - 1e-9) | (x > q.hi + 1e-9))
        n_out = int(out.sum())
        hint = _unit_hint(q, unit, raw[valid], x[valid])
        if n_out and (n_out >= max(3, 0.01 * n)) and hint:
            raise InputError(
                f"{n_out} of {n} values are outside {q.lo:g}..{q.hi:g} {_si_label(q)} "
                f"in the stated unit [{unit}] ({_lines_text(lines, out, raw)}); {hint}",
                ctx.at(None, repr(h)),
            )
        if n_out:
            ctx.warn(
                f"{n_out} impossible value(s) in column {excerpt(h)} (outside {q.lo:g}..{q.hi:g} {_si_label(q)}; "
                f"{_lines_text(lines, out, raw)}); treated as missing"
                + (f"; {hint}" if hint else ""),
            )
            x = x.copy()
            x[out] = np.nan
            data[col] = x
        elif hint:
            ctx.warn(f"column {excerpt(h)}: {hint}")
    if "tmax_C" in data and "tmin_C" in data:
        tx, tn = data["tmax_C"].to_numpy(), data["tmin_C"].to_numpy()
        both = ~np.isnan(tx) & ~np.isnan(tn)
        inv = both & (tn > tx)
        ninv = int(inv.sum())
        if ninv and ninv > 0.5 * both.sum():
            raise InputError(
                f"tmin is above tmax on {ninv} of {int(both.sum())} days; the tmax and tmin columns "
                "look swapped", ctx.label)
        if ninv:
            ctx.warn(
                f"tmin above tmax on {ninv} day(s) ({_lines_text(lines, inv, tn)}); kept as written"
            )
    confirmed = bool(meta.get("units_confirmed")) or ctx.units_confirmed
    if "air_temperature_C" in data and meta.get("units_in_file", {}).get("air_temperature_C"):
        record_checks.unit_slip(data["air_temperature_C"], None, meta["units_in_file"]["air_temperature_C"], lat,
                                "air_temperature", confirmed, ctx)
    if "tmax_C" in data and "tmin_C" in data:
        record_checks.unit_slip(data["tmax_C"], data["tmin_C"], meta["units_in_file"].get("tmax_C", ""), lat, "tmax",
                                confirmed, ctx)


def _unit_hint(q: _Quantity, unit: str, raw: np.ndarray, x: np.ndarray) -> str:
    """The likely unit mistake when values do not fit the stated unit ('' if none)."""
    u = unit.strip().lower()
    if q.kind == "temperature":
        as_f = (raw - 32.0) * 5.0 / 9.0
        as_c = raw
        if u in ("degc", "deg c", "°c", "celsius") and x.max() > q.hi and as_f.min() >= q.lo and as_f.max() <= q.hi:
            return "these look like degF; write the unit as [degF]"
        if u in ("k", "kelvin") and x.min() < q.lo and as_c.max() <= q.hi and as_c.min() >= q.lo:
            return "these look like degC; write the unit as [degC]"
        if u in ("degf", "deg f", "°f", "fahrenheit") and x.max() > q.hi:
            as_k = raw - 273.15
            if as_k.min() >= q.lo and as_k.max() <= q.hi:
                return "these look like kelvin; write the unit as [K]"
        return ""
    if q.kind == "irradiance":
        mx = float(np.nanmax(x))
        if u in ("w/m**2", "w/m2", "w/m^2") and 0 < mx <= 1.6:
            return f"the largest value is {mx:g} W/m**2; these look like kW/m**2"
        if u.startswith("kw") and x.max() > q.hi and np.nanmax(raw) <= q.hi:
            return "these look like W/m**2; write the unit as [W/m**2]"
        return ""
    if q.kind == "speed":
        if np.nanmean(x) > 15.0:
            return (f"mean wind speed {np.nanmean(x):.1f} m/s is very high; is the unit km/h, mph or knot?")
        return ""
    if q.kind in ("percent", "fraction"):
        mx = float(np.nanmax(x))
        if q.kind == "fraction" and mx > 1.0 and np.nanmax(raw) <= 100.0:
            return "these look like percent; write the unit as [%]"
        if q.kind == "percent" and mx <= 1.0 and len(x) > 24 and u in ("%", "percent", "pct"):
            return f"the largest value is {mx:g} %; these look like a 0-1 fraction; write the unit as [1]"
        return ""
    return ""


# --------------------------------------------------------------------------
# Regular grid, short interpolation, gaps, years
# --------------------------------------------------------------------------


def _runs(mask: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Start indices and lengths of runs of True in ``mask``."""
    m = np.concatenate(([False], mask, [False])).astype(np.int8)
    d = np.diff(m)
    starts = np.flatnonzero(d == 1)
    ends = np.flatnonzero(d == -1)
    return starts, ends - starts


def _regularise(data: pd.DataFrame, step: pd.Timedelta, ctx: _Ctx) -> pd.DataFrame:
    idx = data.index
    v = idx.asi8
    st = step.value if hasattr(step, "value") else int(step)
    # nanosecond-free: asi8 is in the index's resolution
    unit_ns = pd.Timedelta(1, unit=idx.unit).value
    st_u = st // unit_ns
    off = (v - v[0]) % st_u
    if (off != 0).any():
        ctx.warn(
            f"timestamps are not on a regular {step} grid ({int((off != 0).sum())} off the grid); "
            "the record is left irregular"
        )
        return data
    n = int((v[-1] - v[0]) // st_u) + 1
    if n == len(v):
        return data
    grid = pd.date_range(idx[0], periods=n, freq=step, unit=idx.unit)
    grid.name = idx.name
    return data.reindex(grid)


def _interpolate_short(data: pd.DataFrame, ctx: _Ctx, step_h: float) -> int:
    total = 0
    for col in data.columns:
        x = data[col].to_numpy()
        miss = np.isnan(x)
        if not miss.any():
            continue
        starts, lens = _runs(miss)
        inside = (starts > 0) & (starts + lens < len(x))
        short = inside & (lens <= MAX_INTERPOLATED_STEPS)
        if not short.any():
            continue
        fill = np.zeros(len(x), dtype=bool)
        for s, L in zip(starts[short], lens[short]):
            fill[s : s + L] = True
        filled = data[col].interpolate(method="time", limit_area="inside").to_numpy()
        x = x.copy()
        x[fill] = filled[fill]
        data[col] = x
        k = int(fill.sum())
        total += k
        ctx.warn(
            f"column {col}: {k} missing value(s) in {int(short.sum())} gap(s) of at most "
            f"{MAX_INTERPOLATED_STEPS} steps ({MAX_INTERPOLATED_STEPS * step_h:g} h) filled by linear "
            "interpolation"
        )
    return total


def _finish(data: pd.DataFrame, meta: dict, ctx: _Ctx, step_kind: str) -> pd.DataFrame:
    """Regular grid, short interpolation, gaps and years; fills ``meta``, returns the data."""
    idx = data.index
    if len(idx) >= 2:
        d = np.diff(idx.asi8)
        vals, counts = np.unique(d, return_counts=True)
        step_u = int(vals[np.argmax(counts)])
        unit_ns = pd.Timedelta(1, unit=idx.unit).value
        step = pd.Timedelta(step_u * unit_ns, unit="ns")
    else:
        step = pd.Timedelta(hours=1) if step_kind == "hourly" else pd.Timedelta(days=1)
    if step_kind == "daily" and step != pd.Timedelta(days=1):
        ctx.warn(f"dates are mostly {step} apart, not one day; read as a daily record")
        step = pd.Timedelta(days=1)
    step_s = step.total_seconds()
    if step_kind == "hourly" and step_s > 3600:
        ctx.warn(f"the time step is {step_s / 3600:g} h, coarser than hourly; the daily cycle of "
                 "rail temperature is resolved poorly")
    meta["time_step"] = step_kind
    meta["time_step_s"] = step_s
    record_checks.check_span(data.index, step, ctx)
    before = data.index
    data = _regularise(data, step, ctx)
    added = len(data) - len(before)
    if added > 0:
        new = data.index[~data.index.isin(before)]
        ctx.warn(f"{added} {'timestamp' if step_kind == 'hourly' else 'date'}(s) missing from the file, "
                 f"first {new[0]} (rows of NaN added so the steps are regular)")

    main = ["air_temperature_C"] if step_kind == "hourly" else ["tmax_C", "tmin_C"]
    main_miss0 = data[main].isna().any(axis=1).to_numpy()
    if step_kind == "hourly":
        _interpolate_short(data, ctx, step_s / 3600)
    main_miss = data[main].isna().any(axis=1).to_numpy()
    starts, lens = _runs(main_miss)
    unit = "h" if step_kind == "hourly" else "days"
    step_in_unit = step_s / 3600 if step_kind == "hourly" else step_s / 86400
    first = []
    for s, L in zip(starts[:5], lens[:5]):
        first.append({
            "start": str(data.index[s]),
            "end": str(data.index[s + L - 1]),
            f"length_{unit}": float(L * step_in_unit),
        })
    gaps = {
        "column": " or ".join(main),
        "count": int(len(starts)),
        "missing": int(main_miss.sum()),
        f"longest_{unit}": float(lens.max() * step_in_unit) if len(lens) else 0.0,
        "interpolated": int(main_miss0.sum() - main_miss.sum()),
        "first": first,
    }
    meta["gaps"] = gaps
    if len(starts):
        ctx.warn(
            f"{len(starts)} gap(s) in {' / '.join(main)} left missing, {int(main_miss.sum())} "
            f"{'steps' if step_kind == 'hourly' else 'days'} in all, longest {gaps[f'longest_{unit}']:g} "
            f"{unit} (first from {first[0]['start']})"
        )
    for col in data.columns:
        if col in main:
            continue
        nm = int(data[col].isna().sum())
        if nm:
            ctx.warn(f"column {col}: {nm} value(s) still missing after the short interpolation"
                     if step_kind == "hourly" else f"column {col}: {nm} missing value(s)")
    _years(data, main_miss, meta, ctx, step_s)
    if step_kind == "hourly":
        from trackplan.quality import _check_solar_timing

        _check_solar_timing(data, meta, ctx)
    return data


def _years(data: pd.DataFrame, main_miss: np.ndarray, meta: dict, ctx: _Ctx, step_s: float) -> None:
    idx = data.index
    if meta.get("typical_year"):
        meta["years"] = [TYPICAL_YEAR]
        meta["year_coverage"] = {TYPICAL_YEAR: float(1.0 - main_miss[idx.year == TYPICAL_YEAR].mean())}
        return
    year = idx.year.to_numpy()
    month = idx.month.to_numpy()
    present = ~main_miss
    y0, y1 = int(year.min()), int(year.max())
    ys = np.arange(y0, y1 + 1)
    key = (year - y0) * 12 + (month - 1)
    got = np.bincount(key[present], minlength=len(ys) * 12).reshape(len(ys), 12)
    per_day = 86400.0 / step_s
    dim = np.array([[pd.Timestamp(int(y), m, 1).days_in_month for m in range(1, 13)] for y in ys])
    expected = dim * per_day
    mcov = got / expected
    ycov = got.sum(axis=1) / expected.sum(axis=1)
    cov = {int(y): round(float(c), 4) for y, c in zip(ys, ycov)}
    complete = [int(y) for y, c, mc in zip(ys, ycov, mcov) if c >= YEAR_MIN_COVERAGE and mc.min() >= MONTH_MIN_COVERAGE]
    missing = [int(y) for y, c in zip(ys, ycov) if c == 0.0]
    meta["years"] = complete
    meta["year_coverage"] = cov
    meta["missing_years"] = missing
    if missing:
        ctx.warn(f"year(s) with no data at all inside the record: {', '.join(map(str, missing))}")
    partial = [y for y in cov if y not in complete and y not in missing]
    if partial:
        ctx.warn(
            "incomplete year(s), left out of the complete years: "
            + ", ".join(f"{y} ({cov[y] * 100:.0f} %)" for y in partial)
        )


# --------------------------------------------------------------------------
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


def _check_latlon(meta: dict, ctx: _Ctx, line: int | None) -> None:
    lat, lon = meta.get("latitude_deg"), meta.get("longitude_deg")
    if lat is not None and not -90.0 <= lat <= 90.0:
        raise InputError(f"latitude {lat:g} is outside -90..90 degrees", ctx.at(line))
    if lon is not None and not -180.0 <= lon <= 180.0:
        raise InputError(f"longitude {lon:g} is outside -180..180 degrees", ctx.at(line))


# --------------------------------------------------------------------------
# GHCN-Daily by_station CSV
# --------------------------------------------------------------------------

_GHCN_NAMES = ["id", "date", "element", "value", "mflag", "qflag", "sflag", "obstime"]
_GHCN_ELEMENTS = {"TMAX": ("tmax_C", 0.1), "TMIN": ("tmin_C", 0.1),
                  "PSUN": ("sunshine_fraction", 0.01), "ACSH": ("cloud_fraction", 0.01)}


def _read_ghcn_daily(text: str, ctx: _Ctx) -> tuple[pd.DataFrame, dict]:
    meta = _base_meta()
    # optional '# key: value' lines at the top
    meta_lines = []
    skip = 0
    for ln, line in enumerate(_first_lines(text, 200), start=1):
        s = line.strip()
        if s.startswith("#") or not s:
            m = _META_RE.match(s)
            if m:
                meta_lines.append((ln, m.group(1), m.group(2)))
            skip = ln
            continue
        break
    _parse_meta_lines(meta_lines, meta, ctx)
    meta.pop("_tz_text", None)
    dtypes = {"id": str, "date": str, "element": str, "value": "float64", "mflag": str, "qflag": str,
              "sflag": str, "obstime": str}
    kw = dict(header=None, names=_GHCN_NAMES, skiprows=skip, keep_default_na=False,
              na_values={"value": ["", "-9999"]}, skip_blank_lines=False, index_col=False)
    try:
        raw = pd.read_csv(io.StringIO(text), dtype=dtypes, **kw)
    except pd.errors.ParserError as exc:  # a ValueError too: caught first
        raise InputError(f"malformed GHCN-Daily CSV ({_parser_message(exc)})", ctx.label) from None
    except ValueError:
        try:
            raw = pd.read_csv(io.StringIO(text), dtype=str, **kw)
        except (pd.errors.ParserError, ValueError) as exc:
            raise InputError(f"malformed GHCN-Daily CSV ({_parser_message(exc)})", ctx.label) from None
        v = raw["value"]
        num = pd.to_numeric(v, errors="coerce")
        bad = (v.notna() & (v != "") & (v != "-9999") & num.isna()).to_numpy()
        i = int(np.argmax(bad))
        raise InputError(f"{excerpt(v.iloc[i])} is not a number (GHCN-Daily VALUE field)",
                         ctx.at(skip + 1 + i, "4 (VALUE)")) from None
    lines = np.arange(len(raw)) + skip + 1
    keep = raw["id"].notna().to_numpy() & (raw["id"].str.strip() != "").to_numpy()
    raw, lines = raw.loc[keep], lines[keep]
    ids = raw["id"].unique()
    if len(ids) > 1:
        raise InputError(f"the file holds {len(ids)} stations ({', '.join(map(str, ids[:4]))}...); "
                         "give one station per file", ctx.label)
    meta["station_id"] = str(ids[0])
    _ghcn_station_list(Path(ctx.path), meta["station_id"], meta, ctx)
    _check_latlon(meta, ctx, None)
    el = raw["element"].to_numpy(dtype=str)
    sel = np.isin(el, list(_GHCN_ELEMENTS))
    raw, lines, el = raw.loc[sel], lines[sel], el[sel]
    if not (el == "TMAX").any() or not (el == "TMIN").any():
        raise InputError("no TMAX and TMIN lines; a daily record needs both (GHCN-Daily elements, tenths of degC)",
                         ctx.label)
    d = pd.to_datetime(raw["date"], format="%Y%m%d", errors="coerce")
    if d.isna().any():
        i = int(np.argmax(d.isna().to_numpy()))
        raise InputError(f"cannot read {excerpt(raw['date'].iloc[i])} as a date (YYYYMMDD)", ctx.at(int(lines[i]), "2 (DATE)"))
    dup = pd.DataFrame({"d": d.to_numpy(), "e": el}).duplicated().to_numpy()
    if dup.any():
        i = int(np.argmax(dup))
        raise InputError(f"second {el[i]} value for {raw['date'].iloc[i]}; give each date and element once",
                         ctx.at(int(lines[i])))
    vals = raw["value"].to_numpy(dtype=float)
    q = raw["qflag"].fillna("").str.strip().to_numpy(dtype=str)
    flagged = (q != "") & ~np.isnan(vals)
    if flagged.any():
        idx = np.flatnonzero(flagged)[:3]
        ctx.warn(
            f"{int(flagged.sum())} value(s) with a quality flag (failed the archive's checks) treated as missing ("
            + ", ".join(f"line {int(lines[i])}: {el[i]} flag {q[i]}" for i in idx) + ")"
        )
        vals = np.where(flagged, np.nan, vals)
    scale = pd.Series({e: f for e, (_, f) in _GHCN_ELEMENTS.items()})
    si = vals * scale.reindex(el).to_numpy()
    long = pd.DataFrame({"date": d.to_numpy(), "el": el, "v": si, "line": lines})
    wide = long.pivot(index="date", columns="el", values="v").sort_index()
    data = pd.DataFrame(index=pd.DatetimeIndex(wide.index, name="date"))
    for e, (col, _) in _GHCN_ELEMENTS.items():
        if e in wide:
            data[col] = wide[e].to_numpy()
    data.index.freq = None
    line_of = long.pivot_table(index="date", values="line", aggfunc="min").reindex(data.index)["line"].to_numpy()
    used = {}
    for e, (col, _) in _GHCN_ELEMENTS.items():
        if col in data:
            qd = {"tmax_C": _TMAX, "tmin_C": _TMIN, "sunshine_fraction": _SUN, "cloud_fraction": _CLOUD}[col]
            unit = "degC" if e in ("TMAX", "TMIN") else "1"
            used[e] = (col, qd, 1.0, 0.0, unit)
            meta["units_in_file"][col] = "tenths of degC" if e in ("TMAX", "TMIN") else "percent"
    _check_values(data, meta, line_of, used, ctx)
    if meta["station"] is None:
        meta["station"] = meta["station_id"]
    data = _finish(data, meta, ctx, "daily")
    return data, meta


def _ghcn_station_list(path: Path, sid: str, meta: dict, ctx: _Ctx) -> None:
    """Coordinates from ``ghcnd-stations.txt`` beside the file (fixed width, GHCN-Daily readme)."""
    lst = path.parent / "ghcnd-stations.txt"
    if not lst.is_file():
        if meta["latitude_deg"] is None:
            ctx.warn("no latitude/longitude: add '# latitude: ...' and '# longitude: ...' lines or put "
                     "ghcnd-stations.txt beside the file")
        return
    with open(lst, encoding="utf-8", errors="replace") as fh:
        for ln, line in enumerate(fh, start=1):
            if line.startswith(sid):
                try:
                    lat = float(line[12:20])
                    lon = float(line[21:30])
                    elev = float(line[31:37])
                except ValueError:
                    raise InputError("cannot read latitude/longitude/elevation (columns 13-37)",
                                     f"{lst} line {ln}") from None
                if meta["latitude_deg"] is None:
                    meta["latitude_deg"] = lat
                if meta["longitude_deg"] is None:
                    meta["longitude_deg"] = lon
                if meta["elevation_m"] is None and elev > -999:
                    meta["elevation_m"] = elev
                if meta["station"] is None:
                    meta["station"] = line[41:71].strip() or None
                return
    ctx.warn(f"station {sid} is not in {lst}")
