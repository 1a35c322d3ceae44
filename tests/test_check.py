"""Pre-summer check verdicts: hand-worked cases (formulas: trackplan.check docstring;
sigma = E alpha dT and the break gap P^2/(E A r), Esveld 2001, Modern Railway Track ch. 7)."""

from __future__ import annotations

import pytest

from trackplan import check

E, A, ALPHA = 210e9, 76.70e-4, 1.15e-5


def _chk(**kw):
    args = dict(latest_neutral_C=27.0, drift_allowance_K=5.0, design_max_C=52.0, design_min_C=-10.0,
                allowable_rise_K=30.0, E_Pa=E, area_m2=A, alpha_per_K=ALPHA, resistance_N_per_m=10e3,
                gap_limit_m=0.05, tension_stress_limit_Pa=160e6, target_C=35.0, destress_before="June",
                neutral_basis="destressed")
    args.update(kw)
    return check.check_section(**args)


def test_hand_worked_watch():
    r = _chk()
    assert r.current_neutral_temperature_C == pytest.approx(22.0)  # 27 - 5
    assert r.heat_rise_K == pytest.approx(30.0)  # 52 - 22
    assert r.heat_margin_K == pytest.approx(0.0)
    # 210e9 * 76.7e-4 * 1.15e-5 * 30 = 555.7 kN
    assert r.max_compression_force_per_rail_N == pytest.approx(555.71e3, rel=1e-4)
    # cold at the recorded 27 degC: -37 K -> -89.355 MPa, -685.4 kN, gap 29.2 mm
    assert r.max_tension_stress_Pa == pytest.approx(-89.355e6, rel=1e-4)
    assert r.max_tension_force_per_rail_N == pytest.approx(-685.35e3, rel=1e-4)
    assert r.pull_apart_gap_m == pytest.approx(0.029162, rel=1e-3)
    assert r.verdict == "watch"  # rise 30 K >= 0.8 * 30 K


def test_act_heat_with_destress_wording():
    r = _chk(latest_neutral_C=20.0)  # current 15, rise 37 > 30
    assert r.verdict == "act"
    assert r.heat_margin_K == pytest.approx(-7.0)
    assert r.reasons[0].startswith("destress to 35 °C before June")
    assert r.reasons_in("us")[0].startswith("destress to 95 °F before June")


def test_act_cold_gap():
    r = _chk(latest_neutral_C=45.0, design_max_C=40.0)  # cold rise -55 K: gap 64.4 mm > 50
    assert r.verdict == "act"
    assert any("pull-apart gap 64 mm exceeds 50 mm" in s for s in r.reasons)
    assert any("pull-apart gap 2.5 in exceeds 2.0 in" in s for s in r.reasons_in("us"))


def test_ok_and_unknown_basis_watch():
    r = _chk(design_max_C=40.0)  # rise 18 < 24, gap 29 mm < 40
    assert r.verdict == "ok"
    assert _chk(design_max_C=40.0, neutral_basis="unknown").verdict == "watch"


def test_ranking_worst_first():
    rs = [_chk(design_max_C=40.0), _chk(latest_neutral_C=20.0), _chk(), _chk(latest_neutral_C=15.0)]
    ordered = sorted(rs, key=check.rank_key)
    assert [r.verdict for r in ordered] == ["act", "act", "watch", "ok"]
    assert ordered[0].heat_margin_K < ordered[1].heat_margin_K
