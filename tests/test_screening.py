"""Risk-day screening: hand-computed cases of the pure core and of the section glue.

Formulas: trackplan.screening docstring; sigma = E alpha dT and the break gap
P**2 / (E A r) (Esveld 2001, Modern Railway Track, ch. 7). The expected values
below are worked by hand from those formulas, not by the code under test.
"""

from __future__ import annotations

import datetime as dt
import math
from types import SimpleNamespace

import numpy as np
import pandas as pd
import pytest

from trackplan import check, screening
from trackplan.errors import InputError
from trackplan.sections import load_sections

E, A, ALPHA = 210e9, 76.70e-4, 1.15e-5
R = 10e3  # longitudinal resistance per rail [N/m]


def _days(tmax, tmin=None, neutral=27.0, drift=5.0, allow=30.0, crit=40.0, r=R, gap=0.05, stress=160e6, wf=0.8):
    tmax = np.asarray(tmax, dtype=float)
    tmin = np.full(tmax.shape, 10.0) if tmin is None else np.asarray(tmin, dtype=float)
    return screening.screen_days(tmax, tmin, heat_neutral_C=neutral - drift, cold_neutral_C=neutral,
                                 allowable_rise_K=allow, critical_rise_K=crit, E_Pa=E, area_m2=A, alpha_per_K=ALPHA,
                                 resistance_N_per_m=r, gap_limit_m=gap, tension_stress_limit_Pa=stress,
                                 watch_fraction=wf)


# --------------------------------------------------------------------------
# Pure core
# --------------------------------------------------------------------------


def test_every_heat_level_by_hand():
    # neutral 27 degC less 5 K drift = 22 degC; allowable 30 K, critical 40 K, watch from 24 K
    d = _days([45.9, 46.0, 51.9, 52.0, 61.9, 62.0, np.nan])
    assert d.rise_K[:6] == pytest.approx([23.9, 24.0, 29.9, 30.0, 39.9, 40.0])
    assert d.heat_level.tolist() == [0, 1, 1, 2, 2, 3, 0]
    assert d.valid.tolist() == [True] * 6 + [False]


def test_watch_fraction_moves_only_watch():
    d = _days([40.0, 45.0, 52.0], wf=0.6)  # watch from 18 K: rises 18, 23, 30
    assert d.heat_level.tolist() == [1, 1, 2]
    assert screening.DEFAULT_WATCH_FRACTION == check.DEFAULT_WATCH_FRACTION == 0.8


def test_nan_critical_never_triggers():
    d = _days([80.0], crit=np.nan)  # rise 58 K
    assert d.heat_level.tolist() == [2]


def test_cold_gap_limit_by_hand():
    # gap = E A alpha^2 dT^2 / r = 210e9 * 76.7e-4 * (1.15e-5)^2 * dT^2 / 1e4 = 2.1302e-5 * dT^2 [m]
    # dT = -48 K -> 49.08 mm (within 50 mm); dT = -49 K -> 51.15 mm (beyond)
    d = _days([30.0, 30.0], tmin=[-21.0, -22.0])
    assert d.pull_apart_gap_m == pytest.approx([0.049080, 0.051146], rel=1e-4)
    assert d.cold.tolist() == [False, True]
    # the equivalent rise limit: sqrt(0.05 * 1e4 / (210e9 * 76.7e-4)) / 1.15e-5 = 48.45 K (gap governs)
    lim = screening.cold_limit_rise_K(E, A, ALPHA, R, 0.05, 160e6)
    assert lim == pytest.approx(-48.448, abs=1e-3)


def test_cold_stress_limit_by_hand():
    # very stiff restraint: the gap stays small, the stress governs. 160 MPa / (210e9 * 1.15e-5) = 66.25 K
    d = _days([30.0, 30.0], tmin=[-39.0, -40.0], r=1e7, gap=0.05)  # rises -66 K (159.4 MPa), -67 K (161.8 MPa)
    assert d.tension_stress_Pa == pytest.approx([159.39e6, 161.81e6], rel=1e-4)
    assert d.cold.tolist() == [False, True]
    assert screening.cold_limit_rise_K(E, A, ALPHA, 1e7, 0.05, 160e6) == pytest.approx(-66.253, abs=1e-3)


