"""Neutral temperature target: hand-worked examples and regional rules.

The constraint formulas are those of trackplan.target's docstring (heat: T_hot - (T_N - d) <= allowable,
Kish & Samavedam 2013, FRA/ORD-13/16; cold: sigma = E alpha dT and the break gap P^2/(E A r),
Esveld 2001, Modern Railway Track ch. 7). Every expected figure below is worked by hand from them.
"""

from __future__ import annotations

import math

import pytest

from trackplan import target

E, A, ALPHA = 210e9, 76.70e-4, 1.15e-5  # 60E1, European steel


def _rec(**kw):
    args = dict(design_max_C=52.0, design_min_C=-10.0, allowable_rise_K=30.0, drift_allowance_K=5.0,
                E_Pa=E, area_m2=A, alpha_per_K=ALPHA, resistance_N_per_m=10e3, gap_limit_m=0.05,
                tension_stress_limit_Pa=160e6, laying_tolerance_K=3.0)
    args.update(kw)
    return target.recommend_neutral(**args)


def test_hand_worked_window_and_target():
    r = _rec()
    # heat floor: 52 + 5 - 30 = 27 degC
    assert r.heat_floor_C == pytest.approx(27.0)
    # stress ceiling: -10 + 160e6 / (210e9 * 1.15e-5) = -10 + 66.25 = 56.25 degC
    assert r.stress_ceiling_C == pytest.approx(56.2526, abs=1e-3)
    # gap ceiling: -10 + sqrt(0.05 * 1e4 / (210e9 * 76.7e-4)) / 1.15e-5 = -10 + 48.448 = 38.448 degC
    assert r.gap_ceiling_C == pytest.approx(38.448, abs=1e-2)
    assert r.governing_cold == "pull-apart gap"
    assert r.feasible and r.feasible_window_C == pytest.approx((27.0, 38.448), abs=1e-2)
    # target: 27 + 2/3 * 11.448 = 34.632, inside [27 + 3, 38.448 - 3]
    assert r.target_neutral_temperature_C == pytest.approx(34.632, abs=1e-2)
    assert r.laying_range_C == pytest.approx((31.632, 37.632), abs=1e-2)
    assert not r.narrow


def test_target_clamped_so_laying_range_stays_inside():
    r = _rec(laying_tolerance_K=5.0)  # 27 + 7.632 = 34.63 > 38.448 - 5 = 33.448 -> clamped
    assert r.target_neutral_temperature_C == pytest.approx(33.448, abs=1e-2)
    assert r.laying_range_C[1] == pytest.approx(r.cold_ceiling_C)


def test_narrow_window_uses_middle():
    r = _rec(allowable_rise_K=20.0)  # floor 37, ceiling 38.448: 1.45 K wide < 6 K
    assert r.feasible and r.narrow
    assert r.target_neutral_temperature_C == pytest.approx((37.0 + 38.448) / 2, abs=1e-2)
    assert r.laying_range_C == pytest.approx((37.0, 38.448), abs=1e-2)


def test_empty_window_said_with_openers():
    r = _rec(allowable_rise_K=15.0)  # floor 42 > ceiling 38.448
    assert not r.feasible and r.feasible_window_C is None
    # heat first (default): target at the heat floor plus the laying tolerance, the range starting at the floor
    assert r.priority == "heat"
    assert r.target_neutral_temperature_C == pytest.approx(42.0 + 3.0)
    assert r.laying_range_C == pytest.approx((42.0, 48.0))
    assert "cold side" in str(r.risk)
    assert r.shortfall_K == pytest.approx(42.0 - 38.448, abs=1e-2)
    assert any("allowable rise" in str(o) for o in r.openers)
    # resistance needed so the gap at the heat floor is 50 mm: E A (alpha * 52)^2 / 0.05
    need = E * A * (ALPHA * 52.0) ** 2 / 0.05 / 1e3
    assert any(f"{need:.1f} kN/m" in str(o) for o in r.openers)
    # the same words in US units: 3.55 K short = 6.4 delta-degF
    assert any("6.4 Δ°F more allowable rise" in o.text("us") for o in r.openers)


def test_cold_priority_targets_the_cold_ceiling():
    r = _rec(allowable_rise_K=15.0, priority="cold")
    assert r.target_neutral_temperature_C == pytest.approx(r.cold_ceiling_C - 3.0)
    assert r.laying_range_C[1] == pytest.approx(r.cold_ceiling_C)
    assert "hot-weather speed restrictions" in str(r.risk)
    with pytest.raises(Exception, match="heat, cold"):
        _rec(priority="middle")


def test_more_allowable_lowers_floor_only():
    a, b = _rec(allowable_rise_K=28.0), _rec(allowable_rise_K=32.0)
    assert b.heat_floor_C == pytest.approx(a.heat_floor_C - 4.0)
    assert b.cold_ceiling_C == a.cold_ceiling_C


def test_regional_rules():
    rules = {r.name: r for r in target.regional_practice(60.0, -20.0, 58.0, -18.0)}
    assert rules["UK"].neutral_C == (27.0, 27.0)  # Network Rail track standards
    assert rules["Australia"].neutral_C == (38.0, 38.0)  # an Australian code of practice, open track
    na = rules["North America"].neutral_C  # 90-110 degF (North American practice)
    assert na == pytest.approx((32.222, 43.333), abs=1e-3)
    # Indian practice: t_m = (60 + -20) / 2 = 20 degC; destress between t_m and t_m + 5 K
    assert rules["India"].neutral_C == pytest.approx((20.0, 25.0))
    # US transit: (2 * 58 + -18) / 3 = 32.667 degC, before the procedure's own offset
    assert rules["US transit"].neutral_C[0] == pytest.approx(32.667, abs=1e-3)
    tunnel = {r.name: r for r in target.regional_practice(None, None, 30.0, 0.0, tunnel=True)}
    assert tunnel["Australia"].neutral_C == (23.0, 23.0) and "India" not in tunnel
