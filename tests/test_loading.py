"""Vehicle loading of the stability analysis: beam on an elastic foundation, resistance along the track."""

from __future__ import annotations

import math

import numpy as np
import pytest

from trackplan import loading, rails, stability as st, thermal
from trackplan.errors import InputError
from trackplan.track import build_track

P60 = rails.get_profile("60E1")
STEEL = thermal.default_steel(False)


def test_rail_seat_load_is_hetenyi_and_carries_the_axle():
    # Hetenyi (1946), Beams on Elastic Foundation: under a point load Q on an infinite beam the
    # foundation reaction is (Q beta / 2) exp(-z)(cos z + sin z), z = beta |x|, beta = (u / 4EI)^0.25;
    # it integrates to Q, is Q beta / 2 under the load and first vanishes at z = 3 pi / 4.
    u, EI, P = 30e6, 6.4e6, 200e3
    b = (u / (4 * EI)) ** 0.25
    x = np.linspace(-60, 60, 240001)
    q = loading.vertical_load(x, [0.0], P, u, EI)
    assert np.trapezoid(q, x) == pytest.approx(P, rel=1e-6)
    assert q[len(x) // 2] == pytest.approx(P * b / 2, rel=1e-9)
    z0 = 3 * math.pi / 4 / b
    assert loading.vertical_load([z0], [0.0], P, u, EI)[0] == pytest.approx(0.0, abs=1e-6 * P)
    # the uplift wave: negative between 3 pi/4 and 7 pi/4, deepest at z = pi (exp(-pi) of the peak)
    assert loading.vertical_load([math.pi / b], [0.0], P, u, EI)[0] == pytest.approx(-P * b / 2 * math.exp(-math.pi))


def test_resistance_change_branches():
    F0, W = 20e3, 6e3
    # pressed down: friction adds mu q; lifted: the base share goes with the lift, all of it at lift-off
    assert loading.resistance_change(10e3, F0, W, 0.4, 0.5) == pytest.approx(5e3)
    assert loading.resistance_change(-3e3, F0, W, 0.4, 0.5) == pytest.approx(-0.4 * F0 * 0.5)
    assert loading.resistance_change(-30e3, F0, W, 0.4, 0.5) == pytest.approx(-0.4 * F0)
    assert loading.resistance_change(0.0, F0, W, 0.4, 0.5) == 0.0


def test_train_is_symmetric_about_the_misalignment():
    t = loading.get_train("freight-22.5t")
    for pos in loading.POSITIONS:
        ax = np.array(loading.axle_positions(t, pos))
        assert np.allclose(np.sort(-ax), ax)
    # coupling: the two inner axles of coupled wagons straddle the centre
    ax = np.array(loading.axle_positions(t, "coupling"))
    inner = ax[ax > 0].min()
    assert inner == pytest.approx((t.vehicle_length_m - t.bogie_centres_m - t.axle_spacing_m) / 2)


def test_worst_position_gives_the_lower_allowable():
    # the cheap choice of the train position (least resistance over the misalignment) must pick the
    # position whose full analysis gives the lower allowable rise, for the presets
    from dataclasses import replace

    for sleeper in ("concrete", "timber"):
        inp = build_track(P60, STEEL, sleeper=sleeper, ballast="consolidated")
        chosen = st.analyse_stability(inp).allowable_rise_K
        others = []
        for pos in loading.POSITIONS:
            axles = loading.axle_positions(loading.get_train("freight-22.5t"), pos)
            case = replace(inp.loading, position=pos, axle_positions_m=axles)
            others.append(st.analyse_stability(replace(inp, loading=case)).allowable_rise_K)
        assert chosen <= min(others) + 0.5  # K


def test_every_preset_row_has_a_source_and_a_flag():
    for t in loading.train_presets().values():
        assert t.source and 0 < t.axle_load_N <= 50e3 * 9.80665
        loading.check_train(t)
    for s in loading.support_presets().values():
        assert s.source and 0 < s.base_share < 1 and 0 < s.friction_coefficient < 1
        loading.check_support_modulus(s.support_modulus_N_per_m2)
    assert set(loading.loading_names()) >= {"freight-22.5t", "none"}


def test_bad_loading_inputs():
    with pytest.raises(InputError, match="accepted: freight-22.5t"):
        build_track(P60, STEEL, sleeper="concrete", ballast="consolidated", loading="tram")
    with pytest.raises(InputError, match="50 t"):
        build_track(P60, STEEL, sleeper="concrete", ballast="consolidated", overrides={"axle_load": 0.0})
    with pytest.raises(InputError, match="support modulus"):
        build_track(P60, STEEL, sleeper="concrete", ballast="consolidated", overrides={"support_modulus": 1e6})


def test_section_file_loading_and_limit_displacement(tmp_path):
    from pathlib import Path

    from trackplan.assess import Assessor
    from trackplan.sections import load_sections

    climate = Path(__file__).resolve().parents[1] / "climate_samples" / "gullhaven_quay_hourly.csv.gz"
    f = tmp_path / "s.toml"
    f.write_text(f'''
[defaults]
climate = "{climate.as_posix()}"
rail = "60E1"
[sections.A]
neutral_temperature = "30 degC"
loading = "none"
  [sections.A.stability]
  limit_displacement = "60 mm"
[sections.B]
neutral_temperature = "30 degC"
loading = "tram"
''')
    sf = load_sections(f)
    assert [s.id for s in sf.sections] == ["A"]
    assert len(sf.problems) == 1 and "loading" in str(sf.problems[0]) and "sections.B" in str(sf.problems[0])
    inp = Assessor().track_input(sf.sections[0])
    assert inp.loading is None and inp.limit_displacement_m == pytest.approx(0.06)
