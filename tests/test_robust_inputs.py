"""Robust inputs: no silent wrong number, no lost run, no hang, no leak (one test per class of problem).

Every bad input must give a one-line message and exit 2 within seconds (never a traceback); an
unforeseen failure exit 3; a network run with one bad section computes the others.
"""

from __future__ import annotations

import gzip
import json
import os
import time
from pathlib import Path

import numpy as np
import pytest

from trackplan import ranges, reports, safeio, units, weather
from trackplan.errors import InputError

ROOT = Path(__file__).resolve().parents[1]
BASE_FORCE = ["force", "--rail", "60E1", "--neutral", "27 degC", "--at", "-20 degC"]
BASE_DESTRESS = ["destress", "--rail", "60E1", "--length", "400 m", "--rail-temp", "15 degC", "--target", "27 degC"]


def _daily_csv(path: Path, years: int = 4, unit: str = "degC", offset: float = 0.0, confirm: bool = False) -> Path:
    """A small synthetic daily record (seeded) at a fictional place."""
    rng = np.random.default_rng(7)
    days = np.arange(np.datetime64("2001-01-01"), np.datetime64(f"{2001 + years}-01-01"))
    doy = np.arange(len(days)) % 365
    tmax = 18 + 12 * np.sin(2 * np.pi * (doy - 110) / 365) + rng.normal(0, 2, len(days)) + offset
    tmin = tmax - 10
    head = "# latitude: 45.0\n# longitude: 7.0\n# timezone: UTC+01:00\n"
    if confirm:
        head += "# units confirmed: yes\n"
    rows = "\n".join(f"{d},{a:.1f},{b:.1f}" for d, a, b in zip(days.astype(str), tmax, tmin))
    path.write_text(head + f"date,tmax [{unit}],tmin [{unit}]\n" + rows + "\n")
    return path


def _one_line_exit_2(res):
    assert res.exit_code == 2, res.output
    assert "Traceback" not in res.output
    return res.output


# --------------------------------------------------------------------------
# Plausible ranges (command line and section files share one table)
# --------------------------------------------------------------------------


@pytest.mark.parametrize(
    "args, words",
    [
        (BASE_FORCE + ["--resistance", "8 kN/mm"], "did you mean '8 kN/m'"),
        (BASE_FORCE + ["--alpha", ""], "empty"),
        (BASE_DESTRESS + ["--tensor-capacity", "1e308 kN"], "too large"),
        (BASE_DESTRESS + ["--marks", "1e-6 furlong"], "reference mark spacing"),
        (["destress", "--rail", "60E1", "--length", "1e300 km", "--rail-temp", "15 degC", "--target", "27 degC"],
         "length between fixed points"),
        (BASE_DESTRESS + ["--marks", "1e-320 m"], "vanishingly small"),
        (["stability", "--rail", "60E1", "--longitudinal-resistance", "1e-320"], "vanishingly small"),
        (["force", "--rail", "60E1", "--neutral", "95 degC", "--at", "-20 degC"], "did you mean '95 degF'"),
    ],
)
def test_implausible_command_line_values_refused(run_cli, args, words):
    t0 = time.perf_counter()
    out = _one_line_exit_2(run_cli(*args))
    assert words in out
    assert time.perf_counter() - t0 < 5


def test_range_table_names_every_kind_and_refuses_non_finite():
    assert set(ranges.KIND_RANGES) == set(units.SI_UNIT)
    for row in ranges.RANGES.values():
        assert row.kind in units.SI_UNIT and row.lo < row.hi
    for text in ("inf m", "nan m", "1e999 m"):
        with pytest.raises(InputError):
            units.parse(text, "length", "x")


