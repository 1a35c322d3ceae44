"""CLI: ``trackplan register ...`` on a real SQLite file, and ``--register`` on check/target/screen."""

from __future__ import annotations

import csv
import json
import sqlite3
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest

from trackplan import CAUTION, rails, thermal
from trackplan.destressing import mark_movements

ROOT = Path(__file__).resolve().parents[1]
EXAMPLE = ROOT / "examples" / "network.toml"
DAILY = ROOT / "climate_samples" / "quennick_sands_daily.csv.gz"


@pytest.fixture(scope="module")
def imported(tmp_path_factory):
    from typer.testing import CliRunner

    from trackplan.cli import app

    path = tmp_path_factory.mktemp("reg") / "net.sqlite"
    res = CliRunner().invoke(app, ["register", "import", str(EXAMPLE), "--by", "J. Okafor", "--db", str(path)])
    assert res.exit_code == 0, res.output
    return path


@pytest.fixture
def db(imported, tmp_path):
    """A fresh copy of the imported example network's register (closed: WAL checkpointed)."""
    import shutil

    return Path(shutil.copy(imported, tmp_path / "net.sqlite"))


def _count(path) -> int:
    with sqlite3.connect(path) as c:
        return c.execute("SELECT count(*) FROM entries").fetchone()[0]


def test_import_idempotent_and_history_json(run_cli, db, vocabulary):
    n = _count(db)
    res, d = run_cli("register", "import", EXAMPLE, "--by", "J. Okafor", "--db", db, "--json", json_out=True)
    vocabulary.assert_glossary_keys(d)
    assert d["entries_added"] == 0 and d["entries_present"] == n and _count(db) == n
    res, d = run_cli("register", "history", "KP-101", "--db", db, "--json", json_out=True)
    assert d["section"] == "KP-101" and d["caution"] == CAUTION
    e = d["entries"][0]
    for key in ("id", "kind", "date", "neutral_temperature_C", "uncertainty_K", "method", "entered_at", "entered_by",
                "source", "corrects", "note"):
        assert key in e, key
    assert (e["kind"], e["date"], e["neutral_temperature_C"]) == ("destressed", "2021-05-18", 44.0)


def test_log_measured_then_history_table_and_plot(run_cli, db, tmp_path, vocabulary):
    res = run_cli("register", "log", "KP-101", "--kind", "measured", "--date", "2024-05-20", "--neutral", "31 degC",
                  "--uncertainty", "2 K", "--method", "rail uplift", "--by", "A. Byrne", "--db", db)
    assert res.exit_code == 0, res.output
    # bare numbers are read in --units: 88 degF is 31.1 degC, 3.6 delta_degF is 2 K
    res, d = run_cli("register", "log", "KP-101", "--kind", "measured", "--date", "2024-05-21", "--neutral", "88",
                     "--uncertainty", "3.6", "--method", "rail uplift", "--by", "A. Byrne", "--units", "us",
                     "--db", db, "--json", json_out=True)
    assert d["entry"]["neutral_temperature_C"] == pytest.approx(31.111, abs=1e-3)
    assert d["entry"]["uncertainty_K"] == pytest.approx(2.0)
    out = tmp_path / "hist"
    res = run_cli("register", "history", "KP-101", "--db", db, "--out", out)
    assert res.exit_code == 0, res.output
    assert "Latest neutral temperature: 31.1" in res.stdout and "Planning aid only" in res.stdout
    assert (out / "history_KP-101.png").stat().st_size > 10000
    rows = list(csv.DictReader((out / "history_KP-101.csv").open()))
    assert [r["kind"] for r in rows] == ["destressed", "tamped", "measured", "measured"]
    # one vocabulary: every key a glossary name; the history CSV is the JSON's entries
    vocabulary.assert_glossary_keys(d)
    res, h = run_cli("register", "history", "KP-101", "--db", db, "--json", json_out=True)
    vocabulary.assert_glossary_keys(h)
    vocabulary.assert_csv_is_flat_json(out / "history_KP-101.csv", h["entries"])