def test_neutral_by_day_changes_on_event_day():
    days = np.arange(10)
    tn = screening.neutral_by_day(days, 27.0, [(3, 32.0), (7, 25.0)])
    assert tn.tolist() == [27.0] * 3 + [32.0] * 4 + [25.0] * 3


def test_disturbance_window_interpolates_through_partial():
    # knots disturbed 12 K, partial 18 K, consolidated 30 K; tamping on day 100, recovery 30 days
    days = np.array([99, 100, 110, 115, 129, 130])
    a = screening.track_state_by_day(days, [12.0, 18.0, 30.0], [(100, 30)])
    # day 110: x = 1/3 -> 12 + (18 - 12) * (2/3) = 16; day 115: x = 1/2 -> 18;
    # day 129: x = 29/30 -> 18 + 12 * (14/15) = 29.2; day 130 is recovered
    assert a == pytest.approx([30.0, 12.0, 16.0, 18.0, 29.2, 30.0])
    # recovery_days = 0: no reduction
    assert screening.track_state_by_day(days, [12.0, 18.0, 30.0], [(100, 0)]) == pytest.approx([30.0] * 6)


def test_disturbance_window_changes_the_level():
    days = np.array([100, 115, 130])
    allow = screening.track_state_by_day(days, [12.0, 18.0, 30.0], [(100, 30)])
    crit = screening.track_state_by_day(days, [15.0, 25.0, 40.0], [(100, 30)])
    d = screening.screen_days(np.full(3, 42.0), np.full(3, 10.0), heat_neutral_C=22.0, cold_neutral_C=27.0,
                              allowable_rise_K=allow, critical_rise_K=crit, E_Pa=E, area_m2=A, alpha_per_K=ALPHA,
                              resistance_N_per_m=R, gap_limit_m=0.05, tension_stress_limit_Pa=160e6)
    # rise 20 K every day: >= 15 critical on the event day; >= 18 restrict at half recovery; < 24 after
    assert d.heat_level.tolist() == [3, 2, 0]


def test_overlapping_windows_refused():
    with pytest.raises(InputError, match="overlap"):
        screening.track_state_by_day(np.arange(5), [10.0, 30.0], [(0, 10), (5, 10)])


def test_seasons_wrap_the_year_end():
    # November 2019 to February 2020 is the 2019 season: 30 + 31 + 31 + 29 days
    assert screening.season_lengths(np.array([2019, 2020]), (11, 2)).tolist() == [121, 120]
    assert screening.season_lengths(np.array([2020]), (5, 9)).tolist() == [153]
    assert screening.season_lengths(np.array([2020, 2021]), None).tolist() == [366, 365]
    y = screening.season_year([2020, 2020, 2019], [1, 11, 12], (11, 2))
    assert y.tolist() == [2019, 2020, 2019]
    assert screening.month_selection([1, 3, 10, 11, 12], (11, 2)).tolist() == [True, False, False, True, True]


def test_trend_by_hand():
    # yearly heat days 3 + (year - 2000) = 3, 4, ..., 12: exactly 10 days per decade, zero standard error
    years = np.arange(2000, 2010)
    n = (3 + (years - 2000)).astype(int)
    level = np.concatenate([np.r_[np.ones(k, int), np.zeros(365 - k, int)] for k in n])
    yrs = np.repeat(years, 365)
    ann = screening.annual_counts(yrs, np.ones(yrs.size, bool), level, np.zeros(yrs.size, bool))
    assert ann.watch_days.tolist() == n.tolist()
    t = screening.annual_trend(ann)
    assert t.heat_days_per_decade == pytest.approx(10.0)
    assert t.heat_days_per_decade_se == pytest.approx(0.0, abs=1e-9)
    assert t.years_used == 10
    short = screening.annual_counts(yrs[:365 * 4], np.ones(365 * 4, bool), level[:365 * 4], np.zeros(365 * 4, bool))
    assert screening.annual_trend(short).heat_days_per_decade is None
    assert screening.annual_trend(ann, typical_year=True).heat_days_per_decade is None


