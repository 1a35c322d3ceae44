"""Command-line tests of ``trackplan railtemp``."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from typer.testing import CliRunner

from trackplan import CAUTION
from trackplan.cli import app

ROOT = Path(__file__).resolve().parent.parent
SAMPLES = ROOT / "climate_samples"
GREENSBORO = Path(__import__("pvlib").__file__).parent / "data" / "723170TYA.CSV"
JSON_KEYS = {"station", "years", "design_basis", "return_period_years", "design_max_rail_temperature_C",
             "design_min_rail_temperature_C", "max_air_temperature_C", "min_air_temperature_C", "annual",
             "warnings", "caution", "design_max_rail_temperature_ci_C", "design_min_rail_temperature_ci_C",
             "ci_level", "inputs", "design_max_basis", "design_min_basis", "max_return_level_C",
             "min_return_level_C"}
ANNUAL_KEYS = {"year", "max_rail_temperature_C", "min_rail_temperature_C", "max_air_temperature_C",
               "min_air_temperature_C"}

runner = CliRunner()


def _run(*args):
    return runner.invoke(app, ["railtemp", *map(str, args)])


def _write_hourly(path: Path, years: int = 4, start: int = 2001) -> Path:
    """A small synthetic hourly record in trackplan's CSV format (fictional station)."""
    idx = pd.date_range(f"{start}-01-01", f"{start + years - 1}-12-31 23:00", freq="h")
    doy = idx.day_of_year.to_numpy()
    hr = idx.hour.to_numpy()
    rng = np.random.default_rng(1)
    air = 12 + 12 * np.sin(2 * np.pi * (doy - 110) / 365) + 5 * np.sin(2 * np.pi * (hr - 9) / 24) \
        + rng.normal(0, 1.5, len(idx))
    ghi = np.clip(np.sin(np.pi * (hr - 6) / 12), 0, None) * (600 + 300 * np.sin(2 * np.pi * (doy - 80) / 365))
    wind = rng.gamma(2.0, 1.5, len(idx))
    lines = ["# station: Test Halt (fictional)", "# latitude: 45.0", "# longitude: 5.0", "# elevation: 200 m",
             "# timezone: UTC+01:00", "time,air_temperature [degC],ghi [W/m**2],wind_speed [m/s]"]
    body = [f"{t:%Y-%m-%dT%H:%M},{a:.1f},{g:.0f},{w:.1f}" for t, a, g, w in zip(idx, air, ghi, wind)]
    path.write_text("\n".join(lines + body) + "\n", encoding="utf-8")
    return path


@pytest.fixture(scope="module")
def small_hourly(tmp_path_factory):
    return _write_hourly(tmp_path_factory.mktemp("rec") / "test_halt.csv")


def test_help_has_example():
    r = runner.invoke(app, ["railtemp", "--help"])
    assert r.exit_code == 0
    assert "Example: trackplan railtemp" in r.output


def test_json_hourly_30_years():
    r = _run(SAMPLES / "kestrel_plains_hourly.csv.gz", "--azimuth", "90", "--json")
    assert r.exit_code == 0, r.output
    js = json.loads(r.stdout)
    assert set(js) == JSON_KEYS
    assert js["station"] == "Kestrel Plains"
    assert js["years"] == 30 and len(js["annual"]) == 30
    assert set(js["annual"][0]) == ANNUAL_KEYS
    assert js["design_basis"] == "gumbel" and js["return_period_years"] == 50.0
    maxima = [a["max_rail_temperature_C"] for a in js["annual"]]
    # a 50-year level lies above most annual maxima and not far beyond the record's highest
    assert np.median(maxima) < js["design_max_rail_temperature_C"] < max(maxima) + 10
    assert js["design_min_rail_temperature_C"] < min(a["min_rail_temperature_C"] for a in js["annual"]) + 2
    assert js["max_air_temperature_C"] == max(a["max_air_temperature_C"] for a in js["annual"])
    assert js["caution"] == CAUTION


def test_json_daily_record_gev(tmp_path, vocabulary):
    r = _run(SAMPLES / "quennick_sands_daily.csv.gz", "--distribution", "gev", "--return-period", "25", "--json",
             "--out", tmp_path / "o")
    assert r.exit_code == 0, r.output
    js = json.loads(r.stdout)
    # one vocabulary: every key a glossary name; annual_extremes.csv is the JSON's annual extremes
    vocabulary.assert_glossary_keys(js)
    vocabulary.assert_csv_is_flat_json(tmp_path / "o" / "annual_extremes.csv", js["annual"])
    assert js["design_basis"] == "gev" and js["return_period_years"] == 25.0
    # daily-extremes path: rail minimum = air minimum (docs/methods/rail-temperature.md)
    assert all(a["min_rail_temperature_C"] == a["min_air_temperature_C"] for a in js["annual"])
    assert any("clear sky" in w for w in (x["message"] for x in js["warnings"]))


def test_rule_of_thumb_method_on_daily_record():
    r = _run(SAMPLES / "quennick_sands_daily.csv.gz", "--method", "air-plus-30F", "--json")
    assert r.exit_code == 0, r.output
    js = json.loads(r.stdout)
    for a in js["annual"]:
        assert a["max_rail_temperature_C"] == pytest.approx(a["max_air_temperature_C"] + 50 / 3, abs=1e-9)


