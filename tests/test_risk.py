"""Buckling probability: Monte Carlo core, stand-in of the stability model, section runs."""

from __future__ import annotations

import dataclasses
import datetime as dt
import math

import numpy as np
import pytest

from trackplan import risk
from trackplan.errors import InputError

SMALL_AXES = [np.geomspace(0.8, 1.25, 2), np.geomspace(0.8, 1.25, 2), np.geomspace(0.015, 0.03, 2)]


def _normal_case(n, seed, muC=30.0, sC=4.0, T=45.0, N0=25.0, sN=3.0, sb=2.0):
    """Normal capacity and demand through the Monte Carlo core: K = 1 hot day of T, neutral
    N(N0, sN), season error N(0, sb), capacity N(muC, sC) (recovered from the peak-resistance draw)."""
    u = risk.Uncertainty(neutral_sd_K=sN, drift_per_year_K=0.0, drift_per_year_sd_K=0.0, years_since_neutral=0.0,
                         peak_resistance_cov=0.2, longitudinal_resistance_cov=0.0, misalignment_spread=0.0,
                         rail_temperature_bias_sd_K=sb, rail_temperature_daily_sd_K=0.0)
    s_ln = math.sqrt(math.log1p(0.2 ** 2))

    def capacity(pf, lf, mis):
        return muC + sC * np.log(pf) / s_ln

    hot = np.array([[T]])
    d = risk.draw(seed, n, 1, risk.TOP_DAYS_MAX)
    return risk.run(hot, N0, u, capacity, 0.02, d)


def test_normal_capacity_and_demand_reproduce_phi_minus_beta():
    # Ang and Tang, Probability Concepts in Engineering (2nd ed., 2007), ch. 6: for normal capacity C and
    # demand S, P_f = P(C - S < 0) = Phi(-beta), beta = (mu_C - mu_S) / sqrt(sigma_C^2 + sigma_S^2).
    muC, sC, T, N0, sN, sb = 30.0, 4.0, 45.0, 25.0, 3.0, 2.0
    beta = (muC - (T - N0)) / math.sqrt(sC ** 2 + sN ** 2 + sb ** 2)
    exact = 0.5 * math.erfc(beta / math.sqrt(2.0))
    e = _normal_case(200_000, 11, muC, sC, T, N0, sN, sb)
    assert abs(e.probability - exact) < 4 * e.standard_error, (e.probability, exact, e.standard_error)
    assert 0.02 < exact < 0.1  # a case where the check means something


def test_same_seed_same_result_and_standard_error_falls_as_one_over_root_n():
    a = _normal_case(4_000, 5)
    b = _normal_case(4_000, 5)
    c = _normal_case(4_000, 6)
    assert a.probability == b.probability and a.standard_error == b.standard_error
    assert c.probability != a.probability
    small, big = _normal_case(2_000, 7), _normal_case(32_000, 7)
    ratio = small.standard_error / big.standard_error
    assert ratio == pytest.approx(4.0, rel=0.15)  # sqrt(32000 / 2000) = 4


def test_top_days_keep_each_seasons_hottest_and_those_near_it():
    rng = np.random.default_rng(0)
    t = rng.normal(40, 5, 300)
    t[17] = np.nan
    s = np.repeat(np.arange(3), 100)
    hot = risk.top_days(t, s, 3, daily_sd_K=0.0)
    assert hot.shape == (3, 1)
    for k in range(3):
        assert hot[k, 0] == np.nanmax(t[s == k])
    hot2 = risk.top_days(t, s, 3, daily_sd_K=2.0)
    for k in range(3):
        seas = np.sort(t[s == k][np.isfinite(t[s == k])])[::-1]
        n_near = int(np.sum(seas >= seas[0] - risk.TOP_DAYS_SIGMAS * 2.0))
        assert np.all(hot2[k, :min(n_near, hot2.shape[1])] == seas[:min(n_near, hot2.shape[1])])


def test_buckles_is_the_hottest_day_against_the_neutral_and_capacity():
    hot = np.array([[50.0, 48.0, -np.inf]] * 2)
    assert list(risk.buckles(hot, np.array([20.0, 20.0]), np.array([29.0, 31.0]))) == [True, False]