def test_section_file_values_share_the_range_table(tmp_path):
    from trackplan.sections import load_sections

    rec = _daily_csv(tmp_path / "r.csv")
    (tmp_path / "n.toml").write_text(
        '[defaults]\nrail = "60E1"\nclimate = "r.csv"\n'
        '[sections.A]\nneutral_temperature = "30 degC"\n'
        '[sections.A.stability]\nlongitudinal_resistance = "10 kN/mm"\n'
        '[sections.B]\nneutral_temperature = "30 degC"\nlength = "1e-9 m"\n'
        '[sections.C]\nneutral_temperature = "30 degC"\ntrack_azimuth = "1.5708 rad"\n')
    sf = load_sections(tmp_path / "n.toml")
    msgs = " | ".join(str(p) for p in sf.problems)
    assert "[sections.A] stability.longitudinal_resistance" in msgs and "did you mean '10 kN/m'" in msgs
    assert "[sections.B] length" in msgs
    assert [s.id for s in sf.sections] == ["C"]
    assert sf.sections[0].track_azimuth_deg == pytest.approx(90.0, abs=1e-3)
    assert rec.exists()


# --------------------------------------------------------------------------
# Angles
# --------------------------------------------------------------------------


def test_angles_converted_from_any_unit_and_range_checked():
    # 0.7191 rad = 41.20 deg (pint's radian, the reference)
    assert units.parse("0.7191 rad", "angle", "--lat") == pytest.approx(np.degrees(0.7191), rel=1e-12)
    assert units.parse("100 grad", "angle", "--azimuth") == pytest.approx(90.0)
    assert units.parse("0.25 turn", "angle", "--azimuth") == pytest.approx(90.0)
    with pytest.raises(InputError, match="latitude"):
        units.parse("2 rad", "angle", "--lat")


def test_absolute_versus_difference_in_pint_spellings():
    with pytest.raises(InputError, match="temperature difference is needed"):
        units.parse("1.5 degree_Celsius", "temperature_difference", "--warming")
    assert units.parse("1.5 delta_degree_Celsius", "temperature_difference", "--warming") == pytest.approx(1.5)


# --------------------------------------------------------------------------
# Cache keyed on content and modification time
# --------------------------------------------------------------------------


def test_prepared_record_cache_sees_an_edited_record(tmp_path):
    from trackplan import rails, railtemp

    p = tmp_path / "h.csv"
    times = np.arange(np.datetime64("2001-07-01T00:00"), np.datetime64("2001-07-11T00:00"), np.timedelta64(1, "h"))
    air = 20 + 8 * np.sin(2 * np.pi * (np.arange(len(times)) % 24 - 9) / 24)

    def write(values):
        p.write_text("# latitude: 45\n# longitude: 7\n# timezone: UTC+01:00\ntime,air_temperature [degC],ghi [W/m**2]\n"
                     + "\n".join(f"{t},{a:.1f},{max(0.0, 800 * np.sin(np.pi * ((i % 24) - 6) / 12)):.0f}"
                                 for i, (t, a) in enumerate(zip(times.astype(str), values))) + "\n")

    site = railtemp.RailSite(latitude_deg=45.0, longitude_deg=7.0)
    prof = rails.get_profile("60E1")
    write(air)
    d1 = railtemp.daily_rail_extremes(*weather.read_record(p), prof, site)
    write(air + 5.0)  # same path, same size class, same span: only the values changed
    d2 = railtemp.daily_rail_extremes(*weather.read_record(p), prof, site)
    assert float((d2["rail_max_C"] - d1["rail_max_C"]).mean()) > 3.0


# --------------------------------------------------------------------------
# A network run: one bad section never loses the others
# --------------------------------------------------------------------------


def _tmy3_lines():
    import pvlib

    return (Path(pvlib.__file__).parent / "data" / "723170TYA.CSV").read_text().splitlines()


