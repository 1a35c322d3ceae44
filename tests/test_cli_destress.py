"""CLI: ``trackplan destress`` (terminal crew sheet, JSON, printable HTML, job file, bad input)."""

from __future__ import annotations

import pytest

from trackplan import CAUTION, rails, thermal

BASE = ["destress", "--rail", "60E1", "--length", "400 m", "--rail-temp", "15 degC", "--target", "27 degC"]
IN = 0.0254


def test_json_keys_and_values(run_cli):
    res, d = run_cli(*BASE, "--marks", "50 m", "--tensor-capacity", "600 kN",
                     "--observed-movement", "40 mm", "--at-mark", "400 m", "--json", json_out=True)
    assert res.exit_code == 0
    for key in ("extension_mm", "weld_allowance_mm", "cut_length_mm", "tensor_force_per_rail_kN", "stretch_possible",
                "marks", "alpha_per_K", "E_GPa", "area_cm2", "achieved_neutral_temperature_C", "mode", "warnings",
                "caution"):
        assert key in d, key
    assert d["mode"] == "free" and d["caution"] == CAUTION and d["stretch_possible"] is True
    # hand-worked (formula only): 1.15e-5 * 400 m * 12 K = 55.2 mm; + 25 mm aluminothermic gap
    assert d["extension_mm"] == pytest.approx(55.2, abs=1e-9)
    assert d["weld_allowance_mm"] == pytest.approx(25.0)
    assert d["cut_length_mm"] == pytest.approx(80.2, abs=1e-9)
    assert d["tensor_force_per_rail_kN"] == pytest.approx(
        float(thermal.thermal_force(12.0, 210e9, rails.get_profile("60E1").area_m2, 1.15e-5)) / 1e3, rel=1e-12)
    assert set(d["marks"][1]) == {"distance_m", "movement_mm"}
    assert d["marks"][-1] == {"distance_m": 400.0, "movement_mm": pytest.approx(55.2)}
    assert d["achieved_neutral_temperature_C"] == pytest.approx(15 + 0.040 / (1.15e-5 * 400))
    assert d["area_cm2"] == pytest.approx(76.70) and d["E_GPa"] == pytest.approx(210.0)


def test_us_units_and_bare_numbers(run_cli):
    # 0.078 in per 100 ft per 10 degF (common practice); bare numbers read in ft and degF
    res, d = run_cli("destress", "--rail", "136RE", "--length", "100", "--rail-temp", "60", "--target", "70",
                     "--units", "us", "--json", json_out=True)
    assert d["extension_mm"] / 25.4 == pytest.approx(0.078, abs=0.0005)
    assert d["length_m"] == pytest.approx(30.48)
    res = run_cli("destress", "--rail", "136RE", "--length", "1320", "--rail-temp", "60", "--target", "95",
                  "--units", "us")
    assert res.exit_code == 0
    out = res.stdout
    # bare numbers shown with the unit they were read in, once ("1320 ft = 1320.0 ft" would be an echo of itself)
    assert "1320.0 ft" in out and "60.0 °F" in out and "1320 ft =" not in out
    assert "distance (ft)" in out and "movement (in)" in out and "kip" in out
    assert "Caution:" in out


def test_terminal_crew_sheet(run_cli):
    res = run_cli(*BASE, "--marks", "100 m", "--tensor-capacity", "150 kN")
    assert res.exit_code == 0
    out = res.stdout
    assert "Length to cut out" in out and "80.2 mm" in out
    assert "Reference marks" in out and "BEYOND CAPACITY" in out
    assert "Warning:" in out and "Caution:" in out


