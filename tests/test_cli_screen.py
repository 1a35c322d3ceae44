"""``trackplan screen`` end to end.

The real record is the TMY3 file that pvlib ships (723170TYA.CSV, Greensboro NC,
from the US National Solar Radiation Database; Wilcox and Marion 2008, NREL/TP-581-43156).
Expected counts are derived here independently of trackplan.screening: the daily
rail maximum and minimum straight from trackplan.railtemp, the allowable and
critical rises straight from trackplan.stability, and plain pandas comparisons
with the level rules of the screening docstring.
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

pvlib = pytest.importorskip("pvlib")

TMY3 = Path(pvlib.__file__).parent / "data" / "723170TYA.CSV"
DRIFT = 5.0
TAMP_DATE, TAMP_DAYS = "1990-07-10", 20


def _track():
    from trackplan import rails, stability, thermal
    from trackplan.track import build_track

    p = rails.get_profile("60E1")
    st = thermal.default_steel(False)
    out = {}
    for b in ("consolidated", "partial", "disturbed"):
        inp = build_track(p, st, sleeper="timber", ballast=b, radius_m=500.0, misalignment_m=0.03,
                          misalignment_length_m=10.0)
        res = stability.analyse_stability(inp)
        crit = res.lower_critical_rise_K if res.lower_critical_rise_K is not None else res.upper_critical_rise_K
        out[b] = (float(res.allowable_rise_K), float(crit), float(inp.longitudinal_resistance_N_per_m))
    return p, st, out


@pytest.fixture(scope="module")
def greensboro():
    """Daily rail extremes of the TMY3 record for a north-south track, and the track figures."""
    from trackplan import railtemp, weather

    df, meta = weather.read_record(TMY3)
    p, st, track = _track()
    site = railtemp.RailSite(latitude_deg=meta["latitude_deg"], longitude_deg=meta["longitude_deg"],
                             elevation_m=meta["elevation_m"] or 0.0, track_azimuth_deg=0.0)
    daily = railtemp.daily_rail_extremes(df, meta, p, site, "auto")
    a_c, c_c, _ = track["consolidated"]
    hottest = daily["rail_max_C"].sort_values(ascending=False)
    # section A: the 5th hottest day reaches the critical rise; B 8 K warmer neutral, tamped in July; C cold-prone
    tn_a = float(np.floor((hottest.iloc[4] - c_c + DRIFT) * 10) / 10)
    neutrals = {"GB-A": tn_a, "GB-B": tn_a + 8.0, "GB-C": 35.0}
    return daily, st, p, track, neutrals


def _write_sections(path: Path, neutrals: dict, events: bool = True, extra: str = "") -> Path:
    parts = [f"""
[defaults]
rail = "60E1"
sleeper = "timber"
ballast = "consolidated"
radius = "500 m"
misalignment = "30 mm"
misalignment_length = "10 m"
drift_allowance = "{DRIFT} K"
gap_limit = "50 mm"
tension_stress_limit = "160 MPa"
track_azimuth = "0 deg"
"""]
    for sid, tn in neutrals.items():
        parts.append(f"""
[sections.{sid}]
climate = "{TMY3.as_posix()}"
neutral_temperature = "{tn:.1f} degC"
neutral_date = 2020-06-01
neutral_basis = "destressed"
""")
        if sid == "GB-B" and events:
            parts.append(f"""
