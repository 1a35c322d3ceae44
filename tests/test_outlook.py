"""``trackplan outlook``: projection reader, bias adjustment, figures, ensemble statistics, Dask engine.

Small ensembles are written inside the tests (a few grid cells, 1991-2050) on the
synthetic Quennick Sands station (climate_samples/quennick_sands_daily.csv.gz).
One Dask cluster in this process serves the session (tests/conftest.py); one test connects to it
over TCP on 127.0.0.1 as to an existing cluster and checks the figures equal the
local run.
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest

from trackplan.thermal import ColdSide

xr = pytest.importorskip("xarray")
pytest.importorskip("xsdba")
pytest.importorskip("dask.distributed")

ROOT = Path(__file__).resolve().parent.parent
STATION = ROOT / "climate_samples" / "quennick_sands_daily.csv.gz"
ST_LAT, ST_LON = 32.40, -112.90


def write_run(path, model, experiment, years, calendar="noleap", units="K", lat=(31.5, 33.5), lon=(-114.0, -112.0),
              warming_K=0.0, bias_K=2.0, drop=None, two_d=False, seed=0):
    """A tiny CF file of daily tasmax/tasmin on a small grid near the station."""
    import cftime

    rng = np.random.default_rng(seed)
    y0, y1 = years
    times = cftime.num2date(np.arange(0, 400 * (y1 - y0 + 1)), f"days since {y0}-01-01", calendar)
    times = np.array([t for t in times if t.year <= y1])
    n = times.size
    doy = np.array([t.dayofyr for t in times])
    L = {"360_day": 360}.get(calendar, 365.25)
    frac = np.array([t.year for t in times]) + doy / L
    season = 22.5 + bias_K + 10.0 * np.cos(2 * np.pi * (doy - 195 * L / 365.25) / L)
    mean = season + warming_K * np.clip((frac - 2021) / 30.0, 0, None) + 2.0 * rng.standard_normal(n)
    la, lo = np.asarray(lat, float), np.asarray(lon, float)
    shape = (n, la.size, lo.size)
    tx = (mean + 8.0)[:, None, None] + 0.1 * rng.standard_normal(shape)
    tn = (mean - 8.0)[:, None, None] + 0.1 * rng.standard_normal(shape)
    off = 273.15 if units == "K" else 0.0
    if two_d:
        LA, LO = np.meshgrid(la, lo, indexing="ij")
        coords = {"lat": (("y", "x"), LA, {"standard_name": "latitude"}),
                  "lon": (("y", "x"), LO, {"standard_name": "longitude"})}
        dims = ("time", "y", "x")
    else:
        coords = {"lat": ("lat", la, {"standard_name": "latitude"}), "lon": ("lon", lo, {"standard_name": "longitude"})}
        dims = ("time", "lat", "lon")
    coords["time"] = ("time", np.arange(n, dtype=float),
                      {"units": f"days since {y0}-01-01", "calendar": calendar, "standard_name": "time"})
    data = {"tasmax": (dims, (tx + off).astype(np.float32), {"units": units}),
            "tasmin": (dims, (tn + off).astype(np.float32), {"units": units})}
    if drop:
        del data[drop]
    ds = xr.Dataset(data, coords=coords, attrs={"source_id": model, "experiment_id": experiment})
    ds.to_netcdf(path, engine="h5netcdf")
    return path


@pytest.fixture(scope="module")
def ensemble(tmp_path_factory):
    """Two models x one scenario (one noleap, one 360_day on a 2-D grid), plus bad files in a second folder."""
    d = tmp_path_factory.mktemp("ens")
    write_run(d / "a_hist.nc", "MA", "historical", (1991, 2014), seed=1)
    write_run(d / "a_fut.nc", "MA", "ssp585", (2015, 2050), warming_K=3.0, seed=2)
    write_run(d / "b_hist.nc", "MB", "historical", (1991, 2014), calendar="360_day", units="degC", two_d=True,
              bias_K=-1.0, seed=3)
    write_run(d / "b_fut.nc", "MB", "ssp585", (2015, 2050), calendar="360_day", units="degC", two_d=True,
              bias_K=-1.0, warming_K=2.0, seed=4)
    bad = tmp_path_factory.mktemp("bad")
    for f in d.iterdir():
        (bad / f.name).write_bytes(f.read_bytes())
    write_run(bad / "c_fut.nc", "MC", "ssp585", (2015, 2050), drop="tasmin", seed=5)  # no tasmin
    write_run(bad / "d_fut.nc", "MD", "ssp585", (2015, 2050), units="W m-2", seed=6)  # not a temperature
    write_run(bad / "e_hist.nc", "ME", "historical", (1991, 2014), calendar="noleap", seed=7)
    write_run(bad / "e_fut.nc", "ME", "ssp585", (2015, 2050), calendar="360_day", seed=8)  # mixed calendars
    return d, bad


@pytest.fixture(scope="module")
def sections(tmp_path_factory):
    from trackplan.sections import load_sections

    d = tmp_path_factory.mktemp("sec")
    toml = d / "net.toml"
    toml.write_text(f"""
