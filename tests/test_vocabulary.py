"""One vocabulary (docs/glossary.md): the JSON of the commands about one rail or one track.

The commands over a section file, a record or a register are walked in their own test modules,
on the runs those tests already make (``vocabulary`` fixture in conftest.py): ``check`` and
``target`` (test_cli_network), ``screen`` (test_cli_screen), ``railtemp`` (test_cli_railtemp),
``register`` (test_cli_register), ``outlook`` (test_outlook), ``risk`` (test_cli_risk).
"""

from __future__ import annotations

import pytest

from conftest import keys_outside_glossary

DESTRESS = ("destress", "--rail", "60E1", "--length", "400 m", "--rail-temp", "15 degC", "--target", "27 degC")


@pytest.mark.parametrize("args", [
    ("force", "--rail", "60E1", "--neutral", "27 degC", "--at", "60 degC", "--at", "-20 degC", "--resistance", "8 kN/m"),
    ("profiles",),
    ("stability", "--rail", "60E1", "--radius", "600 m"),
    DESTRESS + ("--marks", "50 m", "--tensor-capacity", "200 kN", "--observed-movement", "30 mm", "--at-mark", "400 m"),
    DESTRESS + ("--mode", "restrained", "--current-neutral", "20 degC"),
    DESTRESS + ("--mode", "repair", "--removed", "100 mm", "--current-neutral", "20 degC"),
    DESTRESS + ("--mode", "heating"),
], ids=["force", "profiles", "stability", "destress-free", "destress-restrained", "destress-repair",
        "destress-heating"])
def test_every_json_key_is_a_glossary_name(run_cli, args, vocabulary):
    res, d = run_cli(*args, "--json", json_out=True)
    vocabulary.assert_glossary_keys(d)


def test_the_walk_finds_a_key_the_glossary_does_not_name():
    """The check can fail: an invented key, at any depth, is found."""
    assert keys_outside_glossary({"id": "A", "sections": [{"heat_rise_K": 1, "hotness_K": 2}]}) == {"sections[].hotness_K"}
    # keys of objects keyed by data (levels, inputs, scenarios) are not vocabulary
    assert keys_outside_glossary({"days_per_year": {"watch": 1.0}}) == set()


def test_destress_warnings_name_their_option_and_codes(run_cli):
    """Warnings of every command go through trackplan.notices.to_json: objects with a stable code."""
    from trackplan import notices

    res, d = run_cli(*DESTRESS, "--tensor-capacity", "200 kN", "--json", json_out=True)
    assert d["warnings"] and all(set(w) == {"code", "message", "where"} and w["code"] in notices.CODES
                                 for w in d["warnings"])


def test_flattening_rules():
    """trackplan.tables: the one way from a command's JSON to CSV rows."""
    from trackplan import tables

    obj = {"id": "A", "months": [5, 6, 7], "reasons": ["hot", "old"], "laying_range_C": [25.0, 31.0],
           "feasible_window_C": None, "probability_per_season": {"value": 0.1, "standard_error": 0.01},
           "days_per_year": {"watch": 2.0, "cold": 0.5}, "drivers": {"neutral": {"probability_drop": 0.05}},
           "worst_cold_day": None, "annual": [{"year": 2001}], "warnings": [{"code": "gaps"}], "caution": "x"}
    names = {"days_per_year": "{}_days_per_year", "drivers": "drop_{}", "worst_cold_day": "worst_cold_day_{}"}
    assert tables.flat_row(obj, names) == {
        "section": "A", "months": "5 6 7", "reasons": "hot | old", "laying_range_low_C": 25.0,
        "laying_range_high_C": 31.0, "feasible_window_low_C": None, "feasible_window_high_C": None,
        "probability_per_season": 0.1, "standard_error": 0.01, "watch_days_per_year": 2.0,
        "cold_days_per_year": 0.5, "drop_neutral": 0.05}
    assert tables.table_rows([obj], "annual") == [{"section": "A", "year": 2001}]
    with pytest.raises(ValueError, match="standard_error"):  # a clash is the builder's to name
        tables.flat_row({"a": {"value": 1, "standard_error": 1}, "b": {"value": 2, "standard_error": 2}})