@pytest.mark.parametrize("args, words", [
    (["XX-1", "--kind", "note", "--date", "2024-01-01"], "unknown section"),
    (["KP-101", "--kind", "measured", "--date", "2024-01-01", "--neutral", "30 degC", "--method", "m"], "uncertainty"),
    (["KP-101", "--kind", "destressed", "--date", "2024-02-30", "--neutral", "30 degC"], "existing date"),
    # refused by the plausible range of any neutral temperature, with the likely slip named
    (["KP-101", "--kind", "destressed", "--date", "2024-02-03", "--neutral", "95 degC"], "did you mean '95 degF'"),
    (["KP-101", "--kind", "note", "--date", "2024-02-03", "--corrects", "500"], "no entry 500"),
    (["KP-101", "--kind", "destressed", "--date", "2024-02-03", "--neutral", "30"], None),  # bare number: fine
])
def test_log_bad_input_exit_2_nothing_written(run_cli, db, args, words):
    n = _count(db)
    res = run_cli("register", "log", *args, "--by", "A. Byrne", "--db", db)
    if words is None:
        assert res.exit_code == 0 and _count(db) == n + 1
        return
    assert res.exit_code == 2, res.output
    assert words in res.output and "Traceback" not in res.output
    assert _count(db) == n


def test_log_without_by_and_newer_schema_refused(run_cli, db):
    n = _count(db)
    res = run_cli("register", "log", "KP-101", "--kind", "note", "--date", "2024-01-01", "--db", db)
    assert res.exit_code == 2 and "--by" in res.output and _count(db) == n
    with sqlite3.connect(db) as c:
        c.execute("UPDATE meta SET value = '7' WHERE key = 'schema_version'")
    res = run_cli("register", "log", "KP-101", "--kind", "note", "--date", "2024-01-01", "--by", "X", "--db", db)
    assert res.exit_code == 2 and "schema version 7" in res.output and _count(db) == n


JOB = """\
[destress]
rail = "60E1"
length = "400 m"
rail_temp = "15 degC"
target = "27 degC"
marks = "100 m"

[readings]
section = "KP-102"
date = 2024-06-02
rail_temp_uncertainty = "1 K"
reading_uncertainty = "1 mm"
{marks}
"""


def test_log_job_inverse_matches_the_destress_forward_calculation(run_cli, db, tmp_path, vocabulary):
    # the crew observed the movements a pull to 25.0 degC gives (the destress forward calculation)
    xs = np.array([100.0, 200.0, 300.0, 400.0])
    st = thermal.default_steel(rails.get_profile("60E1").is_north_american)
    us = mark_movements(xs, 15.0, 25.0, st.alpha_per_K)
    marks = "\n".join(f'[[readings.marks]]\nat = "{x:g} m"\nmovement = "{u * 1e3:.6f} mm"' for x, u in zip(xs, us))
    job = tmp_path / "job.toml"
    job.write_text(JOB.format(marks=marks))
    # the same file is a valid destress job: its planned movements are the forward figures
    res, plan = run_cli("destress", "--job", job, "--json", json_out=True)
    assert plan["marks"][-1]["movement_mm"] == pytest.approx(float(mark_movements(400.0, 15.0, 27.0, st.alpha_per_K)) * 1e3)
    res, d = run_cli("register", "log", "--job", job, "--by", "A. Byrne", "--db", db, "--json", json_out=True)
    e = d["entry"]
    assert (e["kind"], e["date"], e["source"]) == ("destressed", "2024-06-02", "job file job.toml")
    assert e["neutral_temperature_C"] == pytest.approx(25.0, abs=1e-3)
    # uniform pull: base temperature 1 K and one 1 mm reading over 400 m, in quadrature
    assert e["uncertainty_K"] == pytest.approx(np.hypot(1.0, 1e-3 / (st.alpha_per_K * 400.0)), abs=1e-3)
    assert d["achieved"]["target_neutral_temperature_C"] == 27.0 and d["caution"] == CAUTION
    vocabulary.assert_glossary_keys(d)
    res, h = run_cli("register", "history", "KP-102", "--db", db, "--json", json_out=True)
    assert h["latest_neutral_entry_id"] == d["id"]
    # the job file's options cannot be mixed with typed ones
    res = run_cli("register", "log", "KP-102", "--job", job, "--by", "A. Byrne", "--db", db)
    assert res.exit_code == 2 and "cannot be given with --job" in res.output