[defaults]
rail = "60E1"
sleeper = "concrete"
ballast = "consolidated"
shoulder = "full"
misalignment = "20 mm"
misalignment_length = "10 m"
drift_allowance = "5 K"
gap_limit = "50 mm"
tension_stress_limit = "160 MPa"
climate = "{STATION.as_posix()}"

[sections.HOT]
track_azimuth = "100 deg"
neutral_temperature = "22 degC"
radius = "500 m"

[sections.FAR]
latitude = 10.0
longitude = 20.0
track_azimuth = "0 deg"
neutral_temperature = "30 degC"
""")
    return load_sections(toml).sections


@pytest.fixture(scope="module")
def local_result(dask_cluster, ensemble, sections):
    from trackplan import outlook, outlook_run

    opts = outlook_run.OutlookOptions(periods=(outlook.Window(2021, 2050),))
    return outlook_run.run_outlook([s for s in sections if s.id == "HOT"], ensemble[0], opts, dask_cluster[1])


# -- reader --------------------------------------------------------------------


def test_haversine_one_degree_of_latitude():
    from trackplan import projections

    # a meridian degree on a sphere of radius R is pi R / 180 (analytic)
    assert projections.haversine_m(10.0, 5.0, 11.0, 5.0) == pytest.approx(math.pi * 6_371_008.8 / 180.0, rel=1e-9)
    # across the antimeridian
    assert projections.haversine_m(0.0, 179.5, 0.0, -179.5) == pytest.approx(math.pi * 6_371_008.8 / 180.0, rel=1e-9)


@pytest.mark.parametrize("units,value,expected", [("K", 300.0, 26.85), ("degC", 20.0, 20.0),
                                                  ("degF", 212.0, 100.0), ("Celsius", -5.0, -5.0)])
def test_units_from_attribute(units, value, expected):
    from trackplan import projections

    f, o = projections.to_celsius(xr.DataArray([value], attrs={"units": units}), "tasmax", "x")
    assert value * f + o == pytest.approx(expected)


def test_describe_files_grids_and_calendars(ensemble):
    from trackplan import projections

    ens = projections.scan_ensemble(ensemble[0])
    assert not ens.problems
    assert sorted((r.model, r.scenario, r.calendar) for r in ens.runs) == [("MA", "ssp585", "noleap"),
                                                                           ("MB", "ssp585", "360_day")]
    mb = [r for r in ens.runs if r.model == "MB"][0]
    assert mb.grid.dims == ("y", "x") and mb.first_year == 1991 and mb.last_year == 2050
    cell = projections.nearest_cell(mb.grid, ST_LAT, ST_LON)
    assert (cell.latitude_deg, cell.longitude_deg) == (31.5, -112.0)
    assert projections.covers(cell)
    series = projections.read_cell(mb, cell)
    # every day of a 360-day calendar is there, none invented: 60 years x 360
    assert series.tasmax_C.size == 60 * 360 and np.isfinite(series.tasmax_C).all()
    assert series.day_of_year.max() == 360


def test_bad_files_reported_with_file_and_variable(ensemble):
    from trackplan import projections

    ens = projections.scan_ensemble(ensemble[1])
    text = "\n".join(str(p) for p in ens.problems)
    assert "c_fut.nc" in text and "no tasmin variable" in text
    assert "d_fut.nc" in text and "variable tasmax" in text and "units 'W m-2'; accepted: K, degC" in text
    assert "model ME mixes calendars" in text
    assert sorted(r.model for r in ens.runs) == ["MA", "MB"]  # the good models are kept


def test_station_days_on_model_calendars():
    from trackplan import outlook

    dates = np.arange(np.datetime64("2000-01-01"), np.datetime64("2002-01-01"))  # 2000 is a leap year
    for cal, per_year in (("noleap", 365), ("360_day", 360)):
        y = np.repeat([2000, 2001], per_year)
        d = np.tile(np.arange(1, per_year + 1), 2)
        pos = outlook.obs_on_model_calendar(dates, cal, y, d)
        kept = pos[pos >= 0]
        assert kept.size == 2 * per_year and np.all(np.diff(kept) == 1)  # each model day once, in order
    # noleap: 29 February 2000 has no place, 1 March 2000 is day 60
    pos = outlook.obs_on_model_calendar(dates, "noleap", np.repeat([2000, 2001], 365), np.tile(np.arange(1, 366), 2))
    assert pos[59] == -1 and pos[60] == 59


# -- bias adjustment, figures, statistics -----------------------------------------


def test_qdm_removes_bias_and_keeps_the_model_change():
    """Quantile delta mapping (Cannon et al. 2015, eq. 2-6, additive): the adjusted baseline has the
    station's distribution; the adjusted future's quantiles are the station's plus the model's change."""
    from trackplan import outlook, projections

    rng = np.random.default_rng(42)
    dates = np.arange(np.datetime64("1991-01-01"), np.datetime64("2021-01-01"))
    doy = (dates - dates.astype("datetime64[Y]")).astype(int) + 1
    obs_tx = 25 + 10 * np.cos(2 * np.pi * (doy - 195) / 365.25) + 3 * rng.standard_normal(dates.size)
    obs = outlook.StationDaily("obs", "obs", ST_LAT, ST_LON, 0.0, dates, obs_tx, obs_tx - 15)
    years = np.repeat(np.arange(1991, 2051), 365)
    j = np.tile(np.arange(1, 366), 60)
    model = 23 + 12 * np.cos(2 * np.pi * (j - 195) / 365) + 2 * rng.standard_normal(years.size)
    model = model + np.where(years > 2020, 3.0, 0.0)  # a step change of +3 K after 2020
    series = projections.CellSeries(model, model - 15, years, j, np.full(years.size, 365), "noleap", [])
    base, fut = outlook.Window(1991, 2020), outlook.Window(2021, 2050)
    adj = outlook.adjust_cell(obs, series, base, [base, fut])
    b, f = adj.windows[base.label], adj.windows[fut.label]
    assert np.mean(b.tmax_C) == pytest.approx(np.mean(obs_tx), abs=0.15)
    assert np.std(b.tmax_C) == pytest.approx(np.std(obs_tx), rel=0.03)
    assert np.mean(f.tmax_C) - np.mean(b.tmax_C) == pytest.approx(3.0, abs=0.15)


def test_window_figures_match_the_screening_rules():
    """Counts from the screening core's rules on made-up rail temperatures: 3 restrict days and 1 critical
    day a year (rise = T - (neutral - drift) against allowable 40 K and critical 50 K)."""
    from trackplan import outlook

    spec = outlook.SectionSpec(id="S", name="s", record="r", latitude_deg=0, longitude_deg=0, profile=None, site=None,
                               heat_neutral_C=20.0, cold_neutral_C=25.0, allowable_rise_K=40.0, critical_rise_K=50.0,
                               cold=ColdSide(E_Pa=2.1e11, area_m2=7.67e-3, alpha_per_K=1.15e-5, resistance_N_per_m=1e4,
                                             gap_limit_m=0.05, tension_stress_limit_Pa=1.6e8),
                               return_period_years=50, watch_fraction=0.8)
    years = np.repeat(np.arange(2001, 2031), 360)
    rmax = np.full(years.size, 30.0)
    rmin = np.full(years.size, 10.0)
    day = np.tile(np.arange(360), 30)
    rmax[day < 3] = 61.0  # rise 41 K: restrict
    rmax[day == 3] = 71.0  # rise 51 K: critical
    rmin[day == 100] = -50.0  # tension E alpha 75 K = 181 MPa > 160 MPa: cold
    fig = outlook.window_figures(rmax, rmin, years, np.full(years.size, 360), spec)
    scale = 365.25 / 360.0
    assert fig["years"] == 30
    assert fig["restrict_days_per_year"] == pytest.approx(3 * scale)
    assert fig["critical_days_per_year"] == pytest.approx(1 * scale)
    assert fig["cold_days_per_year"] == pytest.approx(1 * scale)
    assert fig["design_max_rail_temperature_C"] >= 71.0  # never milder than the window's hottest day


def test_ensemble_percentiles_and_change():
    from trackplan import outlook

    base, fut = outlook.Window(1991, 2020), outlook.Window(2021, 2050)
    per = {f"M{k}": {base.label: {"years": 30, **{s: 1.0 for s in outlook.STATS}},
                     fut.label: {"years": 30, **{s: float(k) for s in outlook.STATS}}} for k in range(1, 6)}
    rows = outlook.ensemble_stats(per, base, [base, fut])
    r = rows[1]
    assert r["models"] == 5
    # numpy's linear percentiles of 1..5: p10 = 1.4, median 3, p90 = 4.6
    assert r["restrict_days_per_year"] == {"median": 3.0, "p10": pytest.approx(1.4), "p90": pytest.approx(4.6)}
    assert r["change_from_baseline"]["design_max_rail_temperature_K"]["median"] == 2.0


# -- the whole run on Dask --------------------------------------------------------


def test_run_outlook_local(local_result):
    res = local_result
    assert not res.problems
    assert res.timings["adjust_tasks"] == 2  # one per (station, cell, model, scenario)
    (s,) = res.sections
    assert {c["model"] for c in s.cells} == {"MA", "MB"} and all(c["distance_km"] < 150 for c in s.cells)
    rows = {r["period"]: r for r in s.periods}
    assert rows["1991-2020"]["baseline"] and rows["2021-2050"]["models"] == 2
    # the models warm by 2-3 K after 2021: the design maximum rises
    assert rows["2021-2050"]["change_from_baseline"]["design_max_rail_temperature_K"]["median"] > 0.5


def test_existing_scheduler_over_loopback_gives_the_same_figures(dask_cluster, ensemble, sections, local_result):
    """A second client connects to the running scheduler at tcp://127.0.0.1:PORT, as --scheduler does."""
    from trackplan import engine, outlook, outlook_run

    address = dask_cluster[0].scheduler_address
    assert address.startswith("tcp://127.0.0.1:")
    opts = outlook_run.OutlookOptions(periods=(outlook.Window(2021, 2050),))
    with engine.dask_engine(address) as eng:
        assert eng.json() == {"kind": "dask", "scheduler": address, "workers": 2}
        res = outlook_run.run_outlook([s for s in sections if s.id == "HOT"], ensemble[0], opts, eng)
    assert res.sections[0].periods == local_result.sections[0].periods
    # and both equal the same computation done here without Dask, function by function
    from trackplan import projections
    from trackplan.assess import Assessor

    hot = [s for s in sections if s.id == "HOT"][0]
    obs = outlook.station_daily(str(hot.climate_path))
    spec = outlook_run.section_spec(hot, Assessor(), {"latitude_deg": obs.latitude_deg,
                                                      "longitude_deg": obs.longitude_deg}, opts)
    per = {}
    for run in projections.scan_ensemble(ensemble[0]).runs:
        cell = projections.nearest_cell(run.grid, spec.latitude_deg, spec.longitude_deg)
        wins = outlook.chart_windows(run.first_year, run.last_year, opts.baseline)
        adj = outlook.adjust_cell(obs, projections.read_cell(run, cell), opts.baseline, wins)
        per[run.model] = outlook.screen_runs({0: adj}, [(spec, [0])])[(hot.id, 0)]
    direct = outlook.ensemble_stats(per, opts.baseline, [opts.baseline, *opts.periods])
    assert [dict(r, scenario="ssp585") for r in direct] == res.sections[0].periods


