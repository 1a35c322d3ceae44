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
