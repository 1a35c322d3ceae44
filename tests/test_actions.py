"""Actions for watch and act sections (trackplan.actions): computed from the check's figures."""

from __future__ import annotations

import math
from types import SimpleNamespace as NS

import pytest

from trackplan import check, thermal
from trackplan.actions import section_action

E, A, ALPHA, R = 210e9, 76.70e-4, 1.15e-5, 6e3


def assessment(neutral_C=30.0, design_max_C=70.0, design_min_C=-30.0, allowable_K=35.0, gap_limit_m=0.05,
               target_C=40.0, ballast="consolidated", basis="destressed"):
    c = check.check_section(latest_neutral_C=neutral_C, drift_allowance_K=5.0, design_max_C=design_max_C,
                            design_min_C=design_min_C, allowable_rise_K=allowable_K, E_Pa=E, area_m2=A,
                            alpha_per_K=ALPHA, resistance_N_per_m=R, gap_limit_m=gap_limit_m,
                            tension_stress_limit_Pa=160e6, target_C=target_C, destress_before="June",
                            neutral_basis=basis)
    sec = NS(ballast=ballast, shoulder="full", neutral_basis=basis)
    tgt = NS(target_neutral_temperature_C=target_C, laying_range_C=(target_C - 3, target_C + 3))
    return NS(check=c, section=sec, target=tgt, climate=NS(hot_month="June"), longitudinal_resistance_N_per_m=R)


def test_heat_act_destress_to_the_target_before_the_hot_month():
    a = assessment()
    assert a.check.verdict == "act"
    text = str(section_action(a))
    assert "destress to a neutral temperature of 40 °C (laying range 37 °C to 43 °C) before June" in text
    # hot-weather patrol from the rail temperature at which the rise reaches the allowable: 25 + 35 = 60 degC
    assert "rail is above 60 °C" in text
    # the figure follows the target it was given, not a fixed text
    assert "of 44 °C" in str(section_action(assessment(target_C=44.0)))
    assert "°F" in section_action(a).text("us")


def test_cold_patrol_temperature_is_where_the_gap_reaches_its_limit():
    a = assessment(design_max_C=40.0)  # heat ok; cold: gap beyond 50 mm
    c = a.check
    assert c.pull_apart_gap_m > 0.05
    # P linear in T, gap = P^2/(E A r): the limit is reached at T_N + (T_min - T_N) sqrt(g_lim/gap)
    t_lim = c.cold_neutral_temperature_C + (c.design_min_rail_temperature_C - c.cold_neutral_temperature_C) * \
        math.sqrt(0.05 / c.pull_apart_gap_m)
    P = thermal.thermal_force(t_lim - c.cold_neutral_temperature_C, E, A, ALPHA)
    assert float(thermal.pull_apart_gap(P, E, A, R)) == pytest.approx(0.05, rel=1e-9)
    text = str(section_action(a))
    assert f"rail is below {t_lim:.0f} °C" in text
    assert f"at least {R * c.pull_apart_gap_m / 0.05 / 1e3:.1f} kN/m" in text


def test_ballast_unknown_neutral_and_ok():
    assert section_action(assessment(design_max_C=30.0, design_min_C=0.0)) is None  # ok: nothing to do
    w = str(section_action(assessment(design_max_C=55.0, design_min_C=0.0, ballast="disturbed", basis="estimated")))
    assert "restore and consolidate the ballast" in w and "measure the neutral temperature before June" in w


def test_empty_window_cold_first_does_not_claim_to_cure_the_heat_side():
    a = assessment()
    a.target = NS(target_neutral_temperature_C=20.0, laying_range_C=(17.0, 23.0), feasible=False, heat_floor_C=38.0)
    text = str(section_action(a))
    assert "destress to" not in text and "heat speed restriction" in text
    a.target = NS(target_neutral_temperature_C=40.0, laying_range_C=(37.0, 43.0), feasible=False, heat_floor_C=38.0)
    text = str(section_action(a))
    assert "destress to a neutral temperature of 40 °C" in text and "window is empty" in text