def test_bad_inputs_reported_and_the_rest_computed(dask_cluster, ensemble, sections):
    from trackplan import outlook, outlook_run

    opts = outlook_run.OutlookOptions(baseline=outlook.Window(1971, 1990), periods=(outlook.Window(2021, 2050),))
    res = outlook_run.run_outlook(sections, ensemble[1], opts, dask_cluster[1])
    text = "\n".join(str(p) for p in res.problems)
    assert "does not cover the section" in text and "km away" in text  # FAR is in Africa
    assert "no overlap for the baseline 1971-1990" in text and "quennick_sands_daily" in text
    assert "no tasmin variable" in text and "mixes calendars" in text
    assert not res.sections  # the baseline has no station years: nothing to report, all said


def test_cli_bad_options_exit_2(run_cli, tmp_path):
    net = ROOT / "examples" / "network.toml"
    r = run_cli("outlook", net, "--projections", tmp_path / "nowhere")
    assert r.exit_code == 2 and "not a folder" in r.output
    r = run_cli("outlook", net, "--projections", ROOT / "examples" / "projections", "--baseline", "2020-1991")
    assert r.exit_code == 2 and "--baseline" in r.output
    r = run_cli("outlook", net, "--projections", ROOT / "examples" / "projections", "--scheduler", "localhost")
    assert r.exit_code == 2 and "tcp://HOST:PORT" in r.output