def test_network_run_reports_each_bad_section_and_computes_the_others(run_cli, tmp_path):
    _daily_csv(tmp_path / "good.csv")
    (tmp_path / "quote.csv").write_text('date,tmax [degC],tmin [degC]\n2001-01-01,"5,1\n2001-01-02,6,2\n')
    os.symlink(tmp_path / "loop2", tmp_path / "loop1")
    os.symlink(tmp_path / "loop1", tmp_path / "loop2")
    lines = _tmy3_lines()
    (tmp_path / "dup.tmy3").write_text("\n".join(lines[:10] + [lines[10]] + lines[10:]) + "\n")
    (tmp_path / "swap.tmy3").write_text("\n".join(lines[:10] + [lines[11], lines[10]] + lines[12:]) + "\n")
    (tmp_path / "head.epw").write_text("LOCATION,Nowhere,XX,XXX,TMY,000000,45.0,7.0,1.0,200.0\n" + "X\n" * 7)
    bad = {"Q": "quote.csv", "Q2": "quote.csv", "L": "loop1", "N": "a\\u0000b.csv", "T": "x" * 300 + ".csv",
           "D": "dup.tmy3", "S": "swap.tmy3", "E": "head.epw"}
    body = '[defaults]\nrail = "60E1"\n[sections.GOOD]\nclimate = "good.csv"\nneutral_temperature = "30 degC"\n'
    body += "".join(f'[sections.{k}]\nclimate = "{v}"\nneutral_temperature = "30 degC"\n' for k, v in bad.items())
    (tmp_path / "n.toml").write_text(body)
    t0 = time.perf_counter()
    res = run_cli("check", tmp_path / "n.toml", "--json")
    assert time.perf_counter() - t0 < 30
    assert res.exit_code == 2 and "Traceback" not in res.output
    d = json.loads(res.stdout)
    assert [s["id"] for s in d["sections"]] == ["GOOD"]
    probs = " | ".join(d["problems"])
    for k in bad:
        assert f"[sections.{k}]" in probs
    assert "stray quote" in probs and "loop of symbolic links" in probs and "NUL byte" in probs
    assert "longer than 255 bytes" in probs and "duplicate timestamp" in probs and "out of order" in probs
    assert "no data rows" in probs
    # a record shared by two sections is read once and reported for each, under its own section
    assert sum("stray quote" in p and "[sections.Q2] climate quote.csv" in p for p in d["problems"]) == 1


def test_unforeseen_failure_is_exit_3_without_traceback(run_cli, monkeypatch):
    from trackplan import thermal

    def boom(*a, **k):
        raise ZeroDivisionError("float division by zero")

    monkeypatch.setattr(thermal, "thermal_force", boom)
    res = run_cli(*BASE_FORCE)
    assert res.exit_code == 3
    assert "internal error: ZeroDivisionError" in res.output and "report" in res.output
    assert "Traceback" not in res.output


def test_one_section_failing_unexpectedly_is_a_problem_of_that_section(tmp_path, monkeypatch):
    from trackplan import assess
    from trackplan.sections import load_sections

    _daily_csv(tmp_path / "good.csv")
    (tmp_path / "n.toml").write_text('[defaults]\nrail = "60E1"\nclimate = "good.csv"\n'
                                     '[sections.A]\nneutral_temperature = "30 degC"\n'
                                     '[sections.B]\nneutral_temperature = "30 degC"\nshade = 0.5\n')
    sf = load_sections(tmp_path / "n.toml")
    real = assess.Assessor.assess

    def flaky(self, section):
        if section.id == "B":
            raise KeyError("boom")
        return real(self, section)

    monkeypatch.setattr(assess.Assessor, "assess", flaky)
    results, problems = assess.Assessor().assess_all(sf.sections)
    assert [a.section.id for a in results] == ["A"]
    assert "[sections.B]" in str(problems[0]) and "internal error KeyError" in str(problems[0])


# --------------------------------------------------------------------------
# Files that hang or exhaust memory
# --------------------------------------------------------------------------


