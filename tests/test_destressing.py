"""Destressing physics: extension, cut length, tensor force, marks, repair, heating, warnings.

No published worked example of a destressing calculation with its figures could be
found for these tests; the checks of whole plans are against the formulas (hand-worked)
and against the per-length figures of trade practice, not against a published example.
"""

from __future__ import annotations

import math

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from trackplan import destressing as d
from trackplan import rails, thermal
from trackplan.errors import InputError

EU = thermal.STEEL_PRESETS["european"]
NA = thermal.STEEL_PRESETS["north-american"]
A60 = rails.get_profile("60E1").area_m2
FT, IN = 0.3048, 0.0254


def plan(**kw):
    base = dict(length_m=400.0, rail_temperature_C=15.0, target_neutral_C=27.0, area_m2=A60,
                E_Pa=EU.E_Pa, alpha_per_K=EU.alpha_per_K)
    base.update(kw)
    return d.plan_destressing(**base)


# --------------------------------------------------------------------------
# Figures of trade practice
# --------------------------------------------------------------------------


def test_about_1_15_mm_per_100_m_per_K():
    # about 1.15 mm per 100 m per K (common practice; docs/methods/destressing.md)
    assert float(d.adjustment_length(100.0, 20.0, 21.0, EU.alpha_per_K)) * 1e3 == pytest.approx(1.15, abs=0.005)
    p = plan(length_m=100.0, rail_temperature_C=20.0, target_neutral_C=21.0)
    assert p.extension_m * 1e3 == pytest.approx(1.15, abs=0.005)


def test_about_0_078_in_per_100_ft_per_10_degF():
    # about 0.078 in per 100 ft per 10 degF (common practice; docs/methods/destressing.md)
    p = d.plan_destressing(length_m=100 * FT, rail_temperature_C=(60 - 32) / 1.8, target_neutral_C=(70 - 32) / 1.8,
                           area_m2=rails.get_profile("136RE").area_m2, E_Pa=NA.E_Pa, alpha_per_K=NA.alpha_per_K)
    assert p.extension_m / IN == pytest.approx(0.078, abs=0.0005)


def test_hand_worked_plan_against_the_formula_only():
    # Checked against the formula only (no published worked example found), by hand:
    # e = 1.15e-5 * 400 m * 12 K = 55.2 mm; cut = 55.2 + 25 = 80.2 mm;
    # P = 210e9 Pa * 76.70e-4 m**2 * 1.15e-5 /K * 12 K = 222 276.6 N.
    p = plan(weld=d.weld_presets()["aluminothermic"])
    assert p.extension_m == pytest.approx(0.0552, rel=1e-12)
    assert p.cut_length_m == pytest.approx(0.0802, rel=1e-12)
    assert p.tensor_force_per_rail_N == pytest.approx(222276.6, abs=0.1)
    assert p.n_welds == 1 and p.stretch_possible


def test_tensor_force_is_the_thermal_force_of_the_same_rise():
    for t_r, t_t in ((15.0, 27.0), (-5.0, 32.0), (26.5, 27.0)):
        p = plan(rail_temperature_C=t_r, target_neutral_C=t_t)
        assert p.tensor_force_per_rail_N == pytest.approx(
            float(thermal.thermal_force(t_t - t_r, EU.E_Pa, A60, EU.alpha_per_K)), rel=1e-12)
    # restrained: the pull depends on the rail temperature, not on the current neutral
    r = plan(mode="restrained", current_neutral_C=20.0)
    assert r.tensor_force_per_rail_N == pytest.approx(plan().tensor_force_per_rail_N, rel=1e-12)


# --------------------------------------------------------------------------
# Marks, pulling arrangements
# --------------------------------------------------------------------------


