"""CLI: trackplan stability."""

from __future__ import annotations

import math

import pytest

from trackplan import CAUTION


def test_stability_json_keys_and_values(run_cli):
    res, d = run_cli("stability", "--rail", "60E1", "--sleeper", "concrete", "--ballast", "consolidated",
                     "--radius", "800 m", "--misalignment", "20 mm", "--misalignment-length", "10 m", "--json",
                     json_out=True)
    assert res.exit_code == 0
    for key in ("upper_critical_rise_K", "lower_critical_rise_K", "allowable_rise_K", "response", "lateral_EI_kNm2",
                "axial_EA_kN", "alpha_per_K", "curve", "parameters", "criterion", "caution"):
        assert key in d
    assert d["caution"] == CAUTION
    assert d["response"] in ("snap-through", "progressive")
    assert d["parameters"]["radius_m"] == pytest.approx(800.0)
    assert d["parameters"]["misalignment_mm"] == pytest.approx(20.0)
    assert d["upper_critical_rise_K"] >= d["allowable_rise_K"] > 0
    assert set(d["curve"][0]) == {"lateral_displacement_mm", "rise_K"}
    # 2 E A of 60E1: 2 * 210 GPa * 76.70 cm^2 (EN 13674-1 area in the catalogue)
    assert d["axial_EA_kN"] == pytest.approx(2 * 210e9 * 76.70e-4 / 1e3, rel=1e-6)


def test_stability_hetenyi_through_the_cli(run_cli):
    # Hetenyi (1946): 2 sqrt(k EI) / (EA alpha) for a linear foundation, full restraint, no misalignment
    res, d = run_cli("stability", "--rail", "60E1", "--lateral-stiffness", "2000 kN/m**2",
                     "--longitudinal-resistance", "rigid", "--misalignment", "0 mm", "--json", json_out=True)
    expected = 2 * math.sqrt(2e6 * d["lateral_EI_kNm2"] * 1e3) / (d["axial_EA_kN"] * 1e3 * d["alpha_per_K"])
    assert d["upper_critical_rise_K"] == pytest.approx(expected, rel=0.02)
    assert d["parameters"]["longitudinal_restraint"] == "rigid"


def test_stability_overrides_apply(run_cli):
    _, a = run_cli("stability", "--rail", "60E1", "--sleeper", "timber", "--json", json_out=True)
    _, b = run_cli("stability", "--rail", "60E1", "--sleeper", "timber", "--peak-resistance", "10 kN/m",
                   "--limit-resistance", "7 kN/m", "--peak-displacement", "6 mm", "--longitudinal-resistance", "3 kN/m",
                   "--json", json_out=True)
    assert b["parameters"]["peak_resistance_kN_per_m"] == pytest.approx(10.0)
    assert b["parameters"]["longitudinal_resistance_per_rail_kN_per_m"] == pytest.approx(3.0)
    assert b["lower_critical_rise_K"] < a["lower_critical_rise_K"]


def test_stability_terminal_and_out(run_cli, tmp_path, vocabulary):
    out = tmp_path / "res"
    res = run_cli("stability", "--rail", "60E1", "--sleeper", "steel", "--ballast", "disturbed", "--out", out)
    assert res.exit_code == 0, res.output
    assert "allowable rise" in res.stdout and "Caution" in res.stdout
    png = out / "stability_curve.png"
    assert png.exists() and png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    text = (out / "stability_curve.csv").read_text()
    assert text.startswith("# command: trackplan stability\n# track: 60E1, steel sleepers, disturbed ballast")
    assert [ln for ln in text.splitlines() if not ln.startswith("#")][0] == "lateral_displacement_mm,rise_K"
    # the CSV is the JSON's equilibrium curve, flattened
    _, d = run_cli("stability", "--rail", "60E1", "--sleeper", "steel", "--ballast", "disturbed", "--json", json_out=True)
    vocabulary.assert_csv_is_flat_json(out / "stability_curve.csv", d["curve"])


def test_stability_us_units_bare_numbers(run_cli):
    res, d = run_cli("stability", "--rail", "136RE", "--sleeper", "timber", "--radius", "2000", "--units", "us",
                     "--json", json_out=True)
    assert d["parameters"]["radius_m"] == pytest.approx(2000 * 0.3048)


