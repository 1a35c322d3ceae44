"""Real weather records as they come: column mapping, time step and zone from the record,
record quality, fixed-width and CF NetCDF readers, and the commands on real open data.

Real records used (shipped by registry packages, read exactly as published):

* vega_datasets 0.9 (PyPI), ``seattle-weather.csv``: daily station record of Seattle, WA,
  2012-2015 (``date, precipitation, temp_max, temp_min, wind, weather``; degC, units not in the
  header); ``seattle-temps.csv`` and ``sf-temps.csv``: hourly temperature of Seattle and San
  Francisco for 2010 in degF, a smoothed climatological series (first column ``date``);
* pvlib (PyPI) data folder: TMY3 files 723170TYA.CSV (Greensboro, NC) and 703165TY.csv
  (Sand Point, AK).
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from trackplan import columns, extremes, notices, quality
from trackplan.errors import InputError
from trackplan.weather import read_record

vega = pytest.importorskip("vega_datasets")
VEGA = Path(vega.__file__).parent / "_data"
SEATTLE_DAILY = VEGA / "seattle-weather.csv"
SEATTLE_HOURLY = VEGA / "seattle-temps.csv"
SF_HOURLY = VEGA / "sf-temps.csv"
SEATTLE_SITE = (47.61, -122.33)
DAILY_MAP = ["tmax=temp_max [degC]", "tmin=temp_min [degC]"]


def _pvlib_data() -> Path:
    import pvlib

    return Path(pvlib.__file__).parent / "data"


def write(tmp_path, text, name="rec.csv"):
    p = tmp_path / name
    p.write_text(text)
    return p


# --------------------------------------------------------------------------
# Column mapping
# --------------------------------------------------------------------------


def test_real_daily_record_read_with_only_a_mapping():
    # Compared with the file itself (pandas reads the raw CSV): the mapped columns, unchanged in degC.
    data, meta = read_record(SEATTLE_DAILY, columns=columns.parse_options(DAILY_MAP), site=SEATTLE_SITE)
    raw = pd.read_csv(SEATTLE_DAILY)
    assert meta["time_step"] == "daily" and meta["time_step_s"] == 86400.0
    np.testing.assert_array_equal(data["tmax_C"].to_numpy(), raw["temp_max"].to_numpy())
    np.testing.assert_array_equal(data["tmin_C"].to_numpy(), raw["temp_min"].to_numpy())
    assert data.index[0] == pd.Timestamp("2012-01-01") and len(data) == len(raw) == 1461
    assert meta["years"] == [2012, 2013, 2014, 2015]
    ignored = [w for w in meta["warnings"] if w.code == "ignored_columns"]
    assert len(ignored) == 1 and all(c in ignored[0] for c in ("'precipitation'", "'wind'", "'weather'"))
    assert meta["tz"] == "UTC-08:00"  # round(-122.33 / 15) = -8


def test_recognised_column_without_unit_proposes_the_option(run_cli):
    # the command line proposes its option
    msg = " ".join(run_cli("railtemp", SEATTLE_DAILY).output.split())
    assert "line 1 column 3 'temp_max'" in msg and '--column "tmax=temp_max [degC]"' in msg
    assert "never guessed" in msg
    # the reader alone names the field, never an option
    with pytest.raises(InputError) as e:
        read_record(SEATTLE_DAILY)
    assert 'write its unit with column "tmax=temp_max [degC]"' in str(e.value) and "--" not in str(e.value)


def test_mapping_errors_name_the_option():
    # the command line gives its option as the place; the module alone names the field
    with pytest.raises(InputError, match=r"^column: no column 'tmax_c'"):
        read_record(SEATTLE_DAILY, columns=columns.parse_options(["tmax=tmax_c [degC]", "tmin=temp_min [degC]"]))
    with pytest.raises(InputError, match=r"--column: no column 'tmax_c' in the file; its columns are"):
        read_record(SEATTLE_DAILY, columns=columns.parse_options(["tmax=tmax_c [degC]", "tmin=temp_min [degC]"], "--column"))
    with pytest.raises(InputError, match=r"--column: unit \[m/s\] of tmax \(column .temp_max.\) is not a temperature unit"):
        read_record(SEATTLE_DAILY, columns=columns.parse_options(["tmax=temp_max [m/s]", "tmin=temp_min [degC]"], "--column"))
    with pytest.raises(InputError, match="two columns mapped to tmax"):
        columns.parse_options(["tmax=temp_max [degC]", "tmax=temp_min [degC]"])
    with pytest.raises(InputError, match="mapped twice"):
        columns.parse_options(["tmax=temp_max [degC]", "tmin=temp_max [degC]"])
    with pytest.raises(InputError, match="unknown quantity 'rain'; accepted: time"):
        columns.parse_options(["rain=precipitation [mm]"])
    with pytest.raises(InputError, match="QUANTITY="):
        columns.parse_options(["tmax"])


def test_section_table_mapping_and_merge():
    base = columns.parse_table({"tmax": "temp_max [degF]", "tmin": "temp_min [degF]"}, "net.toml [sections.A] columns")
    assert base["tmax"].where == "net.toml [sections.A] columns.tmax" and base["tmax"].unit == "degF"
    merged = columns.merge(base, columns.parse_options(["tmax=temp_max [degC]"]))
    assert merged["tmax"].unit == "degC" and merged["tmin"].unit == "degF"


def test_own_csv_unit_from_header_and_mapping_of_time(tmp_path):
    text = "when,hi [degF],lo [degF],note\n2020/07/01,104,77,a\n2020/07/02,106.7,80.6,b\n"
    data, meta = read_record(write(tmp_path, text), columns=columns.parse_options(["time=when", "tmax=hi", "tmin=lo"]))
    np.testing.assert_allclose(data["tmax_C"], [40.0, 41.5], atol=1e-9)
    assert meta["time_step"] == "daily"


# --------------------------------------------------------------------------
# Time step and zone
# --------------------------------------------------------------------------


def test_time_step_from_timestamps_not_the_column_name():
    # seattle-temps.csv: first column called 'date', hourly values
    data, meta = read_record(SEATTLE_HOURLY, columns=columns.parse_options(["air_temperature=temp [degF]"]),
                             site=SEATTLE_SITE)
    assert meta["time_step"] == "hourly" and meta["time_step_s"] == 3600.0
    raw = pd.read_csv(SEATTLE_HOURLY)
    # compared with the file: first value 39.4 degF = 4.111 degC, read at 00:00 local standard time (UTC-8)
    assert data["air_temperature_C"].iloc[0] == pytest.approx((39.4 - 32) * 5 / 9)
    assert data.index[0] == pd.Timestamp("2010-01-01T08:00Z") and meta["tz"] == "UTC-08:00"
    assert len(raw) == 8759 and len(data) == 8760  # the spring-forward hour appears as a filled gap
    assert any(w.code == "time_zone" and "longitude -122.33" in w for w in meta["warnings"])


def test_tz_option_overrides_and_is_used(tmp_path):
    text = "time,air_temperature [degC]\n" + "\n".join(f"2020-07-01T{h:02d}:00,{20 + h / 2}" for h in range(24))
    p = write(tmp_path, text)
    data, meta = read_record(p, tz="America/Los_Angeles", site=(40.0, 10.0))
    assert meta["tz"] == "America/Los_Angeles" and meta["utc_offset_h"] == -8.0  # its standard offset
    data, meta = read_record(p, site=(40.0, 10.0))
    assert meta["tz"] == "UTC+01:00" and data.index[0] == pd.Timestamp("2020-06-30T23:00Z")
    with pytest.raises(InputError, match="unknown time zone"):
        read_record(p, tz="Mars/Olympus")


# --------------------------------------------------------------------------
# Record quality, on real records
# --------------------------------------------------------------------------


@pytest.mark.parametrize("path,mapping,lo,hi,smoothed", [
    # measured values of the statistic (tests the threshold on both sides, see trackplan.quality)
    (SEATTLE_DAILY, DAILY_MAP, 2.8, 3.0, False),
    (SEATTLE_HOURLY, ["air_temperature=temp [degF]"], 0.12, 0.14, True),
    (SF_HOURLY, ["air_temperature=temp [degF]"], 0.08, 0.10, True),
])
def test_smoothed_series_detected_on_real_records(path, mapping, lo, hi, smoothed):
    data, meta = read_record(path, columns=columns.parse_options(mapping), site=SEATTLE_SITE)
    assert lo <= meta["day_to_day_std_K"] <= hi
    assert ("smoothed_series" in [w.code for w in meta["warnings"]]) is smoothed


@pytest.mark.parametrize("fname,lo,hi", [("703165TY.csv", 2.2, 2.35), ("723170TYA.CSV", 4.1, 4.3)])
def test_typical_year_files_are_not_smoothed_but_flagged(fname, lo, hi):
    data, meta = read_record(_pvlib_data() / fname)
    assert lo <= meta["day_to_day_std_K"] <= hi and meta["day_to_day_std_K"] > 3 * quality.SMOOTH_STD_K
    codes = [w.code for w in meta["warnings"]]
    assert "typical_year" in codes and "smoothed_series" not in codes


def test_repeated_years_detected(tmp_path):
    rng = np.random.default_rng(1)
    days = pd.date_range("2001-01-01", "2003-12-31", freq="D")
    tx = 15 + 10 * np.sin(2 * np.pi * days.day_of_year.to_numpy() / 365) + rng.normal(0, 3, len(days))
    tx[days.year == 2003] = tx[days.year == 2001]  # 2003 a copy of 2001 (both common years)
    text = "date,tmax [degC],tmin [degC]\n" + "\n".join(f"{d:%Y-%m-%d},{a:.1f},{a - 8:.1f}" for d, a in zip(days, tx))
    data, meta = read_record(write(tmp_path, text))
    rep = [w for w in meta["warnings"] if w.code == "repeated_years"]
    assert len(rep) == 1 and "2001 and 2003" in rep[0]


# --------------------------------------------------------------------------
# Short records
# --------------------------------------------------------------------------


def test_real_four_year_record_carries_short_record():
    from trackplan import railtemp, rails

    data, meta = read_record(SEATTLE_DAILY, columns=columns.parse_options(DAILY_MAP), site=SEATTLE_SITE)
    site = railtemp.RailSite(*SEATTLE_SITE, 50.0)
    daily = railtemp.daily_rail_extremes(data, meta, rails.get_profile("60E1"), site)
    de = extremes.design_extremes(daily, 50, years=meta["years"])
    assert de.years == 4 and de.design_basis == "observed+allowance"
    codes = notices.codes(de.warnings)
    assert "short_record" in codes and "observed_extreme_used" in codes
    lo, hi = de.max_ci_C
    assert lo <= de.design_max_rail_temperature_C <= hi
    fit = extremes.design_extremes(daily, 50, years=meta["years"], allow_short=True)
    lo, hi = fit.max_ci_C
    assert lo <= fit.design_max_rail_temperature_C <= hi and hi - lo > 5.0  # four years pin down little


# --------------------------------------------------------------------------
# GHCN-Daily .dly and ISD-Lite (test files written in the published layouts)
# --------------------------------------------------------------------------


def _dly_line(sid, year, month, element, values, qflags=None):
    """One .dly line: ID 1-11, YEAR 12-15, MONTH 16-17, ELEMENT 18-21, then per day VALUE (5),
    MFLAG, QFLAG, SFLAG (GHCN-Daily readme.txt, section III)."""
    s = f"{sid:<11}{year:04d}{month:02d}{element:<4}"
    for d in range(31):
        v = values[d] if d < len(values) else -9999
        q = (qflags or {}).get(d + 1, " ")
        s += f"{v:5d} {q}S"
    assert len(s) == 269
    return s


def test_ghcn_dly_fixed_width(tmp_path):
    sid = "XXC00012345"
    lines = []
    for m in (1, 2):
        n = 31 if m == 1 else 28
        lines.append(_dly_line(sid, 1995, m, "TMAX", [100 + d for d in range(n)], {5: "I"} if m == 1 else None))
        lines.append(_dly_line(sid, 1995, m, "TMIN", [-50 - d for d in range(n)]))
        lines.append(_dly_line(sid, 1995, m, "PRCP", [0] * n))
    p = write(tmp_path, "# latitude: 41.2\n# longitude: -97.4\n" + "\n".join(lines) + "\n", "XXC00012345.dly")
    data, meta = read_record(p)
    assert meta["source_format"] == "ghcn-daily-dly" and meta["time_step"] == "daily"
    assert len(data) == 59 and data.index[-1] == pd.Timestamp("1995-02-28")  # 29-31 Feb: -9999, not days
    assert data["tmax_C"].iloc[0] == pytest.approx(10.0) and data["tmin_C"].iloc[33] == pytest.approx(-5.2)
    assert np.isnan(data["tmax_C"].iloc[4])  # QFLAG 'I' on day 5: read as missing
    assert "quality_flag" in [w.code for w in meta["warnings"]]
    assert meta["units_in_file"]["tmax_C"] == "tenths of degC"


def test_ghcn_dly_bad_value_names_the_columns(tmp_path):
    line = _dly_line("XXC00012345", 1995, 1, "TMAX", [100] * 31)
    bad = line[:21] + "  1x0" + line[26:]
    p = write(tmp_path, bad + "\n" + _dly_line("XXC00012345", 1995, 1, "TMIN", [0] * 31) + "\n", "b.dly")
    with pytest.raises(InputError, match=r"line 1 column 22-26 \(VALUE1\)"):
        read_record(p)


def _isd_line(y, m, d, h, t, dew=-9999, slp=-9999, wdir=-9999, wspd=-9999, sky=-9999, p1=-9999, p6=-9999):
    """One ISD-Lite line: year 1-4, month 6-7, day 9-10, hour 12-13, then eight 6-character fields
    (isd-lite-format.pdf)."""
    return f"{y:4d} {m:02d} {d:02d} {h:02d}" + "".join(f"{v:6d}" for v in (t, dew, slp, wdir, wspd, sky, p1, p6))


def test_isd_lite_fixed_width_utc_to_site_zone(tmp_path):
    rows = [_isd_line(2010, 7, 1, h, 150 + 10 * h, wspd=35, sky=4) for h in range(24)]
    rows[3] = _isd_line(2010, 7, 1, 3, -9999)
    assert rows[0][13:19] == "   150" and rows[0][37:43] == "    35"  # positions 14-19 and 38-43
    p = write(tmp_path, "\n".join(rows) + "\n", "725300-94846-2010")
    data, meta = read_record(p, site=(41.98, -87.9))
    assert meta["source_format"] == "isd-lite" and meta["time_step"] == "hourly"
    assert meta["tz"] == "UTC-06:00"  # nominal zone of longitude -87.9
    assert data.index[0] == pd.Timestamp("2010-07-01T00:00Z")
    assert data["air_temperature_C"].iloc[1] == pytest.approx(16.0)
    assert data["air_temperature_C"].iloc[3] == pytest.approx(18.0)  # one missing hour interpolated
    assert data["wind_speed_m_s"].iloc[0] == pytest.approx(3.5) and data["cloud_fraction"].iloc[0] == 0.5


# --------------------------------------------------------------------------
# CF NetCDF point series
# --------------------------------------------------------------------------


def _cf_daily(tmp_path, calendar, units="K", years=2, name="cf.nc"):
    xr = pytest.importorskip("xarray")
    cftime = pytest.importorskip("cftime")
    per_year = {"noleap": 365, "360_day": 360, "standard": None}[calendar]
    if per_year is None:
        n = (pd.Timestamp(f"{2000 + years}-01-01") - pd.Timestamp("2000-01-01")).days
    else:
        n = per_year * years
    t = cftime.num2date(np.arange(n) + 0.5, "days since 2000-01-01", calendar=calendar)
    lat, lon = np.array([40.0, 42.0, 44.0]), np.array([350.0, 352.0, 354.0])
    base = np.arange(n, dtype=float) / 100.0
    grid = base[:, None, None] + lat[None, :, None] * 0 + np.arange(3)[None, None, :] * 10.0
    off = 273.15 if units == "K" else 0.0
    ds = xr.Dataset({"tasmax": (("time", "lat", "lon"), grid + 25.0 + off, {"units": units}),
                     "tasmin": (("time", "lat", "lon"), grid + 12.0 + off, {"units": units})},
                    coords={"time": t, "lat": lat, "lon": lon})
    p = tmp_path / name
    ds.to_netcdf(p, engine="h5netcdf")
    return p


def test_cf_noleap_nearest_cell_and_units(tmp_path):
    p = _cf_daily(tmp_path, "noleap")
    data, meta = read_record(p, site=(41.7, -6.3))  # nearest cell: lat 42, lon 354 = -6 (third column, +20 K)
    assert meta["source_format"] == "cf-netcdf" and meta["time_step"] == "daily"
    assert meta["latitude_deg"] == 42.0 and meta["longitude_deg"] == pytest.approx(-6.0)
    assert data["tmax_C"].iloc[0] == pytest.approx(45.0) and data["tmin_C"].iloc[0] == pytest.approx(32.0)
    # 2000 is a leap year: 29 February is absent from a noleap calendar, left missing and said so
    assert np.isnan(data.loc["2000-02-29", "tmax_C"]) and data.loc["2000-03-01", "tmax_C"] == pytest.approx(45.59)
    assert any(w.code == "calendar" and "1 calendar date" in w for w in meta["warnings"])


def test_cf_360_day_days_never_dropped_silently(tmp_path):
    p = _cf_daily(tmp_path, "360_day", units="degC", years=1)
    data, meta = read_record(p, site=(40.0, -10.0))
    # 360 model days: 30 February and 29 February of the common year 2000? 2000 is leap: only 30 Feb dropped
    msgs = [w for w in meta["warnings"] if w.code == "calendar"]
    assert any("1 model day(s) with no calendar date" in w for w in msgs)
    assert any("calendar date(s) the model year lacks" in w for w in msgs)
    assert data["tmax_C"].notna().sum() == 359 and data["tmax_C"].iloc[0] == pytest.approx(25.0)


def test_cf_without_units_refused(tmp_path):
    xr = pytest.importorskip("xarray")
    ds = xr.Dataset({"tasmax": ("time", np.ones(5)), "tasmin": ("time", np.zeros(5))},
                    coords={"time": pd.date_range("2000-01-01", periods=5)})
    p = tmp_path / "nounits.nc"
    ds.to_netcdf(p, engine="h5netcdf")
    with pytest.raises(InputError, match="no 'units' attribute"):
        read_record(p)


# --------------------------------------------------------------------------
# The commands on real records, with only a mapping
# --------------------------------------------------------------------------


def _network(tmp_path, climate, columns_line, tz_line=""):
    text = f"""[defaults]