@pytest.mark.parametrize("text", ["13-2", "0-5", "5-", "may-sep", "1-2-3", ""])
def test_bad_month_ranges(text):
    with pytest.raises(InputError, match="month range"):
        screening.parse_months(text)


def test_options_validation():
    assert screening.parse_months("11-2") == (11, 2)
    assert screening.parse_months("7") == (7, 7)
    with pytest.raises(InputError, match="after"):
        screening.ScreenOptions(start=dt.date(2020, 5, 1), end=dt.date(2020, 4, 1)).validate()
    with pytest.raises(InputError, match="YYYY-MM-DD"):
        screening.parse_date("2020-02-30", "--from")
    with pytest.raises(InputError, match="^watch_fraction"):  # a field; the command line names its option
        screening.ScreenOptions(watch_fraction=1.2).validate()
    with pytest.raises(InputError, match="^warming"):
        screening.ScreenOptions(warming_K=25.0).validate()
    with pytest.raises(InputError, match="^neutral_override"):
        screening.ScreenOptions(neutral_override_C=75.0).validate()


# --------------------------------------------------------------------------
# Glue: sections through a test double of the Assessor
# --------------------------------------------------------------------------

#: Stability figures of the test double, per ballast state (invented round numbers for hand work).
STAB = {
    "consolidated": SimpleNamespace(allowable_rise_K=30.0, lower_critical_rise_K=40.0, upper_critical_rise_K=60.0,
                                    response="snap-through"),
    "partial": SimpleNamespace(allowable_rise_K=18.0, lower_critical_rise_K=25.0, upper_critical_rise_K=45.0,
                               response="snap-through"),
    "disturbed": SimpleNamespace(allowable_rise_K=12.0, lower_critical_rise_K=None, upper_critical_rise_K=15.0,
                                 response="progressive"),
}


class FakeAssessor:
    """Stands in for trackplan.assess.Assessor: a given daily series, fixed stability figures."""

    def __init__(self, daily: pd.DataFrame, typical_year=False):
        self.daily_df = daily
        self.typical_year = typical_year
        self.stability_calls = 0

    def daily(self, section):
        return self.daily_df, {"typical_year": self.typical_year, "station": "test"}, "key"

    def stability(self, section, ballast=None):
        self.stability_calls += 1
        return STAB[ballast or section.ballast]

    def longitudinal_resistance(self, section):
        return R


def _daily(start, tmax, tmin=None):
    idx = pd.date_range(start, periods=len(tmax), freq="D", name="date")
    tmin = np.full(len(tmax), 10.0) if tmin is None else tmin
    return pd.DataFrame({"rail_max_C": tmax, "rail_min_C": tmin, "air_max_C": np.nan, "air_min_C": np.nan},
                        index=idx)


def _section(tmp_path, extra="", events=""):
    (tmp_path / "clim.csv").write_text("placeholder\n")
    (tmp_path / "s.toml").write_text(f"""
[defaults]
rail = "60E1"
youngs_modulus = "210 GPa"
alpha = "1.15e-5 1/K"
drift_allowance = "5 K"
[sections.T-1]
climate = "clim.csv"
latitude = 45.0
longitude = 5.0
neutral_temperature = "27 degC"
neutral_date = 2020-01-05
{extra}
{events}
""")
    sf = load_sections(tmp_path / "s.toml", today=dt.date(2026, 1, 1), strict=True)
    return sf.sections[0]


