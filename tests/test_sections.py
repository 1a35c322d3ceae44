"""Section files: the example network reads; every bad field is named."""

from __future__ import annotations

import datetime as dt
from pathlib import Path

import pytest

from trackplan.errors import InputError
from trackplan.samples import example_network
from trackplan.sections import load_sections

ROOT = Path(__file__).resolve().parents[1]
EXAMPLE = ROOT / "examples" / "network.toml"
CLIMATE = ROOT / "climate_samples" / "kestrel_plains_hourly.csv.gz"


def write(tmp_path, body: str, defaults: str = "") -> Path:
    f = tmp_path / "net.toml"
    f.write_text(f"[defaults]\nrail = \"60E1\"\n{defaults}\n{body}", encoding="utf-8")
    return f


def section(sid="A-1", **fields) -> str:
    base = {"climate": f'"{CLIMATE.as_posix()}"', "neutral_temperature": '"30 degC"'}
    base.update(fields)
    return f"[sections.{sid}]\n" + "\n".join(f"{k} = {v}" for k, v in base.items()) + "\n"


def test_example_network_reads():
    sf = load_sections(EXAMPLE, today=dt.date(2026, 12, 1))
    assert not sf.problems
    ids = [s.id for s in sf.sections]
    assert len(ids) >= 8 and len(set(ids)) == len(ids)
    kinds = {(s.radius_m is None, s.sleeper) for s in sf.sections}
    assert (True, "concrete") in kinds and (False, "concrete") in kinds and any(k[1] == "timber" for k in kinds)
    assert any(s.ballast == "disturbed" for s in sf.sections)
    kp3 = next(s for s in sf.sections if s.id == "KP-103")
    assert kp3.neutral_temperature_C == pytest.approx(35.0)  # 95 degF
    assert kp3.drift_allowance_K == pytest.approx(50 / 9)  # 10 delta_degF
    assert kp3.steel.name == "north-american"


def test_example_network_is_the_one_copy_and_finds_its_climates():
    # trackplan demo reads examples/network.toml itself (trackplan.samples), and its
    # climate paths reach the one copy of the sample climates beside it
    assert example_network().resolve() == EXAMPLE.resolve()
    sf = load_sections(example_network(), today=dt.date(2026, 12, 1))
    assert {s.climate_path.resolve().parent for s in sf.sections} == {CLIMATE.parent.resolve()}


@pytest.mark.parametrize(
    "body,needle",
    [
        (section(rail='"60E9"'), "rail"),
        (section(sleeper='"plastic"'), "accepted: timber, concrete, steel"),
        (section(neutral_temperature="30"), "has no unit"),
        (section(neutral_temperature='"30 m"'), "not a temperature"),
        (section(neutral_temperature='"75 degC"'), "outside -10..60"),
        (section(neutral_date="2099-01-01"), "in the future"),
        (section(neutral_date='"14/06/2019"'), "YYYY-MM-DD"),
        (section(climate='"nowhere.csv"'), "climate record not found"),
        (section(radius='"80 m"'), "below 100 m"),
        (section(misalignment='"0 mm"'), "realistic misalignment"),
        (section(shade="1.5"), "outside 0.0..1.0"),
        (section(colour='"red"'), "unknown field"),
        (section(**{"stability": '{ peak_resistance = "12" }'}), "no unit"),
    ],
)
def test_bad_field_named(tmp_path, body, needle):
    f = write(tmp_path, body)
    sf = load_sections(f, today=dt.date(2026, 12, 1))
    assert not sf.sections and len(sf.problems) == 1
    msg = str(sf.problems[0])
    assert needle in msg and "[sections.A-1]" in msg
    with pytest.raises(InputError):
        load_sections(f, today=dt.date(2026, 12, 1), strict=True)


def test_good_sections_kept_when_one_is_bad(tmp_path):
    f = write(tmp_path, section("A-1") + section("A-2", sleeper='"plastic"') + section("A-3"))
    sf = load_sections(f, today=dt.date(2026, 12, 1))
    assert [s.id for s in sf.sections] == ["A-1", "A-3"]
    assert "A-2" in str(sf.problems[0])


def test_duplicate_id(tmp_path):
    f = write(tmp_path, section("A-1") + section("A-1"))
    with pytest.raises(InputError, match="unique"):
        load_sections(f)
    f = write(tmp_path, section("A-1") + section("a-1"))
    with pytest.raises(InputError, match="duplicate section id"):
        load_sections(f)


def test_events(tmp_path):
    ev = ('\n[[sections.A-1.events]]\ndate = 2022-04-02\nkind = "tamping"\nrecovery_days = 30\n'
          '[[sections.A-1.events]]\ndate = 2023-05-10\nkind = "destress"\nneutral_temperature = "34 degC"\n')
    f = write(tmp_path, section("A-1", neutral_date="2020-01-01") + ev)
    s = load_sections(f, strict=True).sections[0]
    assert [e.kind for e in s.events] == ["tamping", "destress"]
    assert s.latest_neutral_temperature_C == pytest.approx(34.0)
    assert s.current_neutral_temperature_C == pytest.approx(34.0 - 5.0)
    overlap = ('\n[[sections.A-1.events]]\ndate = 2022-04-02\nkind = "tamping"\nrecovery_days = 30\n'
               '[[sections.A-1.events]]\ndate = 2022-04-20\nkind = "ballast-work"\n')
    f = write(tmp_path, section("A-1") + overlap)
    with pytest.raises(InputError, match="overlap"):
        load_sections(f, strict=True)
    missing = '\n[[sections.A-1.events]]\ndate = 2022-04-02\nkind = "destress"\n'
    f = write(tmp_path, section("A-1") + missing)
    with pytest.raises(InputError, match="needs neutral_temperature"):
        load_sections(f, strict=True)


def test_bad_defaults_and_empty(tmp_path):
    f = tmp_path / "x.toml"
    f.write_text("[defaults]\nname = \"x\"\n")
    with pytest.raises(InputError, match="cannot be defaults"):
        load_sections(f)
    f.write_text("[defaults]\nrail = \"60E1\"\n")
    with pytest.raises(InputError, match="no sections"):
        load_sections(f)
    f.write_text("this is = = not toml")
    with pytest.raises(InputError, match="TOML"):
        load_sections(f)


def test_sleeper_spacing_scales_the_preset_resistances():
    # resistance per metre = resistance per sleeper / spacing (the presets' own construction)
    from trackplan.assess import Assessor
    from trackplan.stability import REFERENCE_SPACING_M, get_preset

    sf = load_sections(EXAMPLE, today=dt.date(2026, 12, 1), strict=True)
    by = {s.id: s for s in sf.sections}
    a = Assessor()
    kp3 = by["KP-103"]  # timber at 19.5 in
    inp = a.track_input(kp3)
    pre = get_preset("timber", "consolidated", "full")
    f = REFERENCE_SPACING_M["timber"] / (19.5 * 0.0254)
    assert inp.peak_resistance_N_per_m == pytest.approx(pre.peak_resistance_N_per_m * f)
    assert inp.longitudinal_resistance_N_per_m == pytest.approx(pre.longitudinal_resistance_N_per_m * f)
    gq3 = by["GQ-203"]  # timber, no spacing given: the reference spacing, presets as they are
    assert gq3.sleeper_spacing_m == pytest.approx(0.65)
    assert a.track_input(gq3).peak_resistance_N_per_m == pytest.approx(pre.peak_resistance_N_per_m)