rail = "60E1"
sleeper = "concrete"
ballast = "consolidated"
shoulder = "full"
drift_allowance = "5 K"
return_period = 50

[sections.SEA-1]
name = "Test section on a real record"
climate = "{climate}"
latitude = 47.61
longitude = -122.33
track_azimuth = "0 deg"
neutral_temperature = "32 degC"
{columns_line}
{tz_line}
"""
    p = tmp_path / "net.toml"
    p.write_text(text)
    return p


@pytest.mark.parametrize("path,cols,step,code", [
    (SEATTLE_DAILY, 'columns = { tmax = "temp_max [degC]", tmin = "temp_min [degC]" }', "daily", "short_record"),
    (SEATTLE_HOURLY, 'columns = { air_temperature = "temp [degF]" }', "hourly", "smoothed_series"),
])
def test_commands_on_real_records_with_only_a_mapping(run_cli, tmp_path, path, cols, step, code):
    net = _network(tmp_path, path, cols)
    for cmd in ("target", "check", "screen"):
        res = run_cli(cmd, net, "--json")
        assert res.exit_code in (0, 1), res.output
        d = json.loads(res.stdout)
        s = d["sections"][0]
        assert s["inputs"] == {"tz": "UTC-08:00", "time_step": step}
        assert code in [w["code"] for w in s["warnings"]]
        assert all(set(w) == {"code", "message", "where"} for w in s["warnings"])
    args = ["--lat", "47.61", "--lon", "-122.33", "--json"]
    args += sum((["--column", c] for c in (DAILY_MAP if step == "daily" else ["air_temperature=temp [degF]"])), [])
    res = run_cli("railtemp", path, *args)
    assert res.exit_code == 0, res.output
    d = json.loads(res.stdout)
    assert d["inputs"]["tz"] == "UTC-08:00" and d["inputs"]["time_step"] == step
    assert code in [w["code"] for w in d["warnings"]]
    if d["design_max_rail_temperature_ci_C"]:
        lo, hi = d["design_max_rail_temperature_ci_C"]
        assert lo <= d["design_max_rail_temperature_C"] <= hi


def test_command_line_mapping_and_tz_override_the_section(run_cli, tmp_path):
    net = _network(tmp_path, SEATTLE_HOURLY, 'columns = { air_temperature = "temp [degC]" }', 'tz = "UTC"')
    res = run_cli("check", net, "--json", "--column", "air_temperature=temp [degF]", "--tz", "UTC-08:00")
    assert res.exit_code in (0, 1), res.output
    s = json.loads(res.stdout)["sections"][0]
    assert s["inputs"]["tz"] == "UTC-08:00"
    res = run_cli("check", net, "--column", "air_temperature=nothing [degF]")
    assert res.exit_code == 2 and "--column: no column 'nothing'" in res.output and "Traceback" not in res.output


def test_short_years_constant_agrees_with_extremes():
    assert quality.SHORT_YEARS == extremes.SHORT_RECORD_YEARS


def test_cf_sub_daily_tas_and_daily_mean_refused(tmp_path):
    xr = pytest.importorskip("xarray")
    cftime = pytest.importorskip("cftime")
    t = cftime.num2date(np.arange(8 * 10) * 3.0, "hours since 2001-07-01 00:00", calendar="proleptic_gregorian")
    tas = 293.15 + 5 * np.sin(2 * np.pi * (np.arange(80) * 3.0 - 9) / 24)
    ds = xr.Dataset({"tas": (("time",), tas, {"units": "K"})}, coords={"time": t, "lat": 45.0, "lon": 10.0})
    p = tmp_path / "tas3h.nc"
    ds.to_netcdf(p, engine="h5netcdf")
    data, meta = read_record(p)
    assert meta["time_step"] == "hourly" and meta["time_step_s"] == 3 * 3600.0
    assert meta["tz"] == "UTC+01:00"  # nominal zone of the cell's longitude 10: round(10 / 15) = 1 h
    assert data.index[0] == pd.Timestamp("2001-07-01T00:00Z")
    assert data["air_temperature_C"].iloc[0] == pytest.approx(tas[0] - 273.15)
    daily = xr.Dataset({"tas": (("time",), tas[:10], {"units": "K"})},
                       coords={"time": cftime.num2date(np.arange(10), "days since 2001-07-01", calendar="noleap")})
    q = tmp_path / "tasday.nc"
    daily.to_netcdf(q, engine="h5netcdf")
    with pytest.raises(InputError, match="daily means"):
        read_record(q)


def test_common_names_with_a_unit_in_the_header_are_read(tmp_path):
    text = "DATE,TMAX [degF],temp_min [degF],PRCP\n2020-07-01,104,77,0\n2020-07-02,106.7,80.6,3\n"
    data, meta = read_record(write(tmp_path, text))
    np.testing.assert_allclose(data["tmax_C"], [40.0, 41.5], atol=1e-9)
    np.testing.assert_allclose(data["tmin_C"], [25.0, 27.0], atol=1e-9)
    assert any(w.code == "ignored_columns" and "'PRCP'" in w for w in meta["warnings"])
