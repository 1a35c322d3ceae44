"""target, check and demo end to end on the example network (figures re-derived in the test)."""

from __future__ import annotations

import json
import re
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

ROOT = Path(__file__).resolve().parents[1]
EXAMPLE = ROOT / "examples" / "network.toml"


@pytest.fixture(scope="module")
def demo_out(tmp_path_factory):
    from typer.testing import CliRunner

    from trackplan.cli import app

    out = tmp_path_factory.mktemp("demo")
    res = CliRunner().invoke(app, ["demo", "--out", str(out)])
    assert res.exit_code == 0, res.output
    return out, res.stdout


def test_demo_writes_report_and_figures_are_consistent(demo_out):
    out, stdout = demo_out
    assert "Planning aid only" in stdout and "fictional" in stdout
    df = pd.read_csv(out / "check.csv", comment="#")
    assert len(df) >= 8
    for sid in df["section"]:
        assert (out / f"force_envelope_{sid}.png").stat().st_size > 5000
    html = (out / "check_summary.html").read_text()
    assert "Planning aid only" in html and "data:image/png;base64," in html
    # Re-derive every figure from the CSV's own inputs (thermal force P = E A alpha dT,
    # docs/methods/thermal-force.md, Esveld 2001 ch. 7; break gap P^2 / (E A r), Esveld 2001 ch. 7).
    from trackplan import rails, thermal

    for _, r in df.iterrows():
        p = rails.get_profile(r["rail"])
        st = thermal.default_steel(p.is_north_american)
        cur = r["recorded_neutral_temperature_C"] - r["drift_allowance_K"]
        # the CSV keeps temperatures to 0.01 degC, forces to 0.01 kN, gaps to 0.1 mm
        assert r["current_neutral_temperature_C"] == pytest.approx(cur, abs=0.011)
        rise = r["design_max_rail_temperature_C"] - cur
        assert r["heat_rise_K"] == pytest.approx(rise, abs=0.02)
        assert r["max_compression_force_per_rail_kN"] == pytest.approx(st.E_Pa * p.area_m2 * st.alpha_per_K * rise / 1e3,
                                                                       rel=2e-3)
        assert r["heat_margin_K"] == pytest.approx(r["allowable_rise_K"] - rise, abs=0.03)
        cold = r["design_min_rail_temperature_C"] - r["recorded_neutral_temperature_C"]
        P = st.E_Pa * p.area_m2 * st.alpha_per_K * cold
        gap = P**2 / (st.E_Pa * p.area_m2 * r["longitudinal_resistance_kN_per_m"] * 1e3)
        assert r["pull_apart_gap_mm"] == pytest.approx(gap * 1e3, rel=2e-3, abs=0.06)
        # verdict rule (trackplan.check): act when the margin is negative or a cold limit is exceeded
        act = r["heat_margin_K"] < 0 or r["pull_apart_gap_mm"] > r["gap_limit_mm"] or -r["max_tension_stress_MPa"] > 160
        assert (r["verdict"] == "act") == act
        assert r["allowable_rise_K"] <= r["upper_critical_rise_K"]
        assert 0 < r["allowable_rise_K"] < 80
    # the scenario the example network is built for
    by = df.set_index("section")
    assert by.loc["DS-302", "verdict"] == "act" and "destress to" in by.loc["DS-302", "reasons"]
    assert by.loc["GQ-201", "verdict"] == "ok"
    assert by.loc["KP-104", "ballast"] == "disturbed"
    # disturbed ballast lowers the allowable rise (same climate, same profile)
    assert by.loc["KP-104", "allowable_rise_K"] < by.loc["KP-101", "allowable_rise_K"]
    # worst first
    order = {"act": 0, "watch": 1, "ok": 2}
    assert list(df["verdict"].map(order)) == sorted(df["verdict"].map(order))