def test_tabulated_rail_path_equals_the_direct_daily_extremes_path():
    """The table (every 2 K of air maximum, per day of the year) against trackplan.railtemp directly."""
    import pandas as pd

    from trackplan import outlook, rails
    from trackplan.railtemp import RailSite, daily_extremes_path

    site = RailSite(latitude_deg=ST_LAT, longitude_deg=ST_LON, elevation_m=390.0, track_azimuth_deg=100.0,
                    shade_factor=0.0)
    spec = outlook.SectionSpec(id="S", name="s", record="r", latitude_deg=ST_LAT, longitude_deg=ST_LON,
                               profile=rails.get_profile("60E1"), site=site, heat_neutral_C=20, cold_neutral_C=25,
                               allowable_rise_K=40, critical_rise_K=50,
                               cold=ColdSide(E_Pa=2.1e11, area_m2=7.67e-3, alpha_per_K=1.15e-5, resistance_N_per_m=1e4,
                                             gap_limit_m=0.05, tension_stress_limit_Pa=1.6e8),
                               return_period_years=50, watch_fraction=0.8)
    rng = np.random.default_rng(3)
    doy = np.tile(np.arange(1, 366), 3)
    tmax = rng.uniform(-25.0, 48.0, doy.size)
    rmax, rmin = outlook.rail_path(tmax, tmax - 12, doy, np.full(doy.size, 365), spec)
    idx = pd.Timestamp("2001-01-01") + pd.to_timedelta(doy - 1, unit="D")
    direct, _ = daily_extremes_path(pd.DataFrame({"tmax_C": tmax, "tmin_C": tmax - 12}, index=idx), {},
                                    spec.profile, site)
    assert np.abs(rmax - direct["rail_max_C"].to_numpy()).max() < 0.01
    assert np.array_equal(rmin, tmax - 12)
    # a 360-day model year: its day 180 takes the sun of reference day round(179.5 * 365 / 360 + 0.5) = round(182.49) = 182
    assert outlook.reference_days([180], [360])[0] == 182


