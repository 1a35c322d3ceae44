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

from pathlib import Path

import pandas as pd

from trackplan.errors import InputError

# The readers live in one module per format family; every name stays importable from here.
from trackplan.readers_checks import (  # noqa: F401
    _check_values,
    _finish,
    _interpolate_short,
    _lines_text,
    _regularise,
    _runs,
    _unit_hint,
    _years,
)
from trackplan.readers_common import (  # noqa: F401
    _check_latlon,
    _AIR,
    _bad_time_row,
    _base_meta,
    _check_order,
    _CLOUD,
    CSV_QUANTITIES,
    _Ctx,
    DAILY_COLUMNS,
    _DHI,
    _DNI,
    _file_stamp,
    _first_lines,
    _fixed_tz,
    _FRACTION_UNITS,
    _GHCN_RE,
    _GHI,
    HOURLY_COLUMNS,
    MAX_INTERPOLATED_STEPS,
    _META_RE,
    MONTH_MIN_COVERAGE,
    _OFFSET_RE,
    _offset_text,
    _parse_coordinate,
    _parse_dates,
    _parse_meta_lines,
    _parse_times,
    _parse_timezone,
    _parser_message,
    _Quantity,
    _raise_bad_number,
    _read_text,
    _RH,
    _si_label,
    _sniff,
    _SUN,
    _TMAX,
    _TMIN,
    _TS_OFFSET_RE,
    TYPICAL_YEAR,
    _unit_factor,
    _WIND,
    YEAR_MIN_COVERAGE,
)
from trackplan.readers_csv import (  # noqa: F401
    _read_trackplan_csv,
)
from trackplan.readers_ghcn import (  # noqa: F401
    _GHCN_ELEMENTS,
    _GHCN_NAMES,
    _ghcn_station_list,
    _read_ghcn_daily,
)
from trackplan.readers_typical import (  # noqa: F401
    _EPW_MISSING,
    _read_epw,
    _read_tmy3,
    _TMY3_MAP,
    _typical_common,
    _typical_year_meta,
)


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
