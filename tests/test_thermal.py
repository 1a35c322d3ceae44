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
