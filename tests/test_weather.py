"""Tests of the weather record readers (trackplan.weather) and the sample climates."""

from __future__ import annotations

import gzip
import importlib.util
import sys
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from trackplan.errors import InputError
from trackplan.weather import (
    MAX_INTERPOLATED_STEPS,
    TYPICAL_YEAR,
    read_record,
    sample_records,
)

ROOT = Path(__file__).resolve().parent.parent


def _pvlib_data() -> Path:
    import pvlib

    return Path(pvlib.__file__).parent / "data"


GREENSBORO = "723170TYA.CSV"  # US NSRDB TMY3, Greensboro NC, shipped with pvlib
SAND_POINT = "703165TY.csv"  # US NSRDB TMY3, Sand Point AK, shipped with pvlib


def write(tmp_path: Path, text: str, name: str = "rec.csv") -> Path:
    p = tmp_path / name
    if name.endswith(".gz"):
        p.write_bytes(gzip.compress(text.encode()))
    else:
        p.write_text(text)
    return p


def hourly_csv(values, start="2020-07-01T00:00", unit="degC", extra_meta="", tz="UTC-06:00"):
    t = pd.date_range(start, periods=len(values), freq="h")
    rows = "\n".join(f"{ts:%Y-%m-%dT%H:%M},{v}" for ts, v in zip(t, values))
    return (f"# station: Test Siding\n# latitude: 41.2\n# longitude: -97.4\n# timezone: {tz}\n{extra_meta}"
            f"time,air_temperature [{unit}]\n{rows}\n")


# --------------------------------------------------------------------------
# TMY3 against pvlib's own reader
# --------------------------------------------------------------------------