def test_crew_sheet_html(run_cli, tmp_path):
    res = run_cli(*BASE, "--rail-temp", "31 degC", "--site", "Fictional Junction km 12", "--out", tmp_path / "crew")
    assert res.exit_code == 0, res.output
    page = (tmp_path / "crew" / "destress_crew_sheet.html").read_text(encoding="utf-8")
    assert "@page" in page and "@media print" in page
    assert "Fictional Junction km 12" in page
    assert "Signatures" in page and "Readings" in page
    assert "Warning:" in page and "hotter than the target" in page
    assert page.count("<tr><td class='num'>") == 9  # marks 0, 50, ..., 400 m
    assert "Caution:" in page
    # US units on the sheet too
    run_cli(*BASE, "--units", "us", "--out", tmp_path / "us")
    us = (tmp_path / "us" / "destress_crew_sheet.html").read_text(encoding="utf-8")
    assert "distance (ft)" in us and "movement (in)" in us


def test_centre_pull_repair_heating_restrained(run_cli):
    _, c = run_cli(*BASE, "--length", "800 m", "--pull", "centre", "--json", json_out=True)
    assert c["pulled_lengths_m"] == [400.0, 400.0] and c["marks"][-1]["distance_m"] == 400.0
    assert "string_too_long" not in c["warning_codes"]
    _, r = run_cli("destress", "--rail", "60E1", "--length", "60 m", "--rail-temp", "10 degC",
                   "--current-neutral", "27 degC", "--removed", "4.5 m", "--json", json_out=True)
    assert r["mode"] == "repair" and r["pull"] == "centre" and r["target_neutral_temperature_C"] == 27.0
    # the marks lie on the freed rail (both sides together: the distance between the fixed points less the opening)
    assert r["freed_length_m"] == pytest.approx(r["length_m"] - r["opening_mm"] / 1e3)
    assert max(m["distance_m"] for m in r["marks"]) == pytest.approx(r["freed_length_m"] / 2)
    assert r["closure_length_mm"] == pytest.approx((4.5 - 1.15e-5 * 4.5 * 17 - 0.050) * 1e3, rel=1e-9)
    _, h = run_cli(*BASE, "--mode", "heating", "--json", json_out=True)
    assert h["heating_temperature_C"] == pytest.approx(27.0) and h["tensor_force_per_rail_kN"] == 0.0
    _, a = run_cli(*BASE, "--current-neutral", "20 degC", "--json", json_out=True)
    assert a["mode"] == "restrained" and a["extension_mm"] == pytest.approx(1.15e-5 * 400 * 7 * 1e3)


def test_job_file_and_override(run_cli, tmp_path):
    job = tmp_path / "job.toml"
    job.write_text('[destress]\nrail = "60E1"\nlength = "400 m"\nrail_temp = "15 degC"\ntarget = "27 degC"\n'
                   'weld = "flash-butt"\n', encoding="utf-8")
    _, d = run_cli("destress", "--job", job, "--json", json_out=True)
    assert d["cut_length_mm"] == pytest.approx(55.2 - 35.0)
    _, d2 = run_cli("destress", "--job", job, "--target", "30 degC", "--json", json_out=True)
    assert d2["target_neutral_temperature_C"] == 30.0


@pytest.mark.parametrize(
    "args, words",
    [
        (["--length", "0 m"], "outside 1..100000 m"),  # plausible range of the field
        (["--length", "-5 m"], "outside 1..100000 m"),
        (["--target", "65 degC"], "-10..60 degC"),
        (["--target", "150 degF"], "outside 14..140 degF"),
        (["--marks", "500 m"], "longer than the pulled length"),
        (["--weld", "thermite"], "unknown weld process"),
        (["--weld", "30"], "no unit"),
        (["--rail", "60X9"], "unknown rail profile"),
        (["--pull", "sideways"], "accepted"),
    ],
)
def test_bad_input_exit_2(run_cli, args, words):
    res = run_cli(*BASE, *args)
    assert res.exit_code == 2, res.output
    assert words in res.output
    assert "Traceback" not in res.output


def test_temperature_without_unit_in_a_file(run_cli, tmp_path):
    job = tmp_path / "job.toml"
    job.write_text('[destress]\nrail = "60E1"\nlength = "400 m"\nrail_temp = "15"\ntarget = "27 degC"\n',
                   encoding="utf-8")
    res = run_cli("destress", "--job", job)
    assert res.exit_code == 2 and "Traceback" not in res.output
    assert "rail_temp" in res.output and "has no unit" in res.output