@pytest.mark.parametrize("special", ["/dev/zero", "/dev/urandom", "fifo", "folder"])
def test_non_regular_files_refused_everywhere(run_cli, tmp_path, special):
    if special == "fifo":
        path = tmp_path / "pipe"
        os.mkfifo(path)
    elif special == "folder":
        path = tmp_path
    else:
        path = Path(special)
    for args in (["railtemp", path], BASE_FORCE + ["--profiles-file", path],
                 ["destress", "--job", path], ["check", path]):
        t0 = time.perf_counter()
        out = _one_line_exit_2(run_cli(*args))
        assert time.perf_counter() - t0 < 5
        assert "regular file" in out or "folder" in out


def test_size_and_decompression_caps(tmp_path, monkeypatch):
    p = tmp_path / "bomb.csv.gz"
    p.write_bytes(gzip.compress(b"time,air_temperature [degC]\n" + b"0" * 5_000_000))
    assert p.stat().st_size < 20_000
    monkeypatch.setattr(safeio, "RATIO_FREE_BYTES", 100_000)
    with pytest.raises(InputError, match="expands more than 100 times"):
        weather.read_record(p)
    monkeypatch.setattr(safeio, "RATIO_FREE_BYTES", 10**9)
    monkeypatch.setattr(safeio, "MAX_DECOMPRESSED_BYTES", 1_000_000)
    with pytest.raises(InputError, match="expands to more than"):
        weather.read_record(p)
    monkeypatch.setattr(safeio, "MAX_RECORD_BYTES", 1000)
    with pytest.raises(InputError, match="larger than"):
        weather.read_record(p)


def test_far_off_timestamp_refused_fast(tmp_path):
    p = tmp_path / "h.csv"
    t = np.arange(np.datetime64("2001-01-01T00:00"), np.datetime64("2001-03-01T00:00"), np.timedelta64(1, "h"))
    rows = [f"{x},{5.0:.1f}" for x in t.astype(str)] + ["2999-01-01T00:00,5.0"]
    p.write_text("# timezone: UTC\ntime,air_temperature [degC]\n" + "\n".join(rows) + "\n")
    t0 = time.perf_counter()
    with pytest.raises(InputError, match="far outside the record's span"):
        weather.read_record(p)
    assert time.perf_counter() - t0 < 3


def test_count_of_marks_capped():
    from trackplan import destressing

    with pytest.raises(InputError, match="marks"):
        destressing.plan_destressing(length_m=50_000.0, rail_temperature_C=15.0, target_neutral_C=27.0,
                                     area_m2=76.7e-4, E_Pa=210e9, alpha_per_K=1.15e-5, mark_spacing_m=1.0,
                                     max_pull_length_m=50_000.0)


def test_impossible_paths_refused():
    for bad, words in (("a\x00b", "NUL byte"), ("x" * 300, "longer than"), ("/" + "d/" * 2100, "bytes long")):
        with pytest.raises(InputError, match=words):
            safeio.read_bytes(bad, "f", 1000)


# --------------------------------------------------------------------------
# Unit slips in a record that feeds a verdict
# --------------------------------------------------------------------------


def test_degF_labelled_degC_stops_the_record_unless_confirmed(tmp_path):
    # a cool climate written in degF (maxima below 65, so inside the degC range) but labelled degC
    p = _daily_csv(tmp_path / "f.csv", unit="degC", offset=32.0)
    with pytest.raises(InputError, match=r"tmax.*look like degF") as exc:
        weather.read_record(p)
    assert "f.csv" in str(exc.value) and "units confirmed" in str(exc.value)
    _, meta = weather.read_record(_daily_csv(tmp_path / "g.csv", unit="degC", offset=32.0, confirm=True))
    assert any("confirmed" in w for w in meta["warnings"])
    _, meta = weather.read_record(p, units_confirmed=True)  # a section's climate_units_confirmed
    # a short record (a few weeks) is judged too
    short = tmp_path / "s.csv"
    short.write_text("date,tmax [degC],tmin [degC]\n" + "".join(f"2001-07-{d:02d},62.0,50.0\n" for d in range(1, 21)))
    with pytest.raises(InputError, match="look like degF"):
        weather.read_record(short)