def test_marks_move_linearly_with_distance():
    p = plan(mark_spacing_m=50.0)
    xs = [x for x, _ in p.marks]
    assert xs == pytest.approx([0, 50, 100, 150, 200, 250, 300, 350, 400])
    assert p.marks[0][1] == 0.0  # the fixed end does not move
    slope = EU.alpha_per_K * 12.0
    for x, m in p.marks[1:]:
        assert m / x == pytest.approx(slope, rel=1e-12)
    assert p.marks[-1][1] == pytest.approx(p.extension_m, rel=1e-12)


def test_marks_end_at_the_pulled_end_when_spacing_does_not_divide():
    p = plan(length_m=430.0, mark_spacing_m=100.0)
    assert [x for x, _ in p.marks] == pytest.approx([0, 100, 200, 300, 400, 430])


def test_centre_pull_halves_sum_to_the_same_extension():
    end = plan(length_m=600.0, pull="end")
    ctr = plan(length_m=600.0, pull="centre", mark_spacing_m=50.0)
    assert ctr.pulled_lengths_m == [300.0, 300.0]
    assert ctr.extension_m == pytest.approx(end.extension_m, rel=1e-12)
    # each half's cut end moves half the extension; the cut gap closes by their sum
    assert ctr.marks[-1][0] == pytest.approx(300.0)
    assert 2 * ctr.marks[-1][1] == pytest.approx(ctr.extension_m, rel=1e-12)


# --------------------------------------------------------------------------
# The what-if of a pull that stopped short
# --------------------------------------------------------------------------


@settings(max_examples=200, deadline=None)
@given(
    length=st.floats(20.0, 2000.0),
    t_base=st.floats(-20.0, 40.0),
    t_t=st.floats(-10.0, 60.0),
    frac=st.floats(0.01, 1.0),
    alpha=st.floats(9e-6, 1.4e-5),
)
def test_achieved_neutral_inverts_the_movement_exactly(length, t_base, t_t, frac, alpha):
    x = frac * length
    u = float(d.mark_movements(x, t_base, t_t, alpha))
    got = float(d.achieved_neutral_temperature(u, x, t_base, alpha))
    assert got == pytest.approx(t_t, abs=1e-9)
    # and the whole extension at the pulled end
    e = float(d.adjustment_length(length, t_base, t_t, alpha))
    assert float(d.achieved_neutral_temperature(e, length, t_base, alpha)) == pytest.approx(t_t, abs=1e-9)


def test_what_if_in_the_plan():
    p = plan(observed_movement_m=0.0552, at_mark_m=400.0)
    assert p.achieved_neutral_C == pytest.approx(27.0, abs=1e-9)
    assert "achieved_differs_from_target" not in p.warning_codes
    short = plan(observed_movement_m=0.040, at_mark_m=400.0)
    # 15 degC + 0.040 m / (1.15e-5 /K * 400 m) = 23.696 degC (hand-worked)
    assert short.achieved_neutral_C == pytest.approx(15 + 0.040 / (1.15e-5 * 400), abs=1e-9)
    assert "achieved_differs_from_target" in short.warning_codes
    # restrained: counted from the current neutral
    r = plan(mode="restrained", current_neutral_C=20.0, observed_movement_m=0.0230, at_mark_m=400.0)
    assert r.achieved_neutral_C == pytest.approx(20 + 0.023 / (1.15e-5 * 400), abs=1e-9)


# --------------------------------------------------------------------------
# Weld allowances
# --------------------------------------------------------------------------


def test_weld_presets_have_sources_marked_from_memory():
    presets = d.weld_presets()
    assert set(presets) == {"aluminothermic", "aluminothermic-wide", "flash-butt"}
    for w in presets.values():
        assert "(from memory)" in w.source
    assert presets["aluminothermic"].allowance_m == pytest.approx(0.025)
    assert presets["flash-butt"].allowance_m < 0  # rail consumed: less to cut out