@pytest.mark.parametrize("args, text", [
    (["--peak-resistance", "-3 kN/m"], "outside 2..100 kN/m"),
    (["--limit-resistance", "50 kN/m"], "above the peak"),
    (["--radius", "80 m"], "100 m"),
    (["--sleeper", "wood"], "timber, steel, concrete"),
    (["--longitudinal-resistance", "stiff"], "--longitudinal-resistance"),
    (["--criterion", "guess"], "lower-critical"),
])
def test_stability_bad_input_exit_2(run_cli, args, text):
    res = run_cli("stability", "--rail", "60E1", *args)
    assert res.exit_code == 2
    assert text in res.output
    assert "Traceback" not in res.output


def test_stability_help_has_example(run_cli):
    res = run_cli("stability", "--help")
    assert res.exit_code == 0 and "Example" in res.stdout


@pytest.mark.parametrize("k_kN", [1000.0, 5000.0])
def test_hetenyi_through_the_cli_with_loading_none(run_cli, k_kN):
    # Hetenyi (1946): a perfect track on a linear foundation with full restraint buckles at
    # 2 sqrt(k EI); at 5000 kN/m**2 this used to be refused as a "bifurcation before the peak"
    res, d = run_cli("stability", "--rail", "60E1", "--lateral-stiffness", f"{k_kN} kN/m**2",
                     "--longitudinal-resistance", "rigid", "--misalignment", "0 mm", "--loading", "none", "--json",
                     json_out=True)
    assert res.exit_code == 0, res.output
    expected = 2 * math.sqrt(k_kN * 1e3 * d["lateral_EI_kNm2"] * 1e3) / (d["axial_EA_kN"] * 1e3 * d["alpha_per_K"])
    assert d["upper_critical_rise_K"] == pytest.approx(expected, rel=0.02)
    assert d["loading"] == "none"


def test_loaded_json_keys(run_cli):
    res, d = run_cli("stability", "--rail", "60E1", "--json", json_out=True)
    assert res.exit_code == 0
    assert d["loading"] == "freight-22.5t" and d["criterion_name"] == "practice-calibrated"
    assert d["upper_critical_rise_K"] < d["unloaded_upper_critical_rise_K"]
    assert d["unloaded_lower_critical_rise_K"] is not None
    assert d["parameters"]["loading"]["axle_load_kN"] == pytest.approx(22.5 * 9.80665)
    assert d["allowable_rise_K"] < d["lower_critical_rise_K"] < d["upper_critical_rise_K"]


@pytest.mark.parametrize("args, words", [
    (("--axle-load", "600 kN"), "axle load"),
    (("--axle-load", "0 kN"), "axle load"),
    (("--support-modulus", "500 MPa"), "support modulus"),
    (("--peak-displacement", "5 mm", "--limit-displacement", "4 mm"), "limit displacement"),
    (("--peak-resistance", "12 kN/m", "--limit-resistance", "15 kN/m"), "above the peak"),
    (("--loading", "tram"), "freight-22.5t"),
    (("--criterion", "half"), "practice-calibrated"),
])
def test_bad_stability_inputs_exit_2(run_cli, args, words):
    res = run_cli("stability", "--rail", "60E1", *args)
    assert res.exit_code == 2
    assert words in res.output and "Traceback" not in res.output


def test_one_input_path_cli_and_section_file_agree(run_cli, tmp_path):
    # the same physical overrides by both doors give the same allowable rise (sleeper spacing scaling,
    # peak given alone keeps the preset's limit/peak ratio, same loading)
    from pathlib import Path

    climate = Path(__file__).resolve().parents[1] / "climate_samples" / "gullhaven_quay_hourly.csv.gz"
    f = tmp_path / "one.toml"
    f.write_text(f'''
[sections.X-1]
climate = "{climate.as_posix()}"
rail = "60E1"
sleeper = "timber"
sleeper_spacing = "0.55 m"
radius = "700 m"
neutral_temperature = "30 degC"
loading = "passenger-coach"
  [sections.X-1.stability]
  peak_resistance = "12 kN/m"
  longitudinal_resistance = "6 kN/m"
''')
    _, t = run_cli("target", str(f), "--json", json_out=True)
    _, s = run_cli("stability", "--rail", "60E1", "--sleeper", "timber", "--sleeper-spacing", "0.55 m",
                   "--radius", "700 m", "--loading", "passenger-coach", "--peak-resistance", "12 kN/m",
                   "--longitudinal-resistance", "6 kN/m", "--json", json_out=True)
    assert t["sections"][0]["allowable_rise_K"] == pytest.approx(s["allowable_rise_K"], rel=1e-9)
    assert s["parameters"]["limit_resistance_kN_per_m"] < 12.0
