"""``trackplan risk`` end to end (a small stand-in grid, few samples)."""

from __future__ import annotations

import numpy as np
import pytest

from trackplan.samples import folder

SECTIONS = """
[defaults]
drift_allowance = "5 K"
rail = "60E1"

[sections.HOT-1]
climate = "{rec}"
ballast = "partial"
neutral_temperature = "20 degC"
neutral_date = 2020-05-01
neutral_basis = "laid"

[sections.COOL-2]
climate = "{rec}"
neutral_temperature = "42 degC"
neutral_date = 2022-05-01
neutral_basis = "destressed"
"""


@pytest.fixture
def small_grid(monkeypatch, tmp_path):
    from trackplan import risk_network, surrogate

    monkeypatch.setattr(surrogate, "PEAK_AXIS", (0.25, 3.5, 2))
    monkeypatch.setattr(surrogate, "LONGITUDINAL_AXIS", (0.2, 5.0, 2))
    monkeypatch.setattr(surrogate, "MISALIGNMENT_AXIS_M", (0.003, 0.12, 2))
    monkeypatch.setattr(risk_network, "BUILD_TEST_POINTS", 1)
    monkeypatch.setenv(surrogate.ENV_CACHE, str(tmp_path / "cache"))
    rec = (folder("climate_samples") / "quennick_sands_daily.csv.gz").as_posix()
    f = tmp_path / "net.toml"
    f.write_text(SECTIONS.format(rec=rec))
    return f


def test_risk_json_ranks_sections_and_carries_the_interface(run_cli, small_grid, tmp_path, vocabulary):
    res, j = run_cli("risk", small_grid, "--samples", "400", "--seed", "4", "--json", "--out", tmp_path / "out",
                     json_out=True)
    assert res.exit_code == 0, res.output
    ids = [s["id"] for s in j["sections"]]
    assert ids == ["HOT-1", "COOL-2"]  # a low neutral on partly consolidated ballast ranks first
    hot = j["sections"][0]
    p = hot["probability_per_season"]
    assert 0 < p["value"] <= 1 and p["standard_error"] == pytest.approx(np.sqrt(p["value"] * (1 - p["value"]) / 400))
    assert hot["expected_buckles_per_year"] == p["value"]
    assert set(hot["drivers"]) == {"neutral", "drift", "peak_resistance", "longitudinal_resistance", "misalignment",
                                   "rail_temperature"}
    assert hot["measure_first_gain"] == pytest.approx(p["value"] - hot["what_if"]["neutral_measured"]["value"])
    assert hot["consolidate_gain"] is not None and j["sections"][1]["consolidate_gain"] is None
    assert hot["inputs"]["neutral_temperature"]["standard_deviation_K"] == 5.0  # laid
    assert j["network_expected_buckles_per_year"] == pytest.approx(sum(s["expected_buckles_per_year"]
                                                                       for s in j["sections"]))
    assert j["samples"] == 400 and j["seed"] == 4 and j["surrogate_max_error_pct"] is not None
    assert "caution" in j and "leaves out" in j["coverage"]
    assert (tmp_path / "out" / "risk_network.png").stat().st_size > 10000
    import csv

    # one vocabulary: every key a glossary name; the CSV is the JSON's sections flattened
    from trackplan import risk_report

    vocabulary.assert_glossary_keys(j)
    vocabulary.assert_csv_is_flat_json(tmp_path / "out" / "risk_sections.csv", j["sections"], risk_report.CSV_NAMES,
                                       ("season_probabilities",), risk_report.CSV_ALIASES)
    rows = {r["section"]: r for r in csv.DictReader((tmp_path / "out" / "risk_sections.csv").open())}
    # small probabilities survive the CSV (no rounding to a few decimals)
    assert float(rows["HOT-1"]["probability_per_season"]) == pytest.approx(p["value"], rel=1e-3)
    assert float(rows["HOT-1"]["expected_buckles_each_year"]) == pytest.approx(p["value"], rel=1e-3)
    # the same seed gives the same result (the stand-ins now come from the disk cache)
    res2, j2 = run_cli("risk", small_grid, "--samples", "400", "--seed", "4", "--json", json_out=True)
    assert j2["sections"][0]["probability_per_season"] == p


def test_risk_terminal_table_and_bad_input(run_cli, small_grid, tmp_path):
    res = run_cli("risk", small_grid, "--samples", "200", "--season", "year")
    assert res.exit_code == 0, res.output
    assert "Probability of buckling per season" in res.stdout and "Caution" in res.stdout
    assert "leaves out" in res.stdout
    assert max(len(ln) for ln in res.stdout.splitlines()) <= 100 and "…" not in res.stdout  # piped: 100 columns
    res = run_cli("risk", small_grid, "--samples", "5")
    assert res.exit_code == 2 and "--samples" in res.output and "Traceback" not in res.output
    res = run_cli("risk", small_grid, "--season", "winterish")
    assert res.exit_code == 2 and "unknown season" in res.output
    bad = tmp_path / "bad.toml"
    bad.write_text(small_grid.read_text() + '\n[sections.COOL-2.risk]\nneutral_sd = 3\n')
    res = run_cli("risk", bad, "--samples", "200", "--json")
    assert res.exit_code == 2
    assert "[sections.COOL-2] risk.neutral_sd" in res.output and "has no unit" in res.output


def test_register_neutral_and_its_stated_uncertainty_are_used(run_cli, small_grid, tmp_path):
    # a measured neutral logged in the register, with its uncertainty, replaces the section file's
    res = run_cli("register", "import", small_grid, "--by", "J. Okafor", "--db", tmp_path / "r.sqlite")
    assert res.exit_code == 0, res.output
    res = run_cli("register", "log", "HOT-1", "--kind", "measured", "--date", "2024-05-20", "--neutral", "30 degC",
                  "--uncertainty", "1.5 K", "--method", "rail uplift", "--by", "A. Byrne", "--db", tmp_path / "r.sqlite")
    assert res.exit_code == 0, res.output
    res, j = run_cli("risk", small_grid, "--samples", "200", "--register", tmp_path / "r.sqlite", "--json",
                     json_out=True)
    assert res.exit_code == 0, res.output
    hot = next(s for s in j["sections"] if s["id"] == "HOT-1")
    assert hot["inputs"]["neutral_temperature"]["recorded_C"] == 30.0
    assert hot["inputs"]["neutral_temperature"]["standard_deviation_K"] == 1.5