@pytest.mark.parametrize("old, new, words", [
    ('movement = "46.000000 mm"', "movement = 46", "has no unit"),
    ('[[readings.marks]]\nat = "400 m"', '[[readings.marks]]\nhalf = "B"\nat = "400 m"', "central cut"),
    ('[[readings.marks]]\nat = "400 m"', '[[readings.marks]]\nhalf = "C"\nat = "400 m"', "A or B"),
    ("date = 2024-06-02", 'date = "2024-02-30"', "existing date"),
    ('section = "KP-102"', 'section = "ZZ-1"', "unknown section"),
    ('at = "400 m"', 'at = "500 m"', "beyond the pulled length"),
    ('rail_temp_uncertainty = "1 K"', 'rail_temp_uncertainty = "0 K"', "no thermometer reading is exact"),
])
def test_log_job_bad_input_exit_2_nothing_written(run_cli, db, tmp_path, old, new, words):
    xs = [100.0, 200.0, 300.0, 400.0]
    marks = "\n".join(f'[[readings.marks]]\nat = "{x:g} m"\nmovement = "{x * 0.115:.6f} mm"' for x in xs)
    text = JOB.format(marks=marks)
    assert old in text
    job = tmp_path / "job.toml"
    job.write_text(text.replace(old, new))
    n = _count(db)
    res = run_cli("register", "log", "--job", job, "--by", "A. Byrne", "--db", db)
    assert res.exit_code == 2 and words in res.output and "Traceback" not in res.output, res.output
    assert _count(db) == n


def test_due_export_verify_and_env(run_cli, db, tmp_path, monkeypatch, vocabulary):
    res, d = run_cli("register", "due", "--older-than", "5y", "--db", db, "--json", json_out=True)
    vocabulary.assert_glossary_keys(d)
    ids = {r["id"]: r for r in d["sections"]}
    assert set(ids["KP-102"]) >= {"id", "reason", "last_verified"} and ids["KP-102"]["last_verified"] == "2012-09-03"
    assert "tamped" in ids["GQ-202"]["reason"] and d["caution"] == CAUTION
    res = run_cli("register", "due", "--older-than", "5 years", "--db", db)
    assert res.exit_code == 2 and "period" in res.output
    out = tmp_path / "exp"
    res = run_cli("register", "export", "--out", out, "--db", db)
    assert res.exit_code == 0, res.output
    rows = list(csv.DictReader((out / "entries.csv").open()))
    assert len(rows) == _count(db) and {p.name for p in out.iterdir()} == {
        "meta.csv", "sections.csv", "entries.csv", "trackplan-files.json"}  # the output set's manifest, written last
    monkeypatch.setenv("TRACKPLAN_DB", str(db))
    res, v = run_cli("register", "verify", "--json", json_out=True)
    assert res.exit_code == 0 and v["ok"] and v["entries"] == len(rows)
    vocabulary.assert_glossary_keys(v)


