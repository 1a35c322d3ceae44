"""Thermal force physics: trade rules of thumb and properties."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, strategies as st

from trackplan import rails, thermal
from trackplan.errors import InputError

EU = thermal.STEEL_PRESETS["european"]
NA = thermal.STEEL_PRESETS["north-american"]


def test_stress_per_kelvin_rule_of_thumb():
    # About 2.4 MPa per K of stress (common practice, docs/methods/thermal-force.md).
    assert thermal.thermal_stress(1.0, EU.E_Pa, EU.alpha_per_K) / 1e6 == pytest.approx(2.4, rel=0.03)
    assert thermal.thermal_stress(1.0, NA.E_Pa, NA.alpha_per_K) / 1e6 == pytest.approx(2.4, rel=0.03)


def test_stress_per_degF_rule_of_thumb():
    # 195 psi per degF: E = 30e6 psi times alpha = 6.5e-6 /degF (common practice).
    psi = thermal.thermal_stress(5 / 9, NA.E_Pa, NA.alpha_per_K) / (4.4482216152605 / 0.0254**2)
    assert psi == pytest.approx(195.0, rel=1e-9)


def test_force_per_kelvin_60kg_rail():
    # About 18-19 kN per K per rail for a 60 kg/m rail (common practice).
    p = rails.get_profile("60E1")
    f = thermal.thermal_force(1.0, EU.E_Pa, p.area_m2, EU.alpha_per_K) / 1e3
    assert 18.0 <= f <= 19.0


def test_force_per_degF_136RE():
    # About 2.6 kips per degF per rail for a 136 lb/yd rail (common practice).
    p = rails.get_profile("136RE")
    kip = thermal.thermal_force(5 / 9, NA.E_Pa, p.area_m2, NA.alpha_per_K) / (1e3 * 4.4482216152605)
    assert kip == pytest.approx(2.6, rel=0.02)


@given(st.floats(-80, 80), st.floats(-80, 80))
def test_force_linear_in_rise_and_sign(a, b):
    p = rails.get_profile("54E1")
    f = lambda r: float(thermal.thermal_force(r, EU.E_Pa, p.area_m2, EU.alpha_per_K))
    assert f(a + b) == pytest.approx(f(a) + f(b), abs=1e-6)
    assert np.sign(f(a)) == np.sign(a)


def test_string_end_relations():
    # u_end = alpha dT l_b / 2 and gap = 2 u_end (Esveld, Modern Railway Track, ch. 7).
    p = rails.get_profile("60E1")
    rise = -47.0
    P = thermal.thermal_force(rise, EU.E_Pa, p.area_m2, EU.alpha_per_K)
    r = 8e3
    lb = thermal.breathing_length(P, r)
    u = thermal.end_movement(P, EU.E_Pa, p.area_m2, r)
    assert u == pytest.approx(EU.alpha_per_K * abs(rise) * lb / 2)
    assert thermal.pull_apart_gap(P, EU.E_Pa, p.area_m2, r) == pytest.approx(2 * u)
    assert thermal.pull_apart_gap(-P, EU.E_Pa, p.area_m2, r) == 0.0
    assert thermal.free_expansion(100.0, 1.0, EU.alpha_per_K) * 1e3 == pytest.approx(1.15)


def test_resistance_must_be_positive():
    with pytest.raises(InputError):
        thermal.breathing_length(1e5, 0.0)
    with pytest.raises(InputError):
        thermal.end_movement(1e5, 210e9, 7e-3, -1.0)


def test_inverse_gap_formula_hand_worked_and_round_trip():
    # g = E A (alpha dT)**2 / r (Esveld 2001, Modern Railway Track ch. 7) solved for dT, by hand:
    # sqrt(0.05 * 10e3 / (210e9 * 76.70e-4)) / 1.15e-5 = 48.448 K
    E, A, alpha, r = 210e9, 76.70e-4, 1.15e-5, 10e3
    drop = thermal.gap_drop_K(0.05, E, A, alpha, r)
    assert drop == pytest.approx(48.448, abs=1e-3)
    force = thermal.thermal_force(-drop, E, A, alpha)
    assert thermal.pull_apart_gap(force, E, A, r) == pytest.approx(0.05, rel=1e-12)
    assert thermal.gap_force_N(0.05, E, A, r) == pytest.approx(-force, rel=1e-12)
    assert thermal.gap_resistance_N_per_m(0.05, drop, E, A, alpha) == pytest.approx(r, rel=1e-12)


def test_cold_side_group_by_keyword_only():
    cold = thermal.ColdSide(E_Pa=210e9, area_m2=76.70e-4, alpha_per_K=1.15e-5, resistance_N_per_m=10e3,
                            gap_limit_m=0.05, tension_stress_limit_Pa=160e6)
    # stress limit: 160e6 / (210e9 * 1.15e-5) = 66.253 K; gap limit 48.448 K governs
    assert cold.stress_drop_K() == pytest.approx(66.253, abs=1e-3)
    assert cold.limit_drop_K() == pytest.approx(48.448, abs=1e-3)
    assert cold.gap_m(cold.gap_drop_K()) == pytest.approx(0.05, rel=1e-12)
    assert cold.tension_stress_Pa(cold.stress_drop_K()) == pytest.approx(160e6, rel=1e-12)
    with pytest.raises(TypeError):
        thermal.ColdSide(210e9, 76.70e-4, 1.15e-5, 10e3, 0.05, 160e6)


def test_physics_entry_points_take_their_figures_by_name():
    from trackplan import check, target

    with pytest.raises(TypeError):
        target.recommend_neutral(52.0, -10.0, 30.0, 5.0, 210e9, 76.70e-4, 1.15e-5, 10e3, 0.05, 160e6)
    with pytest.raises(TypeError):
        check.check_section(27.0, 5.0, 52.0, -10.0, 30.0, 210e9, 76.70e-4, 1.15e-5, 10e3, 0.05, 160e6)