def test_section_with_destress_and_tamping(tmp_path):
    events = """
[[sections.T-1.events]]
date = 2020-01-04
kind = "tamping"
recovery_days = 4
[[sections.T-1.events]]
date = 2020-01-08
kind = "destress"
neutral_temperature = "35 degC"
"""
    sec = _section(tmp_path, events=events)
    # 10 days from 2020-01-01, rail max 46 degC every day, day 3 missing
    tmax = np.full(10, 46.0)
    tmax[2] = np.nan
    fa = FakeAssessor(_daily("2020-01-01", tmax))
    s = screening.Screener(fa).screen(sec)
    # neutral less drift: 22 degC until 01-07, 30 degC from the destressing on 01-08 -> rise 24 K, then 16 K.
    # Track: tamping 01-04 with 4 days: x = 0, 1/4, 1/2, 3/4 on 01-04..01-07 (knots 12/18/30 K):
    # allowable 12, 15, 18, 24 K; critical knots 15 (upper, progressive), 25, 40 K: 15, 20, 25, 32.5 K.
    # 01-01, 01-02: rise 24 >= 0.8*30 -> watch; 01-03 missing; 01-04: 24 >= 15 -> critical;
    # 01-05: 24 >= 20 -> critical; 01-06: 24 >= 18 restrict (< 25); 01-07: 24 >= 24 restrict (< 32.5);
    # 01-08..01-10: rise 16 < 24 -> none.
    assert s.heat_days_by_level == {"watch": 2, "restrict": 2, "critical": 2}
    assert s.missing_days == 1 and s.screened_days == 9
    assert s.disturbed_days == 4
    f = s.flagged
    assert [str(d) for d in f.date] == ["2020-01-01", "2020-01-02", "2020-01-04", "2020-01-05", "2020-01-06",
                                        "2020-01-07"]
    assert f.level.tolist() == ["watch", "watch", "critical", "critical", "restrict", "restrict"]
    assert f.allowable_rise_K == pytest.approx([30.0, 30.0, 12.0, 15.0, 18.0, 24.0])
    assert f.neutral_temperature_C == pytest.approx([22.0] * 6)
    assert s.worst_day.date == dt.date(2020, 1, 4) and s.worst_day.margin_K == pytest.approx(-12.0)
    assert s.heat_neutral_temperature_C == pytest.approx(30.0) and s.cold_neutral_temperature_C == pytest.approx(35.0)
    assert any("before the neutral date 2020-01-05" in n for n in s.notes)


def test_neutral_override_and_warming(tmp_path):
    events = """
[[sections.T-1.events]]
date = 2020-01-08
kind = "destress"
neutral_temperature = "35 degC"
"""
    sec = _section(tmp_path, events=events)
    fa = FakeAssessor(_daily("2020-01-01", np.full(10, 46.0)))
    # override 40 degC, drift 5 K -> 35 degC; warming +1.5 K -> rise 12.5 K every day: no level
    s = screening.Screener(fa, screening.ScreenOptions(neutral_override_C=40.0, warming_K=1.5)).screen(sec)
    assert sum(s.heat_days_by_level.values()) == 0
    assert s.worst_day.rise_K == pytest.approx(12.5)
    # override 20 degC -> 15 degC heat neutral, rise 31 K -> restrict on all 10 days
    s = screening.Screener(fa, screening.ScreenOptions(neutral_override_C=20.0)).screen(sec)
    assert s.heat_days_by_level["restrict"] == 10


def test_cold_day_in_glue(tmp_path):
    sec = _section(tmp_path)
    tmin = np.array([-21.0, -22.0, 5.0])  # rises -48, -49 K with the undrifted 27 degC: only the second is cold
    s = screening.Screener(FakeAssessor(_daily("2020-06-01", np.full(3, 30.0), tmin))).screen(sec)
    assert s.cold_days == 1
    assert s.flagged.level.tolist() == ["cold"]
    assert s.flagged.rise_K == pytest.approx([-49.0])
    assert s.flagged.allowable_rise_K == pytest.approx([-48.448], abs=1e-3)
    assert s.worst_cold_day.date == dt.date(2020, 6, 2)


def test_event_after_record_refused(tmp_path):
    events = """
[[sections.T-1.events]]
date = 2021-03-01
kind = "tamping"
"""
    sec = _section(tmp_path, events=events)
    with pytest.raises(InputError, match="after the end of the climate record"):
        screening.Screener(FakeAssessor(_daily("2020-01-01", np.full(10, 40.0)))).screen(sec)
    with pytest.raises(InputError, match="typical year"):
        screening.Screener(FakeAssessor(_daily("2020-01-01", np.full(10, 40.0)), typical_year=True)).screen(sec)


