"""The error tree: bad input and model errors are reported as plain messages, never as tracebacks."""

import pickle
from pathlib import Path

import numpy as np
import pytest

from trackplan.errors import InputError, ModelError, TrackplanError, UnitKindError
from trackplan.track import StabilityError


def _stuck(*args, **kwargs):
    raise StabilityError("the equilibrium path could not be followed past a rise of 41.0 K")


def test_the_tree():
    assert issubclass(InputError, TrackplanError) and issubclass(ModelError, TrackplanError)
    assert issubclass(StabilityError, ModelError) and not issubclass(StabilityError, InputError)
    assert issubclass(UnitKindError, InputError)
    # a relocated problem keeps its kind and its words
    e = StabilityError("cannot follow", field="misalignment").relocated("n.toml [sections.A]")
    assert isinstance(e, StabilityError) and str(e) == "n.toml [sections.A]: cannot follow"


def test_unit_of_another_kind_is_its_own_class():
    from trackplan import units

    with pytest.raises(UnitKindError):
        units.to_si(3.0, "m", "force")
    with pytest.raises(InputError) as info:  # an unknown unit is bad input, not a kind mix-up
        units.to_si(3.0, "furlongs-per-blob", "force")
    assert not isinstance(info.value, UnitKindError)


def test_a_model_error_at_the_command_line_is_a_message_with_exit_2(run_cli, monkeypatch):
    from trackplan import stability

    monkeypatch.setattr(stability, "analyse_stability", _stuck)
    res = run_cli("stability", "--rail", "60E1")
    assert res.exit_code == 2, res.output
    assert "could not be followed past a rise of 41.0 K" in res.output
    assert "internal error" not in res.output and "Traceback" not in res.output


def test_a_model_error_in_a_network_is_a_problem_of_that_section(tmp_path, monkeypatch):
    from trackplan import assess, stability
    from trackplan.sections import load_sections

    days = np.arange(np.datetime64("2001-01-01"), np.datetime64("2005-01-01"))
    doy = np.arange(len(days)) % 365
    tmax = 18 + 12 * np.sin(2 * np.pi * (doy - 110) / 365)
    rows = "\n".join(f"{d},{a:.1f},{a - 10:.1f}" for d, a in zip(days.astype(str), tmax))
    Path(tmp_path / "r.csv").write_text("# latitude: 45.0\n# longitude: 7.0\n# timezone: UTC+01:00\n"
                                        "date,tmax [degC],tmin [degC]\n" + rows + "\n")
    (tmp_path / "n.toml").write_text('[defaults]\nrail = "60E1"\nclimate = "r.csv"\n'
                                     '[sections.A]\nneutral_temperature = "30 degC"\n'
                                     '[sections.B]\nneutral_temperature = "30 degC"\nradius = "400 m"\n')
    sf = load_sections(tmp_path / "n.toml")
    real = stability.analyse_stability

    def stuck_on_the_curve(inp, *args, **kwargs):
        if inp.radius_m is not None and np.isfinite(inp.radius_m):
            _stuck()
        return real(inp, *args, **kwargs)

    monkeypatch.setattr(stability, "analyse_stability", stuck_on_the_curve)
    results, problems = assess.Assessor().assess_all(sf.sections)
    assert [a.section.id for a in results] == ["A"]
    assert len(problems) == 1 and isinstance(problems[0], StabilityError)
    assert "[sections.B]" in str(problems[0]) and "could not be followed" in str(problems[0])
    assert "internal error" not in str(problems[0])


def test_warnings_are_told_apart_by_code_not_by_words():
    from trackplan import notices, reports

    coded = notices.Notice("r.csv: the station has no coordinates", "no_coordinates", "r.csv")
    other = notices.Notice("r.csv: 3 gap(s) of missing hours", "gaps", "r.csv")
    kept = reports.grouped_warnings([("S", "A", coded), ("S", "A", other), ("S", "B", other)])
    assert kept == [("S", ["A", "B"], other)]
    # an older plain-text warning still gets its code from its words
    assert notices.as_notice("r.csv: no latitude/longitude: add lines").code == "no_coordinates"


def test_warnings_merged_in_one_place():
    from trackplan import notices

    record = [notices.Notice("r.csv: 2 gap(s) of missing hours", "gaps", "r.csv"), "r.csv: no latitude/longitude: x"]
    method = ["no wind in the record; 2 m/s at 10 m assumed throughout"]
    merged = notices.merge(record, None, method, record[:1])
    assert [n.code for n in merged] == ["gaps", "no_coordinates", "assumed_input"]
    assert all(isinstance(n, notices.Notice) for n in merged)
    assert [n.code for n in notices.merge(record, method, drop=("no_coordinates",))] == ["gaps", "assumed_input"]


def test_a_zone_given_for_the_record_is_placed_at_its_option_or_section_field(run_cli, tmp_path):
    from trackplan.weather import sample_records

    rec = sample_records()["quennick_sands"]
    res = run_cli("railtemp", rec, "--rail", "60E1", "--tz", "UTC+99")
    assert res.exit_code == 2 and "--tz: time zone offset 'UTC+99' is outside" in res.output
    (tmp_path / "n.toml").write_text(f'[defaults]\nrail = "60E1"\nclimate = "{rec}"\n'
                                     '[sections.A]\nneutral_temperature = "30 degC"\ntz = "UTC+99"\n')
    res = run_cli("check", tmp_path / "n.toml")
    assert res.exit_code == 2 and "n.toml [sections.A] tz: time zone offset 'UTC+99'" in res.output


def test_advice_names_a_field_and_the_command_line_its_option():
    """Computation modules refer to a value the user gives by its field (errors.option_ref); the command
    line writes the option that carries it, a caller without options the field's name."""
    from trackplan import errors
    from trackplan.notices import Notice

    exc = InputError(f"give {errors.option_ref('months')} or a latitude", "r.csv")
    assert str(exc) == "r.csv: give months or a latitude"
    assert str(exc.relocated("s.toml [sections.A]", {"months": "--months"}.get)) == \
        "s.toml [sections.A]: give --months or a latitude"
    n = Notice(f"use {errors.option_ref('season')} summer", "winter_months", "months")
    assert str(n) == "use season summer" and pickle.loads(pickle.dumps(n)) == n