def test_overrides_are_validated_with_where():
    ok = risk.parse_overrides({"neutral_sd": "4 K", "peak_resistance_cov": 0.3, "years_since_neutral": 3},
                              "net.toml [sections.A] risk")
    assert ok == {"neutral_sd": 4.0, "peak_resistance_cov": 0.3, "years_since_neutral": 3.0}
    with pytest.raises(InputError, match=r"risk\.colour: unknown risk input 'colour'; accepted: neutral_sd"):
        risk.parse_overrides({"colour": 1}, "net.toml [sections.A] risk")
    with pytest.raises(InputError, match="has no unit"):
        risk.parse_overrides({"neutral_sd": 4}, "w")
    with pytest.raises(InputError, match="outside 0..1"):
        risk.parse_overrides({"peak_resistance_cov": 1.5}, "w")
    u = risk.uncertainty_for("unknown", None, {})
    assert u.neutral_sd_K == risk.defaults()["neutral_sd_unknown"].value
    assert u.years_since_neutral == risk.defaults()["undated_years"].value
    assert all(r.source for r in risk.defaults().values())


def test_section_file_risk_table_is_read_and_bad_fields_named(tmp_path):
    from trackplan.samples import example_network
    from trackplan.sections import load_sections

    text = example_network().read_text()
    root = example_network().parent
    text = text.replace('"../climate_samples/', f'"{(root.parent / "climate_samples").as_posix()}/')
    f = tmp_path / "net.toml"
    f.write_text(text + '\n[sections.KP-101.risk]\nneutral_sd = "1.5 K"\n')
    sf = load_sections(f)
    kp = next(s for s in sf.sections if s.id == "KP-101")
    assert dict(kp.risk) == {"neutral_sd": 1.5}
    f.write_text(text + '\n[sections.KP-101.risk]\nneutral_sd = "99 K"\n')
    sf = load_sections(f)
    assert any("[sections.KP-101] risk.neutral_sd" in str(p) and "outside" in str(p) for p in sf.problems)


# --------------------------------------------------------------------------
# Stand-in
# --------------------------------------------------------------------------


def _base():
    from trackplan import rails, thermal
    from trackplan.track import build_track

    return build_track(rails.get_profile("60E1"), thermal.default_steel(False), sleeper="concrete",
                       ballast="partial")


@pytest.fixture(scope="module")
def small_stand_in(tmp_path_factory):
    from trackplan import surrogate

    folder = tmp_path_factory.mktemp("stand-ins")
    return surrogate.load_or_build(_base(), SMALL_AXES, folder, test_points=0), folder


def test_stand_in_matches_the_full_model_at_grid_points_and_between_them(small_stand_in):
    from trackplan import surrogate

    s = small_stand_in[0]
    # at a grid point the stand-in is the full model
    full = surrogate.full_model(s.base, SMALL_AXES[0][1], SMALL_AXES[1][0], SMALL_AXES[2][1])[0]
    assert s(SMALL_AXES[0][1], SMALL_AXES[1][0], SMALL_AXES[2][1]) == pytest.approx(full, rel=1e-9)
    # between grid points, on a narrow domain, within 3 % of the full model (the wide grid's error over
    # 300 random points is measured in bench/bench_risk.py)
    e = surrogate.measure_error(s, 6, seed=1)
    assert e["points"] == 6 and e["max_error_pct"] < 3.0, e
    # outside the grid the full model answers
    out = s(1.6, 1.0, 0.02)
    assert out == pytest.approx(surrogate.full_model(s.base, 1.6, 1.0, 0.02)[0], rel=0.01)
    assert s.fallback_calls == 1


def test_stand_in_is_cached_on_disk_by_content(small_stand_in, tmp_path, monkeypatch):
    from trackplan import surrogate

    a, folder = small_stand_in
    files = list(folder.glob("*.npz"))
    assert len(files) == 1
    monkeypatch.setattr(surrogate, "build", lambda *a, **k: pytest.fail("rebuilt although cached"))
    b = surrogate.load_or_build(_base(), SMALL_AXES, folder)
    np.testing.assert_array_equal(a.values, b.values)
    # another family has another key
    other = dataclasses.replace(_base(), radius_m=800.0)
    assert surrogate.family_key(other, SMALL_AXES) != surrogate.family_key(_base(), SMALL_AXES)
    monkeypatch.setenv(surrogate.ENV_CACHE, str(tmp_path / "elsewhere"))
    assert surrogate.cache_dir() == tmp_path / "elsewhere"