def test_event_before_record_carries_in(tmp_path):
    events = """
[[sections.T-1.events]]
date = 2019-12-30
kind = "tamping"
recovery_days = 4
"""
    sec = _section(tmp_path, events=events)
    s = screening.Screener(FakeAssessor(_daily("2020-01-01", np.full(4, 42.0)))).screen(sec)
    # 01-01 and 01-02 are days 2 and 3 of the window: allowable 18 and 24 K; rise 20 K -> restrict, watch
    # (20 >= 0.8 * 24 = 19.2); 01-03 recovered: 20 < 24 -> none
    assert s.flagged.level.tolist() == ["restrict", "watch"]
    assert s.flagged.allowable_rise_K == pytest.approx([18.0, 24.0])


def test_window_outside_record(tmp_path):
    sec = _section(tmp_path)
    o = screening.ScreenOptions(start=dt.date(2022, 1, 1))
    with pytest.raises(InputError, match="nothing to screen"):
        screening.Screener(FakeAssessor(_daily("2020-01-01", np.full(4, 42.0))), o).screen(sec)


def test_consistency_with_check(tmp_path):
    # With the design hot day taken as the record's hottest day, check and screening use the same
    # current neutral (recorded less drift) and allowable rise: check acts exactly when screening has restrict days.
    sec = _section(tmp_path)
    rng = np.random.default_rng(1)
    tmax = 25.0 + 20.0 * rng.random(400)
    for peak, verdict in ((55.0, "act"), (48.0, "watch"), (40.0, "ok")):
        t = tmax.copy()
        t[200] = peak
        s = screening.Screener(FakeAssessor(_daily("2020-01-01", t))).screen(sec)
        c = check.check_section(latest_neutral_C=sec.latest_neutral_temperature_C,
                                drift_allowance_K=sec.drift_allowance_K, design_max_C=float(t.max()),
                                design_min_C=-5.0, allowable_rise_K=STAB["consolidated"].allowable_rise_K,
                                E_Pa=E, area_m2=A, alpha_per_K=ALPHA, resistance_N_per_m=R,
                                gap_limit_m=sec.gap_limit_m, tension_stress_limit_Pa=sec.tension_stress_limit_Pa,
                                neutral_basis="destressed")
        assert c.verdict == verdict
        assert s.worst_day.rise_K == pytest.approx(c.heat_rise_K)
        assert (s.heat_days_by_level["restrict"] + s.heat_days_by_level["critical"] > 0) == (verdict == "act")
        assert (sum(s.heat_days_by_level.values()) > 0) == (verdict != "ok")


def test_stability_cached_per_track_and_state(tmp_path):
    events = """
[[sections.T-1.events]]
date = 2020-01-04
kind = "tamping"
recovery_days = 4
"""
    sec = _section(tmp_path, events=events)
    fa = FakeAssessor(_daily("2020-01-01", np.full(10, 40.0)))
    sc = screening.Screener(fa)
    sc.screen(sec)
    sc.screen(sec)
    assert fa.stability_calls == 3  # consolidated, partial, disturbed: once each


def test_flagged_rows_equal_counts(tmp_path):
    sec = _section(tmp_path)
    rng = np.random.default_rng(7)
    t = 30.0 + 30.0 * rng.random(800)
    tmin = -30.0 + 30.0 * rng.random(800)
    s = screening.Screener(FakeAssessor(_daily("2019-01-01", t, tmin))).screen(sec)
    res = screening.ScreenResult(screening.ScreenOptions(), [s], [])
    fr = screening.flagged_frame(res)
    counts = fr["level"].value_counts().to_dict()
    assert {k: counts.get(k, 0) for k in screening.LEVELS} == s.heat_days_by_level
    assert counts.get("cold", 0) == s.cold_days
    an = screening.annual_frame(res)
    assert an["watch_days"].sum() == s.heat_days_by_level["watch"] and an["cold_days"].sum() == s.cold_days
    assert an["screened_days"].sum() == s.screened_days == 800
    # independent count with pandas: rise above 22 degC against 24 / 30 / 40 K
    rise = pd.Series(t) - 22.0
    assert s.heat_days_by_level == {"watch": int(((rise >= 24) & (rise < 30)).sum()),
                                    "restrict": int(((rise >= 30) & (rise < 40)).sum()),
                                    "critical": int((rise >= 40).sum())}
    assert math.isclose(s.cold_limit_rise_K, -48.448, abs_tol=1e-3)
    assert s.cold_days == int(((pd.Series(tmin) - 27.0) < -48.448).sum())