def test_cli_on_an_existing_scheduler_json_and_files(run_cli, dask_cluster, ensemble, sections, tmp_path, vocabulary):
    import json

    toml = tmp_path / "one.toml"
    toml.write_text(f"""
[sections.HOT]
climate = "{STATION.as_posix()}"
rail = "60E1"
track_azimuth = "100 deg"
neutral_temperature = "22 degC"
radius = "500 m"
drift_allowance = "5 K"
""")
    address = dask_cluster[0].scheduler_address
    r = run_cli("outlook", toml, "--projections", ensemble[0], "--periods", "2021-2050", "--scheduler", address,
                "--json", "--out", tmp_path / "out")
    assert r.exit_code == 0, r.output
    d = json.loads(r.stdout)
    assert d["engine"] == {"kind": "dask", "scheduler": address, "workers": 2}
    (s,) = d["sections"]
    assert [p["period"] for p in s["periods"]] == ["1991-2020", "2021-2050"]
    assert set(s["periods"][1]["design_max_rail_temperature_C"]) == {"median", "p10", "p90"}
    assert d["caution"] and "cannot correct" in d["bias_adjustment_note"]
    names = sorted(p.name for p in (tmp_path / "out").iterdir())
    assert [n for n in names if n.startswith("outlook")] == ["outlook.csv", "outlook_HOT.png", "outlook_summary.html"]
    assert (tmp_path / "out" / "outlook_HOT.png").read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    # one vocabulary: every key a glossary name; outlook.csv is the periods of the JSON flattened
    from trackplan import outlook_report, tables

    vocabulary.assert_glossary_keys(d)
    vocabulary.assert_csv_is_flat_json(tmp_path / "out" / "outlook.csv", [
        {"id": s["id"], "name": s["name"], "station": s["station"], **p} for p in s["periods"]], outlook_report.CSV_NAMES)