# --------------------------------------------------------------------------
# Sections: deterministic limit against screen
# --------------------------------------------------------------------------


def test_zero_uncertainty_gives_zero_or_one_and_agrees_with_screen():
    # With every spread zero the probability of each season is 0 or 1: 1 exactly when `screen`
    # finds a critical day that season (rise above neutral less the drift allowance beyond the
    # critical rise), on the same record, days and track.
    from trackplan.assess import Assessor
    from trackplan.risk_network import RiskOptions, RiskRunner
    from trackplan.samples import example_network
    from trackplan.screening import ScreenOptions, Screener
    from trackplan.sections import load_sections
    from trackplan.stability import physical_base

    sf = load_sections(example_network())
    sec = next(s for s in sf.sections if s.id == "DS-302")
    assert not sec.events
    # a neutral that makes some seasons critical and others not on this record
    sec = dataclasses.replace(sec, neutral_temperature_C=sec.neutral_temperature_C - 12.0)
    u = risk.zero_uncertainty(years_since_neutral=1.0, drift_per_year_K=sec.drift_allowance_K)
    assessor = Assessor()
    runner = RiskRunner(RiskOptions(samples=400, seed=3, season="5-9", uncertainty=u, drivers=False,
                                    today=dt.date(2025, 1, 1)), assessor)
    r = runner.section_risk(sec)
    sc = Screener(assessor, ScreenOptions(months=(5, 9))).screen(sec)
    st = assessor.stability(sec)
    assert sc.critical_rise_K == pytest.approx(physical_base(st.upper_critical_rise_K, st.lower_critical_rise_K,
                                                             st.rise_at_displacement_limit_K)[0])
    per = dict(zip(r.seasons, r.estimate.season_probability))
    assert set(np.unique(list(per.values()))) <= {0.0, 1.0}
    years = list(sc.annual.year)
    critical = {int(y): int(c) > 0 for y, c in zip(years, sc.annual.critical_days)}
    assert per and all(per[y] == float(critical[y]) for y in per)
    assert 0.0 < r.probability < 1.0  # some seasons critical, some not: the check means something


def test_interpolation_stays_within_its_corners_at_a_step_and_is_exact_for_a_power_law():
    # a grid with a step of the output between the 2nd and 3rd misalignment (a kink of the response):
    # PCHIP is monotone between grid points (Fritsch and Carlson 1980), so the stand-in never goes
    # beyond the values on either side of the step, and it is exact for a power law (linear in the
    # logarithms), the local shape of the critical rises
    from trackplan import surrogate

    axes = [np.geomspace(0.5, 2.0, 3), np.geomspace(0.5, 2.0, 2), np.geomspace(0.005, 0.08, 5)]
    P, L, M = np.meshgrid(*axes, indexing="ij")
    smooth = 50.0 * np.sqrt(P) * (M / 0.02) ** -0.05
    vals = np.where(M > 0.012, smooth, 1.8 * smooth)
    s = surrogate.Surrogate(base=None, axes=axes, values=np.stack([vals, vals, vals]))
    m = np.geomspace(axes[2][1], axes[2][2], 9)
    v = s.interpolate(1.0, 1.0, m)
    lo = 50.0 * (axes[2][2] / 0.02) ** -0.05
    hi = 1.8 * 50.0 * (axes[2][1] / 0.02) ** -0.05
    assert np.all(v >= lo * (1 - 1e-9)) and np.all(v <= hi * (1 + 1e-9))
    assert np.all(np.diff(v) <= 1e-9)  # monotone across the step
    pure = surrogate.Surrogate(base=None, axes=axes, values=np.stack([smooth, smooth, smooth]))
    for mm in (0.0061, 0.017, 0.05):
        assert pure.interpolate(1.3, 0.9, mm) == pytest.approx(50.0 * np.sqrt(1.3) * (mm / 0.02) ** -0.05, rel=1e-9)
    # and never above the 100 K cap, applied after the interpolation
    big = surrogate.Surrogate(base=None, axes=axes, values=np.stack([3 * smooth] * 3))
    assert big.interpolate(2.0, 1.0, 0.005) == surrogate.CAP_K