def test_import_refuses_a_file_with_a_bad_section_and_verify_finds_problems(run_cli, db, tmp_path):
    bad = tmp_path / "bad.toml"
    bad.write_text(EXAMPLE.read_text().replace('neutral_temperature = "44 degC"', 'neutral_temperature = "95 degC"')
                   .replace("../climate_samples/", f"{ROOT}/climate_samples/"))
    res = run_cli("register", "import", bad, "--by", "J. Okafor", "--db", tmp_path / "new.sqlite")
    assert res.exit_code == 2 and "nothing imported" in res.output and "-10..60" in res.output
    assert not (tmp_path / "new.sqlite").exists()
    with sqlite3.connect(db) as c:
        c.execute("DROP TRIGGER entries_no_delete")
    res = run_cli("register", "verify", "--db", db)
    assert res.exit_code == 1 and "entries_no_delete is missing" in res.output


def _one_section(tmp_path, neutral="22 degC") -> Path:
    p = tmp_path / "one.toml"
    p.write_text(f"""[sections.DS-302]
rail = "60E1"
climate = "{DAILY}"
radius = "500 m"
length = "800 m"
neutral_temperature = "{neutral}"
neutral_date = 2009-11-30
neutral_basis = "laid"
""")
    return p


def test_check_target_screen_follow_the_register(run_cli, tmp_path):
    sections = _one_section(tmp_path)
    db = tmp_path / "r.sqlite"
    assert run_cli("register", "import", sections, "--by", "J. Okafor", "--db", db).exit_code == 0
    res, plain = run_cli("check", sections, "--json", json_out=True)
    assert plain["sections"][0]["neutral_entry_id"] is None
    res = run_cli("register", "log", "DS-302", "--kind", "destressed", "--date", "2023-04-01", "--neutral", "36 degC",
                  "--by", "A. Byrne", "--db", db)
    assert res.exit_code == 0, res.output
    res, d = run_cli("check", sections, "--register", db, "--json", json_out=True)
    s = d["sections"][0]
    assert s["recorded_neutral_temperature_C"] == 36.0 and s["neutral_entry_id"] == 2
    assert s["current_neutral_temperature_C"] == pytest.approx(36.0 - 5.0)
    assert s["heat_rise_K"] == pytest.approx(plain["sections"][0]["heat_rise_K"] - 14.0)
    # a correction of the latest entry is followed
    run_cli("register", "log", "DS-302", "--kind", "destressed", "--date", "2023-04-01", "--neutral", "34 degC",
            "--corrects", "2", "--by", "A. Byrne", "--db", db)
    res, d = run_cli("check", sections, "--register", db, "--json", json_out=True)
    assert d["sections"][0]["recorded_neutral_temperature_C"] == 34.0 and d["sections"][0]["neutral_entry_id"] == 3
    res, t = run_cli("target", sections, "--register", db, "--json", json_out=True)
    assert t["sections"][0]["neutral_entry_id"] == 3 and t["sections"][0]["recorded_neutral_temperature_C"] == 34.0
    res, sc = run_cli("screen", sections, "--register", db, "--months", "6-8", "--json", json_out=True)
    assert sc["sections"][0]["neutral_entry_id"] == 3
    assert sc["sections"][0]["cold_neutral_temperature_C"] == 34.0  # the last day's neutral, from the register


def test_register_missing_section_is_a_problem(run_cli, tmp_path):
    sections = _one_section(tmp_path)
    other = tmp_path / "other.toml"
    other.write_text(_one_section(tmp_path).read_text().replace("DS-302", "DS-999"))
    db = tmp_path / "r.sqlite"
    run_cli("register", "import", other, "--by", "J. Okafor", "--db", db)
    res = run_cli("check", sections, "--register", db)
    assert res.exit_code == 2 and "not in the register" in res.output


def test_register_group_keeps_startup_light():
    code = ("import sys\nimport trackplan.cli.register\nfrom trackplan.cli import main\n"
            "sys.argv = ['trackplan', 'force', '--rail', '60E1', '--neutral', '27 degC', '--at', '60 degC']\n"
            "print(sorted(m for m in ('sqlalchemy', 'matplotlib', 'pandas', 'scipy', 'pint') if m in sys.modules))")
    res = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=60)
    assert json.loads(res.stdout.strip().replace("'", '"')) == []