@pytest.mark.parametrize("fname", [GREENSBORO, SAND_POINT])
def test_tmy3_agrees_with_pvlib_read_tmy3(fname):
    # Reference: pvlib.iotools.read_tmy3 on the NSRDB TMY3 files pvlib ships.
    import pvlib

    path = _pvlib_data() / fname
    ref, ref_meta = pvlib.iotools.read_tmy3(path, map_variables=True)
    ref_c, _ = pvlib.iotools.read_tmy3(path, map_variables=True, coerce_year=TYPICAL_YEAR)
    data, meta = read_record(path)
    assert meta["source_format"] == "tmy3"
    assert len(data) == len(ref) == 8760
    for ours, theirs in [("air_temperature_C", "temp_air"), ("ghi_W_m2", "ghi"), ("dni_W_m2", "dni"),
                         ("dhi_W_m2", "dhi"), ("wind_speed_m_s", "wind_speed"),
                         ("relative_humidity_pct", "relative_humidity")]:
        np.testing.assert_array_equal(data[ours].to_numpy(), ref[theirs].to_numpy(dtype=float), err_msg=ours)
    # same instants as pvlib's (coerced) index: hour-ending, local standard time
    np.testing.assert_array_equal(data.index.tz_convert("UTC").asi8 // 10**6,
                                  ref_c.index.tz_convert("UTC").asi8 // 10**6)
    assert data.index.name == "time"
    assert meta["latitude_deg"] == ref_meta["latitude"]
    assert meta["longitude_deg"] == ref_meta["longitude"]
    assert meta["elevation_m"] == ref_meta["altitude"]
    assert meta["utc_offset_h"] == ref_meta["TZ"]
    assert meta["typical_year"] is True and meta["years"] == [TYPICAL_YEAR]
    assert meta["irradiance_timing"] == "hour-ending" and meta["solar_position_shift_min"] == -30.0
    assert meta["gaps"]["count"] == 0
    # only the typical-year notice: irradiance centred on solar noon (no time-zone warning), no gaps
    assert [w.code for w in meta["warnings"]] == ["typical_year"]


def test_tmy3_metadata_values():
    # Header line of the NSRDB file: 723170,"GREENSBORO PIEDMONT TRIAD INT",NC,-5.0,36.100,-79.950,273
    data, meta = read_record(_pvlib_data() / GREENSBORO)
    assert meta["station"] == "GREENSBORO PIEDMONT TRIAD INT, NC"
    assert (meta["latitude_deg"], meta["longitude_deg"], meta["elevation_m"]) == (36.1, -79.95, 273.0)
    assert meta["tz"] == "UTC-05:00"
    # months come from different source years (typical year)
    assert meta["source_years"][1] == 1988 and meta["source_years"][9] == 2003  # file rows 09/../2003


def test_hour_ending_irradiance_centred_half_an_hour_after_solar_noon():
    # TMY3 irradiance is the mean of the hour ending at the timestamp (Wilcox and Marion 2008,
    # TMY3 User's Manual): the GHI-weighted mean clock hour lies 0.5 h after solar noon.
    # Solar noon from the longitude and the equation of time (Spencer 1971).
    from trackplan.quality import _equation_of_time_min

    data, meta = read_record(_pvlib_data() / GREENSBORO)
    g = data["ghi_W_m2"]
    jun = g[(data.index.month == 6) & (g > 0)]
    hour = jun.index.hour + jun.index.minute / 60
    centre = float(np.average(hour, weights=jun))
    noon = 12 - _equation_of_time_min(np.array([166]))[0] / 60 - (meta["longitude_deg"] + 75) / 15
    assert centre - noon == pytest.approx(0.5, abs=0.15)


# --------------------------------------------------------------------------
# EPW through pvlib
# --------------------------------------------------------------------------


def _write_epw(tmp_path: Path) -> Path:
    """A small EPW file (8 header lines, 8760 rows) built from the Greensboro TMY3 values."""
    import pvlib

    ref, _ = pvlib.iotools.read_tmy3(_pvlib_data() / GREENSBORO, map_variables=True)
    lines = [
        "LOCATION,Test Halt,NC,USA,TMY3,723170,36.10,-79.95,-5.0,273.0",
        "DESIGN CONDITIONS,0", "TYPICAL/EXTREME PERIODS,0", "GROUND TEMPERATURES,0",
        "HOLIDAYS/DAYLIGHT SAVINGS,No,0,0,0", "COMMENTS 1,test file", "COMMENTS 2,",
        "DATA PERIODS,1,1,Data,Sunday, 1/ 1,12/31",
    ]
    # EPW rows are hours 1-24 of each day, as are the TMY3 rows (hour-ending 01:00 .. 24:00)
    for i in range(len(ref)):
        r = ref.iloc[i]
        mm, dd, yy = (int(x) for x in r["Date (MM/DD/YYYY)"].split("/"))
        f = [yy, mm, dd, int(r["Time (HH:MM)"][:2]), 60, "?9?9?9?9E0?9?9?9?9?9?9?9?9?9?9?9",
             r.temp_air, r.temp_dew, r.relative_humidity, r.pressure * 100, 0, 0, 300, r.ghi, r.dni, r.dhi,
             0, 0, 0, 0, r.wind_direction, r.wind_speed, r["TotCld (tenths)"], r["OpqCld (tenths)"],
             16.1, 77777, 9, 999999999, 20, 0.1, 0, 88, 0.2, 0, 0]
        lines.append(",".join(str(x) for x in f))
    p = tmp_path / "test.epw"
    p.write_text("\n".join(lines) + "\n")
    return p


def test_epw_agrees_with_pvlib_read_epw(tmp_path):
    # Reference: pvlib.iotools.read_epw; our index is pvlib's plus one hour (end of the EPW hour).
    import pvlib

    p = _write_epw(tmp_path)
    ref, ref_meta = pvlib.iotools.read_epw(p, coerce_year=TYPICAL_YEAR)
    data, meta = read_record(p)
    assert meta["source_format"] == "epw" and meta["typical_year"] is True
    for ours, theirs in [("air_temperature_C", "temp_air"), ("ghi_W_m2", "ghi"), ("dni_W_m2", "dni"),
                         ("dhi_W_m2", "dhi"), ("wind_speed_m_s", "wind_speed")]:
        np.testing.assert_array_equal(data[ours].to_numpy(), ref[theirs].to_numpy(dtype=float), err_msg=ours)
    shifted = (ref.index + pd.Timedelta(hours=1)).tz_convert("UTC")
    np.testing.assert_array_equal(data.index.tz_convert("UTC").asi8 // 10**6, shifted.asi8 // 10**6)
    assert (meta["latitude_deg"], meta["longitude_deg"]) == (ref_meta["latitude"], ref_meta["longitude"])
    assert meta["station"] == "Test Halt, NC, USA"
    # same instants as the TMY3 the file was built from
    tmy, _ = read_record(_pvlib_data() / GREENSBORO)
    assert data.index.equals(tmy.index)
    assert [w.code for w in meta["warnings"]] == ["typical_year"]


# --------------------------------------------------------------------------
# Our CSV
# --------------------------------------------------------------------------


def test_own_csv_degF_agrees_with_pint(tmp_path):
    # Reference: pint's conversion of degF to degC (offset unit, Quantity.to).
    import pint

    vals = [-40.0, 0.0, 32.0, 68.5, 95.0, 104.0, 71.3, 50.0]
    p = write(tmp_path, hourly_csv(vals, unit="degF"))
    data, meta = read_record(p)
    ureg = pint.UnitRegistry()
    expect = ureg.Quantity(np.array(vals), ureg.degF).to(ureg.degC).magnitude
    np.testing.assert_allclose(data["air_temperature_C"].to_numpy(), expect, rtol=0, atol=1e-12)
    assert data["air_temperature_C"].iloc[0] == pytest.approx(-40.0, abs=1e-12)
    assert meta["units_in_file"]["air_temperature_C"] == "degF"
    assert meta["source_format"] == "trackplan-csv" and meta["time_step"] == "hourly"
    assert meta["time_step_s"] == 3600.0


def test_own_csv_units_and_columns(tmp_path):
    # kW/m**2 and km/h through trackplan.units (factors: 1000 W per kW; 1 km/h = 1/3.6 m/s, exact)
    text = ("# station: Test Siding\n# latitude: 41.2\n# longitude: -97.4\n# elevation: 1575 ft\n"
            "# timezone: UTC-06:00\n# wind_height: 2 m\n# operator: none\n"
            "time, air_temperature [K], ghi [kW/m**2], wind_speed [km/h], relative_humidity [1], flag\n"
            "2020-07-01T11:00,300.15,0.85,36,0.4,x\n2020-07-01T12:00,301.15,0.9,18,0.35,y\n")
    data, meta = read_record(write(tmp_path, text))
    assert list(data.columns) == ["air_temperature_C", "ghi_W_m2", "wind_speed_m_s", "relative_humidity_pct"]
    np.testing.assert_allclose(data["air_temperature_C"], [27.0, 28.0], atol=1e-9)
    np.testing.assert_allclose(data["ghi_W_m2"], [850.0, 900.0], atol=1e-9)
    np.testing.assert_allclose(data["wind_speed_m_s"], [10.0, 5.0], atol=1e-12)
    np.testing.assert_allclose(data["relative_humidity_pct"], [40.0, 35.0], atol=1e-12)
    assert meta["elevation_m"] == pytest.approx(1575 * 0.3048)  # international foot, exact
    assert meta["wind_height_m"] == 2.0
    assert meta["extra"] == {"operator": "none"}
    assert any("'flag'" in w and "ignored" in w for w in meta["warnings"])
    assert str(data.index.tz) == "UTC-06:00" and data.index[0].hour == 11


def test_own_csv_gzip_and_daily(tmp_path):
    text = ("# station: Dry Wash\n# latitude: 32.4\n# longitude: -112.9\n"
            "date,tmax [degF],tmin [degF],sunshine_fraction [%]\n"
            "2020-07-01,104,77,90\n2020-07-02,106.7,80.6,100\n")
    data, meta = read_record(write(tmp_path, text, "d.csv.gz"))
    assert meta["time_step"] == "daily" and data.index.name == "date"
    assert data.index.tz is None and data.index.freq is None
    np.testing.assert_allclose(data["tmax_C"], [40.0, 41.5], atol=1e-9)
    np.testing.assert_allclose(data["tmin_C"], [25.0, 27.0], atol=1e-9)
    np.testing.assert_allclose(data["sunshine_fraction"], [0.9, 1.0], atol=1e-12)


def test_timestamps_with_dst_offsets_go_to_standard_time(tmp_path):
    # A clock on daylight saving time, written with offsets (ISO 8601): 14:00-05:00 is 13:00-06:00.
    text = ("# latitude: 41.2\n# longitude: -97.4\n# timezone: America/Chicago\n"
            "time,air_temperature [degC]\n2020-07-01T14:00-05:00,30\n2020-07-01T15:00-05:00,31\n"
            "2020-07-01T16:00-05:00,31.5\n")
    data, meta = read_record(write(tmp_path, text))
    assert meta["utc_offset_h"] == -6.0 and meta["tz"] == "America/Chicago"
    assert data.index[0].hour == 13 and data.index[0].utcoffset() == pd.Timedelta(hours=-6)


def test_naive_timestamps_read_in_standard_offset_of_iana_zone(tmp_path):
    # 'America/Chicago': standard time UTC-6 (IANA tz database); no DST shift applied in July.
    text = hourly_csv([30, 31, 32], tz="America/Chicago")
    data, meta = read_record(write(tmp_path, text))
    assert meta["utc_offset_h"] == -6.0
    assert data.index[0] == pd.Timestamp("2020-07-01T06:00Z")


def test_no_timezone_warns(tmp_path):
    text = "# longitude: -97.4\ntime,air_temperature [degC]\n2020-07-01T00:00,20\n2020-07-01T01:00,19\n"
    data, meta = read_record(write(tmp_path, text))
    assert meta["utc_offset_h"] == -6.0  # round(-97.4 / 15)
    assert any("no '# timezone:' line" in w for w in meta["warnings"])


# --------------------------------------------------------------------------
# Bad input: InputError naming the file and line/column
# --------------------------------------------------------------------------


def _err(tmp_path, text, name="bad.csv") -> str:
    p = write(tmp_path, text, name)
    with pytest.raises(InputError) as ei:
        read_record(p)
    msg = str(ei.value)
    assert str(p) in msg
    return msg


def test_empty_file(tmp_path):
    assert "empty" in _err(tmp_path, "")
    assert "empty" in _err(tmp_path, "  \n\n", "blank.csv")


def test_header_without_units(tmp_path):
    msg = _err(tmp_path, "# timezone: UTC\ntime,air_temperature,ghi\n2020-01-01T00:00,1,0\n")
    assert "line 2 column 2 'air_temperature'" in msg and "no unit" in msg


def test_unknown_unit(tmp_path):
    msg = _err(tmp_path, "time,air_temperature [degX]\n2020-01-01T00:00,1\n")
    assert "line 1 column 2" in msg and "unknown unit 'degX'" in msg


def test_unit_of_wrong_kind(tmp_path):
    msg = _err(tmp_path, "time,air_temperature [m/s]\n2020-01-01T00:00,1\n")
    assert "line 1 column 2" in msg


def test_text_in_numeric_column(tmp_path):
    rows = "\n".join(f"2020-01-01T{h:02d}:00,{h}" for h in range(5))
    text = f"# timezone: UTC\ntime,air_temperature [degC]\n{rows}\n2020-01-01T05:00,warm\n"
    msg = _err(tmp_path, text)
    assert "line 8 column 2 'air_temperature [degC]'" in msg and "'warm' is not a number" in msg


def test_latitude_out_of_range(tmp_path):
    msg = _err(tmp_path, "# station: X\n# latitude: 95\ntime,air_temperature [degC]\n2020-01-01T00:00,1\n")
    assert "line 2" in msg and "latitude 95 is outside -90..90" in msg


def test_duplicate_timestamp(tmp_path):
    text = ("# timezone: UTC\ntime,air_temperature [degC]\n2020-01-01T00:00,1\n2020-01-01T01:00,2\n"
            "2020-01-01T01:00,3\n")
    msg = _err(tmp_path, text)
    assert "line 5 column 1" in msg and "duplicate" in msg and "line 4" in msg


def test_unordered_timestamps(tmp_path):
    text = ("# timezone: UTC\ntime,air_temperature [degC]\n2020-01-01T00:00,1\n2020-01-01T02:00,2\n"
            "2020-01-01T01:00,3\n")
    msg = _err(tmp_path, text)
    assert "line 5 column 1" in msg and "out of order" in msg


def test_duplicate_date_in_daily_record(tmp_path):
    msg = _err(tmp_path, "date,tmax [degC],tmin [degC]\n2020-01-01,1,0\n2020-01-01,2,1\n")
    assert "line 3 column 1" in msg and "duplicate date 2020-01-01 (also on line 2)" in msg


def test_bad_timestamp(tmp_path):
    text = "# timezone: UTC\ntime,air_temperature [degC]\n2020-01-01T00:00,1\n2020-13-45T01:00,2\n"
    msg = _err(tmp_path, text)
    assert "line 4 column 1" in msg


def test_bad_timezone(tmp_path):
    msg = _err(tmp_path, "# timezone: Mars/Olympus\ntime,air_temperature [degC]\n2020-01-01T00:00,1\n")
    assert "line 1" in msg and "unknown time zone" in msg


def test_degc_column_holding_degF_is_refused(tmp_path):
    # A summer day written in degF under a degC header: 95 degC is impossible (world record
    # about 57 degC), 95 degF = 35 degC is plausible.
    vals = [75, 78, 84, 90, 95, 97, 96, 91, 85, 80]
    msg = _err(tmp_path, hourly_csv(vals, unit="degC"))
    assert "look like degF" in msg and "column 'air_temperature [degC]'" in msg and "line" in msg


def test_isolated_impossible_value_removed_with_warning(tmp_path):
    vals = [20.0 + 0.1 * i for i in range(300)]
    vals[150] = -9999.0
    data, meta = read_record(write(tmp_path, hourly_csv(vals)))
    line = 5 + 1 + 150  # four metadata lines, header on line 5, row 0 on line 6
    assert any(f"line {line}: -9999" in w and "treated as missing" in w for w in meta["warnings"])
    # one missing hour is inside the short interpolation
    assert data["air_temperature_C"].iloc[150] == pytest.approx(35.0, abs=1e-9)
    assert meta["gaps"]["interpolated"] == 1 and meta["gaps"]["count"] == 0


def test_daily_tmin_above_tmax_warns(tmp_path):
    text = "date,tmax [degC],tmin [degC]\n2020-07-01,30,15\n2020-07-02,14,16\n2020-07-03,31,17\n"
    data, meta = read_record(write(tmp_path, text))
    assert any("tmin above tmax on 1 day" in w and "line 3" in w for w in meta["warnings"])


def test_longitude_sign_mistake_warns(tmp_path):
    # Irradiance of a place at 97.4 W, labelled as 97.4 E: solar noon off by 13 h.
    data, _ = read_record(sample_records()["kestrel_plains"])
    d = data.loc["2020-06-01":"2020-06-20"]
    rows = "\n".join(f"{t:%Y-%m-%dT%H:%M},{a:.1f},{g:.0f}" for t, a, g in
                     zip(d.index, d.air_temperature_C, d.ghi_W_m2))
    text = ("# latitude: 41.2\n# longitude: 97.4\n# timezone: UTC-06:00\n"
            f"time,air_temperature [degC],ghi [W/m**2]\n{rows}\n")
    _, meta = read_record(write(tmp_path, text))
    assert any("from solar noon" in w for w in meta["warnings"])


def test_daylight_saving_clock_detected(tmp_path):
    # One year of the sample written as local clock time with daylight saving time
    # (America/Chicago: UTC-5 from March to November, IANA tz database), without offsets.
    data, _ = read_record(sample_records()["kestrel_plains"])
    y = data.loc["2020"]
    y = y.set_axis(y.index.tz_convert("America/Chicago").tz_localize(None))
    y = y[~y.index.duplicated()]  # the repeated autumn hour would be refused as a duplicate
    rows = "\n".join(f"{t:%Y-%m-%dT%H:%M},{a:.1f},{g:.0f}" for t, a, g in
                     zip(y.index, y.air_temperature_C, y.ghi_W_m2))
    text = ("# latitude: 41.2\n# longitude: -97.4\n# timezone: America/Chicago\n"
            f"time,air_temperature [degC],ghi [W/m**2]\n{rows}\n")
    _, meta = read_record(write(tmp_path, text))
    w = [x for x in meta["warnings"] if "daylight saving" in x]
    assert len(w) == 1 and "[3, 4, 5, 6, 7, 8, 9, 10]" in w[0]  # DST 8 March - 1 November 2020
    assert any("1 timestamp(s) missing from the file, first 2020-03-08 02:00" in x for x in meta["warnings"])


# --------------------------------------------------------------------------
# Gaps and years
# --------------------------------------------------------------------------


def test_gap_reporting_counts_made_gaps(tmp_path):
    n = 24 * 10
    vals = [f"{15 + 5 * np.sin(i / 24 * 2 * np.pi):.2f}" for i in range(n)]
    for i in range(50, 55):  # a 5-hour gap of empty values
        vals[i] = ""
    vals[100] = ""  # a 1-hour gap (interpolated)
    text = hourly_csv(vals)
    lines = text.splitlines()
    # and a 3-hour gap of missing timestamps (rows 150-152 removed)
    del lines[5 + 150 : 5 + 153]
    data, meta = read_record(write(tmp_path, "\n".join(lines) + "\n"))
    assert len(data) == n  # the missing timestamps come back as rows
    g = meta["gaps"]
    assert g["count"] == 2  # 5 h and 3 h stay missing; the 1 h gap is filled
    assert g["missing"] == 8
    assert g["longest_h"] == 5.0
    assert g["interpolated"] == 1
    assert g["first"][0]["start"] == str(data.index[50]) and g["first"][0]["length_h"] == 5.0
    assert np.isnan(data["air_temperature_C"].iloc[50:55]).all()
    assert np.isnan(data["air_temperature_C"].iloc[150:153]).all()
    a = data["air_temperature_C"]
    assert a.iloc[100] == pytest.approx((a.iloc[99] + a.iloc[101]) / 2, abs=1e-12)
    w = " ".join(meta["warnings"])
    assert "3 timestamp(s) missing" in w and "2 gap(s)" in w and "filled by linear interpolation" in w
    assert MAX_INTERPOLATED_STEPS == 2


def test_missing_year_warned(tmp_path):
    d = pd.date_range("2000-01-01", "2004-12-31", freq="D")
    d = d[d.year != 2002]
    rows = "\n".join(f"{x:%Y-%m-%d},{25 + 10 * np.sin(x.day_of_year / 58.1):.1f},{10:.1f}" for x in d)
    text = f"# latitude: 32\ndate,tmax [degC],tmin [degC]\n{rows}\n"
    data, meta = read_record(write(tmp_path, text))
    assert meta["missing_years"] == [2002]
    assert meta["years"] == [2000, 2001, 2003, 2004]
    assert any("no data at all" in w and "2002" in w for w in meta["warnings"])
    assert meta["gaps"]["longest_days"] == 365.0
    assert data.index.name == "date" and len(data) == len(pd.date_range("2000-01-01", "2004-12-31"))


# --------------------------------------------------------------------------
# GHCN-Daily by_station CSV
# --------------------------------------------------------------------------

GHCN = """XXC00012345,20200701,TMAX,356,,,S,
XXC00012345,20200701,TMIN,201,,,S,
XXC00012345,20200701,PRCP,0,,,S,
XXC00012345,20200702,TMAX,-9999,,,S,
XXC00012345,20200702,TMIN,187,,,S,
XXC00012345,20200703,TMAX,412,,G,S,
XXC00012345,20200703,TMIN,-15,,,S,
XXC00012345,20200703,PSUN,85,,,S,
"""


def test_ghcn_daily_tenths_of_degC(tmp_path):
    # GHCN-Daily readme: TMAX/TMIN in tenths of degC, -9999 missing, Q-FLAG marks failed checks.
    (tmp_path / "ghcnd-stations.txt").write_text(
        "XXC00012345  32.4000 -112.9000  390.0    DRY WASH TEST STATION\n")
    data, meta = read_record(write(tmp_path, GHCN, "XXC00012345.csv"))
    assert meta["source_format"] == "ghcn-daily-csv" and meta["time_step"] == "daily"
    assert meta["station_id"] == "XXC00012345" and meta["station"] == "DRY WASH TEST STATION"
    assert (meta["latitude_deg"], meta["longitude_deg"], meta["elevation_m"]) == (32.4, -112.9, 390.0)
    np.testing.assert_allclose(data["tmax_C"].to_numpy(), [35.6, np.nan, np.nan])
    np.testing.assert_allclose(data["tmin_C"].to_numpy(), [20.1, 18.7, -1.5])
    assert data["sunshine_fraction"].iloc[2] == pytest.approx(0.85)
    assert any("quality flag" in w and "line 6" in w for w in meta["warnings"])
    assert meta["gaps"]["count"] == 1 and meta["gaps"]["missing"] == 2


def test_ghcn_duplicate_and_bad_value(tmp_path):
    dup = GHCN + "XXC00012345,20200701,TMAX,350,,,S,\n"
    msg = _err(tmp_path, dup, "dup.csv")
    assert "line 9" in msg and "second TMAX" in msg
    bad = GHCN.replace("187", "1x7")
    msg = _err(tmp_path, bad, "bad2.csv")
    assert "line 5 column 4" in msg


# --------------------------------------------------------------------------
# Sample climates
# --------------------------------------------------------------------------


def test_sample_records_read_clean_and_span_30_years():
    found = sample_records()
    assert set(found) == {"kestrel_plains", "gullhaven_quay", "quennick_sands"}
    steps = {}
    for key, path in found.items():
        data, meta = read_record(path)
        steps[key] = meta["time_step"]
        assert meta["warnings"] == [], key
        assert meta["years"] == list(range(1995, 2025)), key
        assert meta["gaps"]["count"] == 0
        assert -90 <= meta["latitude_deg"] <= 90 and meta["utc_offset_h"] is not None
        assert "SYNTHETIC" in meta["extra"]["note"]
        # one copy: in a checkout the package reads the repository's climate_samples/
        assert path.resolve() == (ROOT / "climate_samples" / path.name).resolve()
        if meta["time_step"] == "hourly":
            assert set(data.columns) == {"air_temperature_C", "ghi_W_m2", "wind_speed_m_s"}
            assert len(data) == 262992
            assert data["ghi_W_m2"].max() < 1100 and data["wind_speed_m_s"].min() >= 0
        else:
            assert set(data.columns) == {"tmax_C", "tmin_C"}
            assert (data["tmax_C"] > data["tmin_C"]).all()
    assert steps == {"kestrel_plains": "hourly", "gullhaven_quay": "hourly", "quennick_sands": "daily"}


def test_sample_climates_are_distinct():
    # Hot continental: large seasonal range, hot summers; mild maritime: small range;
    # hot arid: very hot daily maxima.
    rec = {k: read_record(p)[0] for k, p in sample_records().items()}
    kp = rec["kestrel_plains"]["air_temperature_C"]
    gq = rec["gullhaven_quay"]["air_temperature_C"]
    ds = rec["quennick_sands"]
    kp_m = kp.groupby(kp.index.month).mean()
    gq_m = gq.groupby(gq.index.month).mean()
    assert kp_m.max() - kp_m.min() > 20 and gq_m.max() - gq_m.min() < 12
    assert gq_m.idxmax() in (1, 2) and kp_m.idxmax() in (7, 8)  # southern vs northern summer
    assert 34 < kp.groupby(kp.index.year).max().median() < 45
    assert 42 < ds["tmax_C"].groupby(ds.index.year).max().median() < 50


def test_generator_reproduces_daily_sample():
    # The seeded generator gives the committed file byte for byte (daily station: quick).
    spec = importlib.util.spec_from_file_location("tp_generate", ROOT / "climate_samples" / "generate.py")
    gen = importlib.util.module_from_spec(spec)
    sys.modules[spec.name] = gen  # dataclasses look their module up
    try:
        spec.loader.exec_module(gen)
    finally:
        del sys.modules[spec.name]
    i = [s.key for s in gen.STATIONS].index("quennick_sands")
    st = gen.STATIONS[i]
    data = gen.render(st, np.random.default_rng(gen.SEED + i))
    assert data == (ROOT / "climate_samples" / gen.file_name(st)).read_bytes()


def test_missing_file(tmp_path):
    with pytest.raises(InputError, match="file not found"):
        read_record(tmp_path / "nope.csv", where="FILE")