def test_cut_length_is_extension_plus_allowance():
    for name, w in d.weld_presets().items():
        p = plan(weld=w)
        assert p.cut_length_m == pytest.approx(p.extension_m + w.allowance_m, rel=1e-12), name
    fb = plan(weld=d.weld_allowance("flash-butt"))
    assert fb.cut_length_m == pytest.approx(0.0552 - 0.035, rel=1e-9)
    given_w = d.weld_allowance("30 mm")
    assert given_w.name == "given" and given_w.allowance_m == pytest.approx(0.030)
    assert d.weld_allowance("-1.2 in").allowance_m == pytest.approx(-1.2 * IN)


@pytest.mark.parametrize("bad", ["thermite", "30", "400 mm", "", "30 kN"])
def test_bad_weld(bad):
    with pytest.raises(InputError) as exc:
        d.weld_allowance(bad, "--weld")  # as the command line calls it
    assert exc.value.where == "--weld"  # given by the caller
    with pytest.raises(InputError) as exc:
        d.weld_allowance(bad)
    assert exc.value.where == "weld"  # the field, when no caller names an option


# --------------------------------------------------------------------------
# Restrained adjustment, repair, heating
# --------------------------------------------------------------------------


def test_restrained_adjustment_from_current_neutral():
    r = plan(mode="restrained", current_neutral_C=20.0, rail_temperature_C=10.0)
    assert r.extension_m == pytest.approx(1.15e-5 * 400 * (27 - 20), rel=1e-12)
    assert r.adjustment_K == pytest.approx(7.0) and r.rise_K == pytest.approx(17.0)
    # with the current neutral equal to the rail temperature it is the free-rail case
    same = plan(mode="restrained", current_neutral_C=15.0)
    assert same.extension_m == pytest.approx(plan().extension_m, rel=1e-12)
    # lowering the neutral: rail must be added
    lower = plan(mode="restrained", current_neutral_C=35.0, rail_temperature_C=10.0)
    assert lower.cut_length_m < 0 and "rail_to_add" in lower.warning_codes and lower.stretch_possible


def test_repair_restoring_the_original_neutral():
    # Removed 4.5 m from clipped rail with neutral 27 degC at rail 10 degC, 60 m between the fixed points.
    R, D, Tn, Tr = 4.5, 60.0, 27.0, 10.0
    a = d.weld_presets()["aluminothermic"]
    p = plan(mode="repair", length_m=D, rail_temperature_C=Tr, target_neutral_C=None, current_neutral_C=Tn,
             removed_length_m=R, weld=a)
    assert p.target_neutral_C == Tn and p.n_welds == 2 and p.pull == "end"
    G = R + 1.15e-5 * (D - R) * (Tn - Tr)
    assert p.opening_m == pytest.approx(G, rel=1e-12)
    # for the original neutral: C = R - alpha R (T_N0 - T_r) - 2 a (closure_length Notes)
    assert p.closure_length_m == pytest.approx(R - 1.15e-5 * R * (Tn - Tr) - 2 * 0.025, rel=1e-12)
    assert p.cut_length_m == pytest.approx(p.extension_m + 2 * 0.025, rel=1e-9)
    # bookkeeping: the free lengths at T_r of the freed sides, the closure and the weld metal
    # stretch to D at T_r exactly when the neutral temperature is the target (small-strain algebra).
    free_total = (D - R) * (1 - 1.15e-5 * (Tn - Tr)) + p.closure_length_m + 2 * 0.025
    neutral = Tr + (D - free_total) / (1.15e-5 * D)
    assert neutral == pytest.approx(Tn, abs=1e-9)


def test_repair_from_measured_opening_matches_removed_length():
    by_removed = plan(mode="repair", length_m=80.0, rail_temperature_C=5.0, target_neutral_C=30.0,
                      current_neutral_C=24.0, removed_length_m=3.0)
    by_opening = plan(mode="repair", length_m=80.0, rail_temperature_C=5.0, target_neutral_C=30.0,
                      opening_m=by_removed.opening_m)
    assert by_opening.closure_length_m == pytest.approx(by_removed.closure_length_m, rel=1e-12)
    # a new, higher neutral needs a shorter closure: alpha D (T_t - T_r) less than the gap less the welds
    assert by_removed.closure_length_m == pytest.approx(
        by_removed.opening_m - 1.15e-5 * 80.0 * 25.0 - 2 * 0.025, rel=1e-12)