def test_bare_observed_movement_is_mm_and_absurd_reading_refused(run_cli):
    res, d = run_cli("destress", "--rail", "60E1", "--length", "400", "--rail-temp", "15", "--target", "27",
                     "--observed-movement", "40", "--at-mark", "400", "--json", json_out=True)
    # 40 mm at 400 m: 15 + 0.040 / (1.15e-5 * 400) = 23.70 degC (formula only)
    assert d["achieved_neutral_temperature_C"] == pytest.approx(15 + 0.040 / (1.15e-5 * 400), abs=1e-6)
    res = run_cli("destress", "--rail", "60E1", "--length", "400 m", "--rail-temp", "15 degC", "--target", "27 degC",
                  "--observed-movement", "40 m", "--at-mark", "400 m")
    # 40 m is refused by the plausible range of a mark's movement, naming the likely slip
    assert res.exit_code == 2 and "did you mean '40 mm'" in res.output


def test_verdict_follows_every_blocking_warning(run_cli):
    res = run_cli(*BASE, "--tensor-capacity", "200 kN")
    assert res.exit_code == 0
    line = next(ln for ln in res.stdout.splitlines() if "Can be done now" in ln)
    assert "NO" in line and "capacity" in line and "yes" not in line
    res = run_cli("destress", "--rail", "60E1", "--length", "1 mi", "--rail-temp", "15", "--target", "27")
    line = next(ln for ln in res.stdout.splitlines() if "Can be done now" in ln)
    assert "NO" in line and "too long" in line
    _, d = run_cli(*BASE, "--tensor-capacity", "200 kN", "--json", json_out=True)
    assert d["can_be_done_now"] is False and [b["code"] for b in d["blocking"]] == ["force_beyond_capacity"]
    # the plan names the field; the command line places it at its option
    assert d["blocking"][0]["where"] == "--tensor-capacity" == d["warnings"][0]["where"]
    _, d = run_cli(*BASE, "--tensor-capacity", "600 kN", "--json", json_out=True)
    assert d["can_be_done_now"] is True and d["blocking"] == []


def test_verdict_on_the_printed_sheet(run_cli, tmp_path):
    res = run_cli(*BASE, "--tensor-capacity", "200 kN", "--out", tmp_path / "c")
    assert res.exit_code == 0
    page = (tmp_path / "c" / "destress_crew_sheet.html").read_text()
    assert "NO: pull beyond tensor capacity" in page and ">yes<" not in page
    assert "class='key'" in page  # cut length and tensor pull emphasised


def test_no_redundant_echo(run_cli):
    out = run_cli(*BASE).stdout
    assert "400 m = 400.0 m" not in out and "400.0 m" in out
    assert "1320 ft = 402.3 m" in run_cli("destress", "--rail", "60E1", "--length", "1320 ft", "--rail-temp", "15",
                                          "--target", "27").stdout


def test_us_defaults_are_us_practice_values(run_cli):
    # 1 in thermite gap, 1320 ft longest pull, marks every 100 ft (from memory, common practice),
    # not the SI defaults converted (0.98 in, 1312 ft)
    _, d = run_cli("destress", "--rail", "136RE", "--length", "1600", "--rail-temp", "60", "--target", "95",
                   "--units", "us", "--json", json_out=True)
    assert d["weld_allowance_mm"] == pytest.approx(25.4) and d["max_pull_length_m"] == pytest.approx(1320 * 0.3048)
    assert d["mark_spacing_m"] == pytest.approx(30.48)
    out = run_cli("destress", "--rail", "136RE", "--length", "1600", "--rail-temp", "60", "--target", "95",
                  "--units", "us").stdout
    assert "1.00 in per weld" in out and "0.98 in" not in out and "1320 ft" in out and "1312" not in out