[[sections.{sid}.events]]
date = {TAMP_DATE}
kind = "tamping"
recovery_days = {TAMP_DAYS}
""")
    parts.append(extra)
    path.write_text("".join(parts))
    return path


def _expected(daily, st, p, track, tn, tamped=False, months=None, warming=0.0):
    """Counts by plain pandas comparisons (independent of trackplan.screening)."""
    d = daily.copy()
    if months is not None:
        d = d[(d.index.month >= months[0]) & (d.index.month <= months[1])]
    tmax, tmin = d["rail_max_C"] + warming, d["rail_min_C"] + warming
    a_c, c_c, r = track["consolidated"]
    allow = pd.Series(a_c, index=d.index)
    crit = pd.Series(c_c, index=d.index)
    if tamped:
        x = (d.index - pd.Timestamp(TAMP_DATE)).days.to_numpy() / TAMP_DAYS
        w = (x >= 0) & (x < 1)
        states = ("disturbed", "partial", "consolidated")
        allow[w] = np.interp(x[w], [0, 0.5, 1], [track[s][0] for s in states])
        crit[w] = np.interp(x[w], [0, 0.5, 1], [track[s][1] for s in states])
    rise = tmax - (tn - DRIFT)
    crit_d = rise >= crit
    restrict_d = (rise >= allow) & ~crit_d
    watch_d = (rise >= 0.8 * allow) & ~crit_d & ~restrict_d
    # cold: -E alpha dT > 160 MPa, or E A (alpha dT)^2 / r > 50 mm (Esveld 2001, ch. 7)
    dtc = tmin - tn
    stress = -st.E_Pa * st.alpha_per_K * dtc
    gap = np.where(dtc < 0, st.E_Pa * p.area_m2 * (st.alpha_per_K * dtc) ** 2 / r, 0.0)
    cold = (stress > 160e6) | (gap > 0.05)
    return {"watch": int(watch_d.sum()), "restrict": int(restrict_d.sum()), "critical": int(crit_d.sum())}, \
        int(cold.sum()), rise


def test_real_record_counts_json_and_csv(run_cli, tmp_path, greensboro, vocabulary):
    daily, st, p, track, neutrals = greensboro
    f = _write_sections(tmp_path / "gb.toml", neutrals)
    res, data = run_cli("screen", f, "--json", "--out", tmp_path / "out", json_out=True)
    assert res.exit_code == 0, res.output
    secs = {s["id"]: s for s in data["sections"]}
    assert set(secs) == set(neutrals)
    flagged = pd.read_csv(tmp_path / "out" / "flagged_days.csv", comment="#")
    annual = pd.read_csv(tmp_path / "out" / "annual_counts.csv", comment="#")
    for sid, tn in neutrals.items():
        heat, cold, rise = _expected(daily, st, p, track, tn, tamped=(sid == "GB-B"))
        s = secs[sid]
        assert s["heat_days_by_level"] == heat, sid
        assert s["cold_days"] == cold, sid
        assert s["first_date"] == "1990-01-01" and s["last_date"] == "1990-12-31"
        assert s["missing_days"] == 0 and s["screened_days"] == 365
        assert s["trend"]["heat_days_per_decade"] is None and "typical-year" in s["trend"]["note"]
        # JSON counts equal the CSV rows
        rows = flagged[flagged["section"] == sid]["level"].value_counts().to_dict()
        assert {k: rows.get(k, 0) for k in heat} == s["heat_days_by_level"]
        assert rows.get("cold", 0) == s["cold_days"]
        yr = annual[annual["section"] == sid]
        assert yr["year"].tolist() == [1990]
        assert int(yr["restrict_days"].iloc[0]) == heat["restrict"]
    assert secs["GB-A"]["heat_days_by_level"]["critical"] >= 5  # by construction of the neutral
    assert secs["GB-C"]["cold_days"] > 0
    heat_a, _, rise_a = _expected(daily, st, p, track, neutrals["GB-A"])
    assert secs["GB-A"]["worst_day"]["rise_K"] == pytest.approx(float(rise_a.max()), abs=1e-9)
    assert secs["GB-A"]["worst_day"]["date"] == rise_a.idxmax().date().isoformat()
    assert secs["GB-B"]["disturbed_days"] == TAMP_DAYS
    assert list(flagged.columns) == ["section", "date", "level", "rail_temperature_C", "neutral_temperature_C",
                                     "rise_K", "allowable_rise_K"]
    assert "caution" in data and data["settings"]["watch_fraction"] == 0.8
    # one vocabulary: every key a glossary name; the summary and the annual counts are the JSON flattened
    from trackplan import screening_tables

    vocabulary.assert_glossary_keys(data)
    vocabulary.assert_csv_is_flat_json(tmp_path / "out" / "screen_summary.csv", data["sections"],
                                       screening_tables.SUMMARY_NAMES, ("warnings", "caution", "files", "problems",
                                                                        "inputs", "annual"))
    vocabulary.assert_csv_is_flat_json(tmp_path / "out" / "annual_counts.csv", [
        {"id": s["id"], **a} for s in data["sections"] for a in s["annual"]])
    for name in ("flagged_timeline.png", "annual_counts.png", "screen_summary.csv"):
        assert (tmp_path / "out" / name).stat().st_size > 1000


def test_months_warming_and_override(run_cli, tmp_path, greensboro):
    daily, st, p, track, neutrals = greensboro
    f = _write_sections(tmp_path / "gb.toml", {"GB-A": neutrals["GB-A"]}, events=False)
    res, data = run_cli("screen", f, "--json", "--months", "6-8", "--warming", "1.5 K", json_out=True)
    heat, cold, _ = _expected(daily, st, p, track, neutrals["GB-A"], months=(6, 8), warming=1.5)
    s = data["sections"][0]
    assert s["heat_days_by_level"] == heat and s["cold_days"] == cold
    assert s["screened_days"] == 30 + 31 + 31
    assert data["settings"]["warming_K"] == 1.5 and data["settings"]["months"] == [6, 8]
    # what-if: destressed to 45 degC (drift still applies)
    res, data = run_cli("screen", f, "--json", "--neutral-override", "45 degC", json_out=True)
    heat, cold, _ = _expected(daily, st, p, track, 45.0)
    assert data["sections"][0]["heat_days_by_level"] == heat and data["sections"][0]["cold_days"] == cold


def test_terminal_summary(run_cli, tmp_path, greensboro):
    _, _, _, _, neutrals = greensboro
    f = _write_sections(tmp_path / "gb.toml", neutrals)
    res = run_cli("screen", f, "--units", "us")
    assert res.exit_code == 0, res.output
    for word in ("GB-A", "GB-C", "Worst days", "°F", "Caution", "No trend: typical-year record"):
        assert word in res.output, word


def test_wrapping_months_and_trend_on_30_years(run_cli, tmp_path):
    # Gullhaven Quay: the bundled synthetic southern-hemisphere record, 1995-2024
    from trackplan.weather import sample_records

    clim = sample_records()["gullhaven_quay"]
    f = tmp_path / "gq.toml"
    f.write_text(f"""