# --------------------------------------------------------------------------
# Output sets
# --------------------------------------------------------------------------


def test_output_set_moved_into_place_as_a_whole(tmp_path):
    out = tmp_path / "out"
    with reports.output_session():
        reports.prepare_out_dir(out)
        reports.write_text(out / "a.txt", "new a")
        reports.write_text(out / "b.txt", "new b")
        assert not (out / "a.txt").exists()  # staged, not yet in place
    assert (out / "a.txt").read_text() == "new a"
    man = json.loads((out / reports.MANIFEST_NAME).read_text())
    assert [f["name"] for f in man["files"]] == ["a.txt", "b.txt"]
    # a run that fails half-way leaves the previous set as it was, and nothing behind
    with pytest.raises(RuntimeError):
        with reports.output_session():
            reports.prepare_out_dir(out)
            reports.write_text(out / "a.txt", "newer a")
            raise RuntimeError("killed")
    assert (out / "a.txt").read_text() == "new a"
    assert sorted(p.name for p in out.iterdir()) == ["a.txt", "b.txt", reports.MANIFEST_NAME]


def test_stale_staging_of_a_killed_run_removed(tmp_path):
    out = tmp_path / "out"
    (out / ".trackplan-staging-999999999-x").mkdir(parents=True)
    (out / ".trackplan-staging-999999999-x" / "check.csv").write_text("half")
    with reports.output_session():
        reports.prepare_out_dir(out)
        reports.write_text(out / "a.txt", "a")
    assert sorted(p.name for p in out.iterdir()) == ["a.txt", reports.MANIFEST_NAME]


def test_safe_names_and_csv_neutralised(tmp_path):
    import pandas as pd

    assert reports.safe_name("NV-101") == "NV-101"
    assert "/" not in reports.safe_name("a/b") and reports.safe_name("a/b") != reports.safe_name("a_b")
    assert len(reports.safe_name("x" * 500)) < 100
    p = reports.write_csv(tmp_path / "t.csv", pd.DataFrame({"id": ["=1+2", "+x", "-y", "@z", "ok"], "v": [-1.5] * 5}))
    back = pd.read_csv(p)
    assert list(back["id"]) == ["'=1+2", "'+x", "'-y", "'@z", "ok"]
    assert list(back["v"]) == [-1.5] * 5  # numbers stay numbers


def test_unwritable_out_refused_before_any_work(run_cli, tmp_path):
    _daily_csv(tmp_path / "good.csv")
    (tmp_path / "n.toml").write_text('[sections.A]\nrail = "60E1"\nclimate = "good.csv"\n'
                                     'neutral_temperature = "30 degC"\n')
    t0 = time.perf_counter()
    out = _one_line_exit_2(run_cli("check", tmp_path / "n.toml", "--out", "/proc/trackplan-out"))
    assert "--out /proc/trackplan-out" in out and "not writable" in out
    assert time.perf_counter() - t0 < 3
    out = _one_line_exit_2(run_cli("check", tmp_path / "n.toml", "--out", "y" * 300))
    assert "longer than 255" in out


# --------------------------------------------------------------------------
# What messages show of a file
# --------------------------------------------------------------------------


def test_messages_quote_only_a_short_excerpt(tmp_path):
    p = tmp_path / "secret"
    p.write_text("S" * 400 + ":hidden:" + "T" * 400 + "\n")
    with pytest.raises(InputError) as exc:
        weather.read_record(p)
    msg = str(exc.value)
    assert "hidden" not in msg and len(msg) < 400


# --------------------------------------------------------------------------
# Messages: fields, files and sections; all problems; encodings
# --------------------------------------------------------------------------