def test_heating_mode():
    h = plan(mode="heating")
    assert h.heating_temperature_C == pytest.approx(27.0, abs=1e-9)
    assert h.tensor_force_per_rail_N == 0.0 and h.within_capacity is None
    assert h.extension_m == pytest.approx(0.0552, rel=1e-12)  # free expansion to allow
    assert d.heating_temperature(15.0, 0.0552, 400.0, 1.15e-5) == pytest.approx(27.0, abs=1e-9)


# --------------------------------------------------------------------------
# Warnings
# --------------------------------------------------------------------------


def test_rail_hotter_than_target():
    p = plan(rail_temperature_C=35.0)
    assert not p.stretch_possible and p.tensor_force_per_rail_N < 0
    assert p.warning_codes.count("rail_hotter_than_target") == 1
    text = p.warnings[p.warning_codes.index("rail_hotter_than_target")]
    # figures: 8 K, the temperature to wait for, the rail to add alpha L dT = 36.8 mm
    assert "8.0 K" in text and "27.0 °C" in text and "37 mm" in text
    assert "rail_to_add" not in p.warning_codes
    us = plan(rail_temperature_C=35.0, system="us")
    assert "80.6 °F" in us.warnings[0]
    assert plan(mode="heating", rail_temperature_C=35.0).stretch_possible is False


def test_force_beyond_capacity():
    p = plan(tensor_capacity_N=150e3)
    assert p.within_capacity is False and "force_beyond_capacity" in p.warning_codes
    # reach with 150 kN: 15 + 150e3 / (E A alpha) degC
    reach = 15 + 150e3 / (EU.E_Pa * A60 * EU.alpha_per_K)
    assert f"{reach:.1f} °C" in p.warnings[p.warning_codes.index("force_beyond_capacity")]
    assert plan(tensor_capacity_N=600e3).within_capacity is True
    assert plan(tensor_capacity_N=600e3).warning_codes == []


def test_string_too_long_for_one_pull():
    assert "string_too_long" in plan(length_m=800.0).warning_codes
    assert "string_too_long" not in plan(length_m=800.0, pull="centre").warning_codes
    assert "string_too_long" in plan(length_m=1000.0, pull="centre").warning_codes
    assert "string_too_long" not in plan(length_m=800.0, max_pull_length_m=1000.0).warning_codes


def test_flash_butt_consuming_more_than_the_extension():
    p = plan(length_m=50.0, weld=d.weld_allowance("flash-butt"))
    assert p.cut_length_m < 0 and "rail_to_add" in p.warning_codes


# --------------------------------------------------------------------------
# Bad input
# --------------------------------------------------------------------------


@pytest.mark.parametrize(
    "kw, where, words",
    [
        (dict(length_m=0.0), "length", "positive"),
        (dict(length_m=-400.0), "length", "positive"),
        (dict(target_neutral_C=61.0), "target", "unit slip"),
        (dict(target_neutral_C=-10.5), "target", "-10..60"),
        (dict(mark_spacing_m=500.0), "marks", "longer than the pulled length"),
        (dict(mark_spacing_m=250.0, pull="centre"), "marks", "half the string"),
        (dict(mode="restrained"), "current_neutral", "current neutral"),
        (dict(mode="repair", current_neutral_C=27.0), "removed/opening", "removed length"),
        (dict(mode="repair", current_neutral_C=27.0, removed_length_m=0.03), "removed/opening", "closure"),
        (dict(mode="sideways"), "mode", "accepted"),
        (dict(pull="middle"), "pull", "accepted"),
        (dict(at_mark_m=500.0, observed_movement_m=0.01), "at_mark", "pulled length"),
        (dict(observed_movement_m=0.01), "observed_movement/at_mark", "both"),
        (dict(tensor_capacity_N=0.0), "tensor_capacity", "positive"),
        (dict(rail_temperature_C=95.0), "rail_temp", "degF"),
        (dict(target_neutral_C=None), "target", "required"),
    ],
)
def test_bad_input(kw, where, words):
    with pytest.raises(InputError) as exc:
        plan(**kw)
    # computation modules name fields, never command-line options
    assert exc.value.field == where and exc.value.where == where
    assert words in str(exc.value)