[sections.GQ-X]
rail = "60E1"
climate = "{clim.as_posix()}"
neutral_temperature = "12 degC"
""")
    res, data = run_cli("screen", f, "--json", "--months", "11-2", json_out=True)
    assert res.exit_code == 0, res.output
    s = data["sections"][0]
    years = [a["year"] for a in s["annual"]]
    # Jan-Feb 1995 belong to the season that started in 1994 (incomplete); Nov-Dec 2024 to 2024 (incomplete)
    assert years[0] == 1994 and years[-1] == 2024 and len(years) == 31
    # Nov 1994-Feb 1995: 30 + 31 + 31 + 28 days (of which the record holds Jan-Feb, 59); Nov 1995-Feb 1996 (leap): 121
    assert [a["season_days"] for a in s["annual"][:2]] == [120, 121]
    assert [a["screened_days"] + a["missing_days"] for a in s["annual"][:2]] == [59, 121]
    assert not s["annual"][0]["complete"] and not s["annual"][-1]["complete"]
    assert s["complete_years"] == 29
    t = s["trend"]
    assert t["years_used"] == 29 and t["heat_days_per_decade"] is not None
    # the trend is the least-squares slope of the complete years' heat days (numpy.polyfit, independent here)
    comp = [a for a in s["annual"] if a["complete"]]
    x = np.array([a["year"] for a in comp], float)
    y = np.array([a["watch_days"] + a["restrict_days"] + a["critical_days"] for a in comp], float)
    assert t["heat_days_per_decade"] == pytest.approx(np.polyfit(x, y, 1)[0] * 10, abs=1e-9)


@pytest.mark.parametrize("args,words", [
    (["--months", "13-2"], "month range"),
    (["--from", "1990-02-30"], "YYYY-MM-DD"),
    (["--from", "1990-06-01", "--to", "1990-05-01"], "--from/--to: the first day 1990-06-01 is after the last day"),
    (["--watch-fraction", "1.5"], "--watch-fraction"),
    (["--warming", "1.5 degC"], "--warming"),
    (["--neutral-override", "90 degC"], "--neutral-override"),
    (["--from", "2001-01-01"], "nothing to screen"),
])
def test_bad_options_exit_2(run_cli, tmp_path, args, words):
    f = _write_sections(tmp_path / "gb.toml", {"GB-A": 20.0}, events=False)
    res = run_cli("screen", f, *args)
    assert res.exit_code == 2, res.output
    assert words in res.output
    assert "Traceback" not in res.output


@pytest.mark.parametrize("extra,words", [
    ("""
[[sections.GB-A.events]]
date = 1990-06-01
kind = "tamping"
recovery_days = 30
[[sections.GB-A.events]]
date = 1990-06-20
kind = "ballast-work"
""", "disturbance windows overlap"),
    ("""
[[sections.GB-A.events]]
date = 2021-04-02
kind = "tamping"
""", "after the end of the climate record"),
    ("""