def test_section_problems_name_the_field_not_an_option(tmp_path):
    from trackplan.sections import load_sections

    _daily_csv(tmp_path / "r.csv")
    (tmp_path / "n.toml").write_text('[sections.A]\nrail = "60E1"\nclimate = "r.csv"\nneutral_temperature = "30 degC"\n'
                                     'rail_temperature_method = "heat-balanse"\n'
                                     '[sections.B]\nradius = "1e-3 m"\nlength = "abc"\nsleeper_spacing = "5 m"\n')
    sf = load_sections(tmp_path / "n.toml")
    a, b = (str(p) for p in sf.problems)
    assert "[sections.A] rail_temperature_method" in a and "--" not in a
    # every problem of the section at once: missing fields and bad quantities
    assert "missing field(s) 'rail', 'climate', 'neutral_temperature'" in b
    assert "radius" in b and "length" in b and "sleeper_spacing" in b


def test_strict_reports_every_problem(run_cli, tmp_path):
    (tmp_path / "n.toml").write_text('[sections.A]\nrail = "60E1"\n[sections.B]\nrail = "60E1"\n')
    out = _one_line_exit_2(run_cli("check", tmp_path / "n.toml", "--strict"))
    assert "[sections.A]" in out and "[sections.B]" in out and "--strict" in out


def test_text_encodings(tmp_path):
    from trackplan.sections import load_sections

    _daily_csv(tmp_path / "r.csv")
    body = '[sections.A]\nrail = "60E1"\nclimate = "r.csv"\nneutral_temperature = "30 degC"\n'
    (tmp_path / "bom.toml").write_bytes(b"\xef\xbb\xbf" + body.encode())
    assert [s.id for s in load_sections(tmp_path / "bom.toml").sections] == ["A"]
    (tmp_path / "u16.toml").write_bytes(body.encode("utf-16"))
    with pytest.raises(InputError, match="UTF-16"):
        load_sections(tmp_path / "u16.toml")
    (tmp_path / "cr.toml").write_bytes(body.replace("\n", "\r").encode())
    with pytest.raises(InputError, match="carriage return"):
        load_sections(tmp_path / "cr.toml")


def test_network_table_typos_refused(tmp_path):
    from trackplan.sections import load_sections

    (tmp_path / "n.toml").write_text('[network]\nnmae = "x"\n[sections.A]\nrail = "60E1"\n')
    with pytest.raises(InputError, match=r"\[network\].*nmae"):
        load_sections(tmp_path / "n.toml")


def test_numerical_warnings_never_reach_the_terminal(capsys):
    import warnings

    from trackplan.cli.common import run_guarded

    def noisy():
        np.log(np.array([-1.0]))
        warnings.warn("a library warning", RuntimeWarning)
        return 7

    assert run_guarded(noisy) == 7
    assert capsys.readouterr().err == ""


def test_method_names_in_step():
    from trackplan import railtemp
    from trackplan.sections import RAIL_TEMPERATURE_METHODS

    assert set(RAIL_TEMPERATURE_METHODS) == {"auto", *railtemp.METHODS}


def test_terminated_run_leaves_the_previous_set(tmp_path):
    import signal

    import typer

    from trackplan.cli.common import run_guarded

    out = tmp_path / "out"
    with reports.output_session():
        reports.prepare_out_dir(out)
        reports.write_text(out / "check.csv", "old")

    def work(out):
        reports.prepare_out_dir(out)
        reports.write_text(out / "check.csv", "new")
        os.kill(os.getpid(), signal.SIGTERM)  # as a crew's laptop shutting down mid-run
        time.sleep(5)

    with pytest.raises(typer.Exit) as exc:
        run_guarded(work, out=out)
    assert exc.value.exit_code == 143
    assert (out / "check.csv").read_text() == "old"
    assert sorted(p.name for p in out.iterdir()) == ["check.csv", reports.MANIFEST_NAME]