def test_check_outputs_record_settings_and_actions(demo_out):
    out, stdout = demo_out
    text = (out / "check.csv").read_text()
    meta = [ln for ln in text.splitlines() if ln.startswith("# ")]
    assert "# command: trackplan check" in meta and any(m.startswith("# return period:") for m in meta)
    # rounded to the precision of the quantity: no 16-digit floats
    assert not any(len(tok.split(".")[-1]) > 6 for tok in text.replace('"', ",").split(",") if tok[:1].isdigit())
    df = pd.read_csv(out / "check.csv", comment="#")
    for _, r in df.iterrows():  # every act and watch says what to do
        assert isinstance(r["action"], str) if r["verdict"] != "ok" else r["action"] != r["action"]
    by = df.set_index("section")
    assert "destress to a neutral temperature of" in by.loc["DS-302", "action"] and "before" in by.loc["DS-302", "action"]
    assert "patrol for broken rails" in by.loc["KP-103", "action"]
    assert "restore and consolidate the ballast" in by.loc["KP-104", "action"]
    html = (out / "check_summary.html").read_text()
    assert "Northvale &amp; Estuary Railway (fictional)" in html and "Action:" in html
    assert "size: A4 landscape" in html and "break-inside: avoid" in html
    # data warnings name their station and sections
    assert "<b>Gullhaven Quay</b> (sections" in html


def test_check_report_prints_on_few_pages(demo_out, tmp_path):
    # Rendered by Debian's headless Chromium to PDF; page count by poppler's pdfinfo.
    import shutil
    import subprocess

    chromium, pdfinfo = Path("/usr/bin/chromium"), shutil.which("pdfinfo")
    if not chromium.exists() or pdfinfo is None:
        pytest.skip("needs /usr/bin/chromium and pdfinfo")
    out, _ = demo_out
    pdf = tmp_path / "check.pdf"
    subprocess.run([str(chromium), "--headless", "--no-sandbox", "--disable-gpu", "--disable-background-networking",
                    "--disable-component-update", "--disable-sync", "--no-first-run",
                    f"--user-data-dir={tmp_path / 'profile'}", "--no-pdf-header-footer", f"--print-to-pdf={pdf}",
                    (out / "check_summary.html").as_uri()], capture_output=True, timeout=120, check=False)
    assert pdf.exists(), "chromium wrote no PDF"
    info = subprocess.run([pdfinfo, str(pdf)], capture_output=True, text=True, check=True).stdout
    pages = int(next(ln.split()[-1] for ln in info.splitlines() if ln.startswith("Pages:")))
    assert 1 <= pages <= 4  # nine sections: one summary page, plots three to a row
    pdftotext = shutil.which("pdftotext")
    if pdftotext:  # the whole summary table on the first page (no row split or carried over)
        first = subprocess.run([pdftotext, "-f", "1", "-l", "1", str(pdf), "-"], capture_output=True, text=True,
                               check=True).stdout
        ids = pd.read_csv(out / "check.csv", comment="#")["section"]
        assert all(sid in first for sid in ids)


def test_check_terminal_fits_100_columns_with_actions(demo_out):
    _, stdout = demo_out  # the demo prints the target and check tables (piped: 100 columns)
    lines = stdout.splitlines()
    assert max(len(ln) for ln in lines) <= 100
    head = next(i for i, ln in enumerate(lines) if "Pre-summer check" in ln)
    header = "\n".join(lines[head:head + 6])
    assert "allowabl\n" not in header and "allowable" in header and "…" not in stdout
    flagged = sum(bool(re.match(r"^\S+ (act|watch): ", ln)) for ln in lines)
    assert flagged >= 3 and sum(ln.strip().startswith("action:") for ln in lines) == flagged