[[sections.GB-A.events]]
date = "1990-13-01"
kind = "tamping"
""", "YYYY-MM-DD"),
])
def test_bad_events_exit_2_and_good_sections_still_reported(run_cli, tmp_path, extra, words):
    f = _write_sections(tmp_path / "gb.toml", {"GB-A": 20.0, "GB-C": 35.0}, events=False, extra=extra)
    res = run_cli("screen", f, "--json")
    assert res.exit_code == 2
    assert words in res.stderr
    assert "Traceback" not in res.output
    data = json.loads(res.stdout)
    assert [s["id"] for s in data["sections"]] == ["GB-C"]
    assert len(data["problems"]) == 1
    res = run_cli("screen", f, "--strict")
    assert res.exit_code == 2 and words in res.stderr


def test_help_has_example(run_cli):
    res = run_cli("screen", "--help")
    assert res.exit_code == 0 and "Example: trackplan screen" in res.output


def test_season_follows_each_station_hemisphere(run_cli, tmp_path):
    # The same record placed north (its own latitude, 36.1 N) and south of the equator.
    f = _write_sections(tmp_path / "two.toml", {"GB-N": 20.0, "GB-S": 20.0}, events=False)
    text = f.read_text().replace('[sections.GB-S]\n', '[sections.GB-S]\nlatitude = -36.1\nlongitude = -79.9\n')
    f.write_text(text)
    res, d = run_cli("screen", f, "--season", "summer", "--json", json_out=True)
    months = {s["id"]: s["months"] for s in d["sections"]}
    assert months == {"GB-N": [5, 6, 7, 8, 9], "GB-S": [11, 12, 1, 2, 3]}
    assert d["settings"]["season"] == "summer"
    res, d = run_cli("screen", f, "--months", "5-9", "--json", json_out=True)
    warn = {s["id"]: " ".join(w["message"] for w in s["warnings"]) for s in d["sections"]}
    codes = {s["id"]: [w["code"] for w in s["warnings"]] for s in d["sections"]}
    assert "winter_months" in codes["GB-S"] and "winter_months" not in codes["GB-N"]
    assert "mostly winter" in warn["GB-S"] and "southern hemisphere" in warn["GB-S"]
    assert "mostly winter" not in warn["GB-N"]
    assert all(s["months"] == [5, 6, 7, 8, 9] for s in d["sections"])
    res = run_cli("screen", f, "--months", "5-9")
    assert "Warning (" in res.stdout and "GB-S" in res.stdout and "--season summer" in res.stdout
    res = run_cli("screen", f, "--season", "summer", "--months", "5-9")
    assert res.exit_code == 2 and "not both" in res.output and "Traceback" not in res.output


def test_summary_counts_trend_wording_and_settings_in_files(run_cli, greensboro, tmp_path):
    _, _, _, _, neutrals = greensboro
    f = _write_sections(tmp_path / "s.toml", neutrals, events=False)
    out = tmp_path / "o"
    res = run_cli("screen", f, "--warming", "1.5 K", "--months", "5-9", "--out", out)
    lines = res.stdout.splitlines()
    assert max(len(ln) for ln in lines) <= 100
    # raw day counts beside the rates: "n (rate)"
    row = next(ln for ln in lines if "GB-A" in ln)
    assert "(" in row and ")" in row
    assert "steepest" not in res.stdout.lower()
    # every file records the what-ifs and months
    for name in ("screen_summary.csv", "annual_counts.csv", "flagged_days.csv"):
        head = (out / name).read_text().splitlines()[:10]
        assert "# months: 5-9" in head and "# warming: 1.5 K" in head, name
    html = (out / "screen_summary.html").read_text()
    assert "warming: 1.5 K" in html and "months: 5-9" in html and "Caution" in html
    summary = pd.read_csv(out / "screen_summary.csv", comment="#")
    assert set(summary["months"]) == {"5 6 7 8 9"}


def test_trend_sentence_names_rise_and_fall_honestly():
    from types import SimpleNamespace as NS

    from trackplan.cli.screen import trend_sentence

    def sec(sid, slope, se, days):
        return NS(id=sid, heat_days_by_level={"watch": days, "restrict": 0, "critical": 0},
                  trend=NS(heat_days_per_decade=slope, heat_days_per_decade_se=se))

    # a flat trend is neither an increase nor a decrease
    flat = trend_sentence([sec("A", 0.0, 0.0, 300)])
    assert "increase" not in flat and "decrease" not in flat
    text = trend_sentence([sec("A", 0.1, 0.02, 6), sec("B", -4.1, 1.2, 300), sec("C", 9.0, 1.0, 2)])
    # C has too few heat days for a trend; B's fall is the larger change and is said as a decrease
    assert "Largest decrease: B -4.1 ± 1.2" in text and "clear (beyond two standard errors)" in text
    assert "Largest increase: A +0.1 ± 0.0" in text and "C" not in text.replace("clear", "").replace("Largest", "")
    assert "steepest" not in text.lower()


def test_wide_table_adds_the_record_and_worst_rise(run_cli, greensboro, tmp_path):
    _, _, _, _, neutrals = greensboro
    f = _write_sections(tmp_path / "s.toml", neutrals, events=False)
    narrow = run_cli("screen", f).stdout
    wide = run_cli("screen", f, "--wide").stdout
    head = lambda out: next(ln for ln in out.splitlines() if ln.startswith("section"))  # noqa: E731
    assert "record" not in head(narrow) and "record" in head(wide) and "missing" in wide
    assert "1990-01-01 – 1990-12-31" in wide
    assert max(len(ln) for ln in narrow.splitlines()) <= 100