def test_typical_year_tmy3_is_observed():
    r = _run(GREENSBORO, "--json")
    assert r.exit_code == 0, r.output
    js = json.loads(r.stdout)
    assert js["design_basis"] == "observed" and js["years"] == 1
    assert any("observed extremes" in w for w in (x["message"] for x in js["warnings"]))
    codes = {x["code"] for x in js["warnings"]}
    assert {"typical_year", "observed_extreme_used"} <= codes
    assert all(set(x) == {"code", "message", "where"} for x in js["warnings"])
    assert js["inputs"]["tz"] == "UTC-05:00" and js["inputs"]["time_step"] == "hourly"


def test_terminal_output_units_and_out_files(small_hourly, tmp_path):
    out = tmp_path / "out"
    r = _run(small_hourly, "--azimuth", "45 deg", "--shade", "0.2", "--units", "us", "--out", out)
    assert r.exit_code == 0, r.output
    assert "Annual extremes" in r.output and "°F" in r.output
    assert "only 4 complete years" in r.output  # short-record warning listed
    assert "Caution:" in r.output
    # each design value says what it is, with the return level and its interval beside it
    rows = [ln for ln in r.output.splitlines() if ln.startswith(("│ maximum", "│ minimum"))]
    assert len(rows) == 2 and all(("return level" in ln or "recorded" in ln) and " to " in ln for ln in rows)
    assert max(len(ln) for ln in r.output.splitlines()) <= 100 and "degC" not in r.output
    for name in ("rail_temperature_hourly.csv", "rail_temperature_daily.csv", "annual_extremes.csv",
                 "annual_extremes.png", "return_levels.png", "hottest_week.png"):
        assert (out / name).stat().st_size > 0, name
    hourly = pd.read_csv(out / "rail_temperature_hourly.csv", comment="#")
    head = (out / "rail_temperature_hourly.csv").read_text().splitlines()[:12]
    assert "# command: trackplan railtemp" in head and any(h.startswith("# track azimuth:") for h in head)
    assert list(hourly.columns) == ["time", "air_temperature_C", "rail_temperature_C"]
    assert hourly.time.iloc[0] == "2001-01-01T00:00+01:00"
    assert len(hourly) == 3 * 8760 + 8784  # 2004 is a leap year


def test_lat_lon_override(small_hourly):
    a = json.loads(_run(small_hourly, "--json").stdout)
    b = json.loads(_run(small_hourly, "--lat", "10", "--lon", "5", "--json").stdout)
    # the rail temperatures follow the sun of the place given; the record's air temperatures do not change
    assert a["max_air_temperature_C"] == b["max_air_temperature_C"]
    assert a["annual"][0]["max_rail_temperature_C"] != b["annual"][0]["max_rail_temperature_C"]


@pytest.mark.parametrize(
    "args,needle",
    [
        (["--lat", "95"], "--lat"),
        (["--method", "guess"], "accepted: auto"),
        (["--distribution", "weibull"], "accepted: gumbel, gev"),
        (["--return-period", "1"], "--return-period"),
        (["--shade", "2"], "--shade"),
        (["--rail", "NOPE"], "unknown rail profile"),
        (["--azimuth", "east"], "--azimuth"),
    ],
)
def test_bad_options_exit_2(small_hourly, args, needle):
    r = _run(small_hourly, *args)
    assert r.exit_code == 2
    assert needle in r.output
    assert "Traceback" not in r.output


def test_heat_balance_on_daily_record_exit_2():
    r = _run(SAMPLES / "quennick_sands_daily.csv.gz", "--method", "heat-balance")
    assert r.exit_code == 2
    assert "daily-extremes" in r.output


def test_empty_and_missing_file_exit_2(tmp_path):
    empty = tmp_path / "empty.csv"
    empty.write_text("", encoding="utf-8")
    for f in (empty, tmp_path / "absent.csv"):
        r = _run(f)
        assert r.exit_code == 2, r.output
        assert "Traceback" not in r.output


def test_record_with_a_missing_year_warns(tmp_path):
    """A record with a whole year missing: the year is left out and the output says so."""
    p = _write_hourly(tmp_path / "gap.csv", years=5)
    lines = p.read_text().splitlines()
    keep = [ln for ln in lines if not ln.startswith("2003-")]
    p.write_text("\n".join(keep) + "\n")
    r = _run(p, "--json")
    assert r.exit_code == 0, r.output
    js = json.loads(r.stdout)
    assert 2003 not in [a["year"] for a in js["annual"]]
    assert any("2003" in w for w in (x["message"] for x in js["warnings"]))


def test_lat_lon_given_silences_the_missing_coordinates_warning(tmp_path):
    # a GHCN-Daily by-station file (layout of the GHCN-Daily readme) without ghcnd-stations.txt beside it
    import datetime as dt

    day = dt.date(2019, 1, 1)
    rows = []
    for k in range(3 * 365):
        d = (day + dt.timedelta(days=k)).strftime("%Y%m%d")
        rows += [f"XXC00012345,{d},TMAX,{250 + (k % 50)},,,S,", f"XXC00012345,{d},TMIN,{50 + (k % 30)},,,S,"]
    f = tmp_path / "XXC00012345.csv"
    f.write_text("\n".join(rows) + "\n")
    r = _run(f, "--json")
    assert r.exit_code == 2 and "--lat" in r.output
    r = _run(f, "--lat", "40", "--lon", "-100", "--json")
    assert r.exit_code == 0, r.output
    assert not any("latitude/longitude" in w["message"] for w in json.loads(r.stdout)["warnings"])