def test_section_ids_and_texts_checked(tmp_path):
    from trackplan.sections import load_sections

    _daily_csv(tmp_path / "r.csv")
    good = 'rail = "60E1"\nclimate = "r.csv"\nneutral_temperature = "30 degC"\n'
    (tmp_path / "n.toml").write_text(f'[sections."A[/]"]\n{good}[sections.B]\n{good}name = "x\\u001b[2J"\n'
                                     f'[sections.C]\n{good}location = "{"L" * 300}"\n[sections.D]\n{good}')
    sf = load_sections(tmp_path / "n.toml")
    assert [s.id for s in sf.sections] == ["D"]
    msgs = [str(p) for p in sf.problems]
    assert "square brackets" in msgs[0] and "control characters" in msgs[1] and "at most 200" in msgs[2]


def test_range_rows_agree_with_the_model_limits():
    from trackplan import loading

    assert (ranges.RANGES["axle_load"].lo, ranges.RANGES["axle_load"].hi) == pytest.approx(loading.AXLE_LOAD_RANGE_N)
    assert (ranges.RANGES["support_modulus"].lo, ranges.RANGES["support_modulus"].hi) == pytest.approx(
        loading.SUPPORT_MODULUS_RANGE_N_PER_M2)


def test_register_tables_neutralised():
    from trackplan import register_report

    text = register_report.csv_text(["id", "note"], [(1, "=HYPERLINK(1)"), (2, "plain")])
    assert text.splitlines() == ["id,note", "1,'=HYPERLINK(1)", "2,plain"]


def test_job_file_values_share_the_range_table(run_cli, tmp_path):
    (tmp_path / "job.toml").write_text('[destress]\nrail = "60E1"\nlength = "1e-9 m"\nrail_temp = "15 degC"\n'
                                       'target = "27 degC"\n')
    out = _one_line_exit_2(run_cli("destress", "--job", tmp_path / "job.toml"))
    assert "[destress] length" in out and "length between fixed points" in out


def test_a_bad_default_is_named_as_one(tmp_path):
    from trackplan.sections import load_sections

    _daily_csv(tmp_path / "r.csv")
    (tmp_path / "n.toml").write_text('[defaults]\nrail = "60E1"\nclimate = "r.csv"\ngap_limit = "50 m"\n'
                                     '[sections.A]\nneutral_temperature = "30 degC"\n')
    sf = load_sections(tmp_path / "n.toml")
    assert "[sections.A] gap_limit (from [defaults])" in str(sf.problems[0])


def test_names_with_dollar_signs_render_as_plain_text():
    import matplotlib.pyplot as plt

    reports.matplotlib_backend()
    fig, ax = plt.subplots()
    ax.set_title("M $\\frac{$")  # a section name from a file: not math notation
    assert len(reports.figure_png_bytes(fig)) > 1000


def test_markup_like_names_never_stop_a_command(run_cli, tmp_path):
    p = _daily_csv(tmp_path / "st.csv")
    p.write_text("# station: [/bad] [red]x\n" + p.read_text())
    res = run_cli("railtemp", p)
    assert res.exit_code == 0, res.output
    assert "[/bad]" in res.output


def test_a_section_tripping_an_unforeseen_case_is_reported_alone(tmp_path, monkeypatch):
    from trackplan import sections

    _daily_csv(tmp_path / "r.csv")
    good = 'rail = "60E1"\nclimate = "r.csv"\nneutral_temperature = "30 degC"\n'
    (tmp_path / "n.toml").write_text(f"[sections.A]\n{good}sleeper = []\n[sections.B]\n{good}[sections.C]\n{good}")
    sf = sections.load_sections(tmp_path / "n.toml")
    assert [s.id for s in sf.sections] == ["B", "C"] and "[sections.A] sleeper" in str(sf.problems[0])
    real = sections._section
    monkeypatch.setattr(sections, "_section", lambda sid, *a: (_ for _ in ()).throw(KeyError(sid)) if sid == "B"
                        else real(sid, *a))
    sf = sections.load_sections(tmp_path / "n.toml")
    assert [s.id for s in sf.sections] == ["C"]
    assert "[sections.B]" in str(sf.problems[1]) and "internal error KeyError" in str(sf.problems[1])