def test_target_json(run_cli, tmp_path, vocabulary):
    res, d = run_cli("target", str(EXAMPLE), "--json", "--out", tmp_path / "t", json_out=True)
    assert res.exit_code == 0
    # one vocabulary: every key a glossary name; target.csv is the JSON's sections flattened
    vocabulary.assert_glossary_keys(d)
    vocabulary.assert_csv_is_flat_json(tmp_path / "t" / "target.csv", d["sections"])
    rows = {s["id"]: s for s in d["sections"]}
    need = {"id", "target_neutral_temperature_C", "laying_range_C", "feasible_window_C", "feasible",
            "design_max_rail_temperature_C", "design_min_rail_temperature_C", "allowable_rise_K",
            "drift_allowance_K"}
    for s in rows.values():
        assert need <= set(s)
        # heat floor T_hot + d - allowable (trackplan.target docstring)
        floor = s["design_max_rail_temperature_C"] + s["drift_allowance_K"] - s["allowable_rise_K"]
        assert s["heat_floor_C"] == pytest.approx(floor)
        if s["feasible"]:
            lo, hi = s["feasible_window_C"]
            a, b = s["laying_range_C"]
            assert lo - 1e-9 <= a <= s["target_neutral_temperature_C"] <= b <= hi + 1e-9
            # biased to the hot side: the target is above the middle of the window
            assert s["target_neutral_temperature_C"] >= (lo + hi) / 2 - 1e-9
        else:
            # empty window, heat first (default): never below the heat floor, the cold-side risk said
            assert s["priority"] == "heat" and s["would_open_window"] and "cold side" in s["accepted_risk"]
            a, b = s["laying_range_C"]
            assert a == pytest.approx(s["heat_floor_C"]) and a < s["target_neutral_temperature_C"] < b
    assert rows["GQ-201"]["feasible"]
    assert any(not s["feasible"] for s in rows.values())
    assert d["caution"]


def test_check_exit_code_and_json(run_cli, demo_out, vocabulary):
    res, d = run_cli("check", str(EXAMPLE), "--json", json_out=True)
    assert res.exit_code == 1  # some sections are 'act' (documented exit code for scripts)
    # one vocabulary: every key a glossary name; the demo's check.csv is this JSON's sections flattened
    vocabulary.assert_glossary_keys(d)
    vocabulary.assert_csv_is_flat_json(demo_out[0] / "check.csv", d["sections"], by_section=True)
    s0 = d["sections"][0]
    assert {"id", "verdict", "reasons", "current_neutral_temperature_C", "max_compression_force_per_rail_kN",
            "heat_margin_K", "max_tension_force_per_rail_kN", "pull_apart_gap_mm"} <= set(s0)
    assert s0["verdict"] == "act" and s0["max_tension_force_per_rail_kN"] < 0
    for s in d["sections"]:  # every act and watch says what to do
        assert (s["action"] is None) == (s["verdict"] == "ok")


def test_check_ok_network_exit_0(run_cli, tmp_path):
    body = EXAMPLE.read_text()
    head = body.split("[sections.")[0]
    gq = "[sections.GQ-201]" + body.split("[sections.GQ-201]")[1].split("\n[sections.GQ-202]")[0]
    f = tmp_path / "one.toml"
    f.write_text(head.replace("../climate_samples/", str(ROOT / "climate_samples") + "/") +
                 gq.replace("../climate_samples/", str(ROOT / "climate_samples") + "/"))
    res, d = run_cli("check", str(f), "--json", json_out=True)
    assert res.exit_code == 0 and [s["verdict"] for s in d["sections"]] == ["ok"]


def test_bad_section_reported_good_ones_kept(run_cli, tmp_path):
    text = EXAMPLE.read_text().replace("../climate_samples/", str(ROOT / "climate_samples") + "/")
    text = text.replace('climate = "' + str(ROOT / "climate_samples") + '/gullhaven_quay_hourly.csv.gz"\ntrack_azimuth = "10 deg"',
                        'climate = "missing.csv"\ntrack_azimuth = "10 deg"')
    f = tmp_path / "net.toml"
    f.write_text(text)
    res = run_cli("target", str(f), "--json")
    assert res.exit_code == 2
    d = json.loads(res.stdout)
    ids = [s["id"] for s in d["sections"]]
    assert "GQ-201" not in ids and "GQ-202" in ids
    assert any("GQ-201" in p and "climate record not found" in p for p in d["problems"])
    res = run_cli("target", str(f), "--strict")
    assert res.exit_code == 2 and "Traceback" not in res.output