def test_target_range_message_says_why():
    with pytest.raises(InputError) as exc:
        plan(target_neutral_C=80.0)
    msg = str(exc.value)
    assert "-10..60 degC" in msg and "CWR is not set" in msg
    assert math.isclose(d.TARGET_RANGE_C[0], -10.0) and math.isclose(d.TARGET_RANGE_C[1], 60.0)


def test_repair_geometry_is_one_geometry():
    # Centre pull across a 4.5 m removal, 200 m between the fixed points (hand-worked, formulas only).
    D, R, Tn, Tr, a = 200.0, 4.5, 27.0, 6.0, 0.025
    alpha = EU.alpha_per_K
    p = plan(mode="repair", pull="centre", length_m=D, rail_temperature_C=Tr, target_neutral_C=None,
             current_neutral_C=Tn, removed_length_m=R, mark_spacing_m=25.0)
    rise = Tn - Tr
    # the freed rail is what is left between the fixed points once the opening is there
    assert p.freed_length_m == pytest.approx(D - p.opening_m, rel=1e-12)
    # the gap the tensor closes is the opening less the closure and weld metal ...
    closing = p.opening_m - p.closure_length_m - 2 * a
    assert p.extension_m == pytest.approx(closing, rel=1e-9)
    # ... which is the stretch of everything between the fixed points: alpha D (T_t - T_r)
    assert p.extension_m == pytest.approx(alpha * D * rise, rel=1e-9)
    # the closure rail is stretched with the freed rail: leaving it out would make the
    # closure alpha R (T_t - T_r) longer (about 1.1 mm here) and the neutral too low
    assert alpha * R * rise * 1e3 == pytest.approx(1.09, abs=0.01)
    # marks lie on the freed rail only, the last at its end (each half)
    assert p.marks[-1][0] == pytest.approx(p.freed_length_m / 2, rel=1e-12)
    assert all(x <= p.freed_length_m / 2 + 1e-9 for x, _ in p.marks)
    # the freed halves, the closure and the welds close the gap together (first order in alpha dT)
    freed_move = 2 * p.marks[-1][1]
    closure_move = alpha * (p.closure_length_m + 2 * a) * rise
    assert freed_move + closure_move == pytest.approx(p.extension_m, rel=1e-3)


def test_blocking_warnings_make_the_verdict():
    assert plan().can_be_done_now and plan().blocking == []
    over = plan(tensor_capacity_N=200e3)
    assert over.stretch_possible and not over.can_be_done_now
    assert [c for c, _ in over.blocking] == ["force_beyond_capacity"]
    mile = plan(length_m=1609.0)
    assert not mile.can_be_done_now and [c for c, _ in mile.blocking] == ["string_too_long"]
    hot = plan(rail_temperature_C=35.0)
    assert not hot.can_be_done_now and "rail_hotter_than_target" in [c for c, _ in hot.blocking]
    # a what-if reading alone does not stop the work
    whatif = plan(observed_movement_m=0.030, at_mark_m=400.0)
    assert "achieved_differs_from_target" in whatif.warning_codes and whatif.can_be_done_now
    j = over.as_json()
    assert j["can_be_done_now"] is False and j["blocking"][0]["code"] == "force_beyond_capacity"
    assert j["blocking"][0]["where"] == "tensor_capacity"  # a field: the command line names its option
    assert "200 kN" in j["blocking"][0]["message"]