def test_baseline_of_the_demo_ensemble_agrees_with_screen_on_the_station_record(dask_cluster):
    """End to end on the example network's daily record (Quennick Sands, DS-302): over the baseline the
    bias-adjusted models must give about the restrict days that `screen` counts on the station record
    itself (same rail path, same thresholds); 1995-2020, the years both cover."""
    import datetime as dt

    from trackplan import outlook, outlook_run
    from trackplan.assess import Assessor
    from trackplan.screening import ScreenOptions, Screener
    from trackplan.sections import load_sections

    secs = [s for s in load_sections(ROOT / "examples" / "network.toml").sections if s.id == "DS-302"]
    scr = Screener(Assessor(), ScreenOptions(start=dt.date(1995, 1, 1), end=dt.date(2020, 12, 31))).screen_all(secs)
    observed = scr.sections[0].days_per_year("restrict")
    opts = outlook_run.OutlookOptions(baseline=outlook.Window(1995, 2020), periods=(outlook.Window(2071, 2100),),
                                      scenarios=("ssp245",))
    res = outlook_run.run_outlook(secs, ROOT / "examples" / "projections", opts, dask_cluster[1])
    assert not res.problems
    base = res.sections[0].periods[0]
    assert base["baseline"] and base["models"] == 2
    assert observed > 100  # a hot section: a sharp comparison
    assert base["restrict_days_per_year"]["median"] == pytest.approx(observed, rel=0.03)


def test_one_variable_per_file_and_time_chunks(tmp_path):
    """The archives' layout: tasmax and tasmin in files of their own, the scenario split in time."""
    from trackplan import projections

    one, split = tmp_path / "one", tmp_path / "split"
    one.mkdir()
    split.mkdir()
    write_run(one / "h.nc", "MS", "historical", (1991, 2014), seed=1)
    write_run(one / "f1.nc", "MS", "ssp245", (2015, 2030), seed=2)
    write_run(one / "f2.nc", "MS", "ssp245", (2031, 2050), seed=3)
    for v, other in (("tasmax", "tasmin"), ("tasmin", "tasmax")):
        write_run(split / f"{v}_h.nc", "MS", "historical", (1991, 2014), seed=1, drop=other)
        write_run(split / f"{v}_f1.nc", "MS", "ssp245", (2015, 2030), seed=2, drop=other)
        write_run(split / f"{v}_f2.nc", "MS", "ssp245", (2031, 2050), seed=3, drop=other)
    runs = []
    for d in (one, split):
        ens = projections.scan_ensemble(d)
        assert not ens.problems
        (run,) = ens.runs
        runs.append(run)
    cell = projections.nearest_cell(runs[0].grid, ST_LAT, ST_LON)
    a, b = (projections.read_cell(r, cell) for r in runs)
    assert a.tasmax_C.size == 60 * 365 and np.isfinite(a.tasmax_C).all() and np.isfinite(a.tasmin_C).all()
    assert np.array_equal(a.tasmax_C, b.tasmax_C) and np.array_equal(a.tasmin_C, b.tasmin_C)