def test_check_out_refuses_input_file(run_cli, tmp_path):
    res = run_cli("check", str(EXAMPLE), "--out", str(EXAMPLE))
    assert res.exit_code == 2 and "input" in res.output


def test_parallel_assessment_equals_sequential(monkeypatch, dask_cluster):
    # The Dask engine shares climate records out between workers; the figures must not change.
    from trackplan import assess
    from trackplan.sections import load_sections

    secs = load_sections(EXAMPLE, strict=True).sections
    seq, p1 = assess.Assessor().assess_all(secs)
    monkeypatch.setattr(assess, "PARALLEL_MIN_SECTIONS", 2)
    monkeypatch.setattr(assess, "PARALLEL_MIN_TRACKS", 2)
    par, p2 = assess.Assessor().assess_all(secs, engine=dask_cluster[1])
    assert not p1 and not p2
    assert [a.section.id for a in par] == [a.section.id for a in seq]
    for a, b in zip(seq, par):
        assert a.check == b.check and a.target == b.target
        assert b.climate.design_max_C == a.climate.design_max_C and b.climate.warnings == a.climate.warnings


def test_screening_on_the_engine_equals_in_process(monkeypatch, dask_cluster):
    from trackplan import assess
    from trackplan.screening import ScreenOptions, Screener
    from trackplan.sections import load_sections

    secs = load_sections(EXAMPLE, strict=True).sections
    opts = ScreenOptions(months=(5, 9))
    seq = Screener(assess.Assessor(), opts).screen_all(secs)
    monkeypatch.setattr(assess, "PARALLEL_MIN_SECTIONS", 2)
    par = Screener(assess.Assessor(), opts).screen_all(secs, engine=dask_cluster[1])
    assert [s.id for s in par.sections] == [s.id for s in seq.sections]
    for a, b in zip(seq.sections, par.sections):
        assert a.heat_days_by_level == b.heat_days_by_level and a.cold_days == b.cold_days
        assert np.array_equal(a.annual.restrict_days, b.annual.restrict_days)


def test_output_name_clash_refused_before_writing(run_cli, tmp_path):
    # an input named like a planned output: refused before any file is written
    import shutil

    rec = tmp_path / "rail_temperature_daily.csv"
    shutil.copy(ROOT / "climate_samples" / "gullhaven_quay_hourly.csv.gz", rec)
    res = run_cli("railtemp", str(rec), "--out", str(tmp_path))
    assert res.exit_code == 2 and "would overwrite an input" in res.output
    assert sorted(p.name for p in tmp_path.iterdir()) == ["rail_temperature_daily.csv"]


def test_target_out_writes_csv_and_html(run_cli, tmp_path):
    res = run_cli("target", str(EXAMPLE), "--out", str(tmp_path / "t"))
    assert res.exit_code == 0, res.output
    lines = res.stdout.splitlines()
    assert max(len(ln) for ln in lines) <= 100
    text = (tmp_path / "t" / "target.csv").read_text()
    assert text.startswith("# command: trackplan target\n") and "# distribution: gumbel" in text
    df = pd.read_csv(tmp_path / "t" / "target.csv", comment="#")
    assert set(df["section"]) >= {"KP-101", "DS-302"} and "target_neutral_temperature_C" in df
    page = (tmp_path / "t" / "target_summary.html").read_text()
    assert "Northvale &amp; Estuary Railway (fictional)" in page and "Caution." in page
    assert "Would open the window" in page  # the example has sections with an empty window


def test_check_us_units_reach_warnings_and_actions(run_cli):
    out = run_cli("check", str(EXAMPLE), "--units", "us").stdout
    warn = [ln for ln in out.splitlines() if ln.startswith("Data warning")]
    assert warn and all("degC" not in w and "°C" not in w for w in warn)
    assert "Data warning (Gullhaven Quay; GQ-" in out  # station and sections named
    acts = [ln for ln in out.splitlines() if "action:" in ln]
    assert acts and not any("°C" in a for a in acts)
