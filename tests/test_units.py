"""Units: the fast unit table against pint (the reference library), parsing rules."""

from __future__ import annotations

import math

import pint
import pytest
from hypothesis import given, strategies as st

from trackplan import units
from trackplan.errors import InputError

UREG = pint.UnitRegistry()

# pint spelling of each fast-table unit, where it differs from ours
_PINT_NAME = {"°C": "degC", "°F": "degF", "°": "degree", "mi": "mile", "tonf": "ton_force", "1/delta_degC": "1/delta_degC"}


@pytest.mark.parametrize(
    "kind,unit",
    [(k, u) for k, table in units._UNITS.items() for u in table],
)
def test_fast_table_matches_pint(kind, unit):
    # Reference: pint's own definitions (pint.UnitRegistry default registry).
    target = units._PINT_CHECK_UNIT[kind]
    for value in (0.0, 1.0, 37.5, -12.25):
        ours = units.to_si(value, unit, kind)
        q = UREG.Quantity(value, _PINT_NAME.get(unit, unit)).to(target).magnitude
        if kind == "temperature":
            q -= 273.15
        assert ours == pytest.approx(q, rel=1e-12, abs=1e-9), (kind, unit, value)


def test_pint_fallback_for_compound_units():
    # Not in the fast table: goes to pint.
    assert units.parse("2 kip/ft", "force_per_length") == pytest.approx(
        UREG.Quantity(2, "kip/ft").to("N/m").magnitude
    )
    assert units.parse("3 kgf", "force") == pytest.approx(3 * 9.80665)


def test_known_conversions_by_definition():
    # Exact definitions: 1 in = 25.4 mm, 1 lbf = 4.4482216152605 N, degF scale.
    assert units.parse("95 degF", "temperature") == pytest.approx(35.0)
    assert units.parse("32 degF", "temperature") == pytest.approx(0.0)
    assert units.parse("18 delta_degF", "temperature_difference") == pytest.approx(10.0)
    assert units.parse("1600 ft", "length") == pytest.approx(487.68)
    assert units.parse("1 ksi", "stress") == pytest.approx(6.894757e6, rel=1e-6)


def test_absolute_and_difference_are_kept_apart():
    with pytest.raises(InputError, match="difference"):
        units.parse("10 degC", "temperature_difference", "--rise")
    with pytest.raises(InputError, match="absolute"):
        units.parse("10 delta_degC", "temperature", "--neutral")


def test_bare_number_needs_default_unit():
    with pytest.raises(InputError, match="no unit"):
        units.parse("27", "temperature", "neutral")
    assert units.parse("27", "temperature", "x", default_unit="degF") == pytest.approx((27 - 32) * 5 / 9)


@pytest.mark.parametrize("text", ["abc", "27 furlongs", "", "12 m m m"])
def test_unreadable_text_is_input_error(text):
    with pytest.raises(InputError):
        units.parse(text, "temperature", "--neutral")


def test_wrong_dimension_names_kind():
    with pytest.raises(InputError, match="not a temperature"):
        units.parse("27 m", "temperature", "--neutral")


@given(st.floats(min_value=-80, max_value=120, allow_nan=False))
def test_si_us_round_trip_temperature(t):
    shown, unit = units.convert_for_display(t, "temperature", "us")
    assert unit == "degF"
    assert units.to_si(shown, unit, "temperature") == pytest.approx(t, abs=1e-9)


@given(st.floats(min_value=-1e7, max_value=1e7, allow_nan=False), st.sampled_from(
    ["length", "short_length", "force", "stress", "force_per_length", "temperature_difference"]))
def test_si_us_round_trip_other(v, kind):
    shown, unit = units.convert_for_display(v, kind, "us")
    base = units._DISPLAY_BASE.get(kind, kind)
    assert units.to_si(shown, unit, base) == pytest.approx(v, rel=1e-12, abs=1e-9)


def test_fmt():
    assert units.fmt(27.0, "temperature", "us") == "80.6 °F"
    assert units.fmt(0.0585, "short_length", "si") == "58.5 mm"
    assert units.fmt(None, "force") == "–"


def test_short_length_bare_numbers():
    # a movement or a misalignment typed as a bare number is in mm (si) or in (us), not m or ft
    assert units.parse("40", "short_length", "--observed-movement", default_unit=units.default_unit("short_length", "si")) == pytest.approx(0.040)
    assert units.parse("2", "short_length", "x", default_unit=units.default_unit("short_length", "us")) == pytest.approx(0.0508)
    assert units.parse("3 ft", "short_length", "x") == pytest.approx(0.9144)


def test_figures_inside_words_follow_the_unit_system():
    from trackplan.units import text_in

    t = "rail 41.0 degC above the level 40.2 degC; rise +1.5 K; gap 25 mm at 8 kN/m over 400 m; 3 m/s; 60E1"
    us = text_in(t, "us")
    # 41.0 degC = 105.8 degF; 1.5 K = 2.7 delta_degF; 25 mm = 0.98 in; 400 m = 1312 ft (exact definitions)
    assert "105.8 °F" in us and "+2.7 Δ°F" in us and "1.0 in" in us and "1312 ft" in us
    assert "3 m/s" in us and "60E1" in us and "degC" not in us and " mm" not in us
    assert text_in(t, "si") == t.replace("degC", "°C")


def test_ranges_inside_words_convert_both_ends():
    from trackplan.units import text_in

    # -20.1 degC = -4.2 degF, -2.1 degC = 28.2 degF (exact definitions)
    us = text_in("the interval of the fitted level (-20.1 to -2.1 degC)", "us")
    assert "(-4.2 to 28.2 °F)" in us


def test_csv_precision_by_quantity_and_settings_lines():
    import pandas as pd

    from trackplan.reports import csv_text

    df = pd.DataFrame({"alpha_per_K": [1.15e-5], "rise_K": [33.123456789], "gap_mm": [14.04754],
                       "force_per_rail_kN": [611.23456], "ratio": [0.1234567891234], "n": [3]})
    text = csv_text(df, [("command", "trackplan check"), ("months", "5-9"), ("empty", "")])
    lines = text.splitlines()
    assert lines[:2] == ["# command: trackplan check", "# months: 5-9"]  # an empty setting is left out
    assert lines[3] == "1.15e-05,33.12,14.0,611.23,0.123457,3"  # a coefficient keeps its significant digits
