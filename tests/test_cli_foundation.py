"""CLI: profiles and force commands, bad input."""

from __future__ import annotations

import pytest

from trackplan import rails, thermal


def test_profiles_json(run_cli):
    res, data = run_cli("profiles", "--json", json_out=True)
    names = [p["name"] for p in data["profiles"]]
    assert "60E1" in names and "136RE" in names
    row = data["profiles"][names.index("60E1")]
    assert set(row) >= {"name", "area_cm2", "mass_kg_per_m", "vertical_inertia_cm4", "lateral_inertia_cm4",
                        "height_mm", "foot_width_mm", "head_width_mm", "source"}
    assert row["area_cm2"] == pytest.approx(76.70)


def test_profiles_table(run_cli):
    res = run_cli("profiles", "--units", "us")
    assert res.exit_code == 0
    assert "136RE" in res.stdout and "in²" in res.stdout


def test_force_json_values(run_cli):
    res, d = run_cli("force", "--rail", "60E1", "--neutral", "27 degC", "--at", "60 degC", "--at", "-20 degC",
                     "--resistance", "8 kN/m", "--json", json_out=True)
    assert d["rail"] == "60E1" and d["E_GPa"] == pytest.approx(210.0)
    hot, cold = d["results"]
    # independent: 210e9 * 76.70e-4 * 1.15e-5 * 33 K
    assert hot["force_per_rail_kN"] == pytest.approx(210e9 * 76.70e-4 * 1.15e-5 * 33 / 1e3, rel=1e-9)
    assert hot["force_per_track_kN"] == pytest.approx(2 * hot["force_per_rail_kN"])
    assert hot["state"] == "compression" and cold["state"] == "tension"
    assert cold["rise_K"] == pytest.approx(-47.0)
    assert cold["stress_MPa"] < 0
    assert "pull_apart_gap_mm" in cold and "pull_apart_gap_mm" not in hot
    P = cold["force_per_rail_kN"] * 1e3
    assert cold["pull_apart_gap_mm"] == pytest.approx(P**2 / (210e9 * 76.70e-4 * 8e3) * 1e3)
    assert cold["breathing_length_m"] == pytest.approx(abs(P) / 8e3)


def test_force_us_bare_numbers(run_cli):
    res, d = run_cli("force", "--rail", "136RE", "--neutral", "95", "--at", "135", "--units", "us", "--json",
                     json_out=True)
    assert d["neutral_temperature_C"] == pytest.approx(35.0)
    # 40 degF rise * 2.6 kip/degF (common practice) ~ 104 kip ~ 463 kN
    assert d["results"][0]["force_per_rail_kN"] / 4.4482216152605 == pytest.approx(104, rel=0.02)


@pytest.mark.parametrize(
    "args,needle",
    [
        (["--rail", "60E3", "--neutral", "27 degC", "--at", "40 degC"], "Did you mean"),
        (["--rail", "60E1", "--neutral", "27 m", "--at", "40 degC"], "--neutral"),
        (["--rail", "60E1", "--neutral", "warm", "--at", "40 degC"], "cannot read"),
        (["--rail", "60E1", "--neutral", "27 degC", "--at", "40 degC", "--resistance", "0 kN/m"], "--resistance"),
        (["--rail", "60E1", "--neutral", "27 degC", "--at", "40 degC", "--resistance", "-3 kN/m"], "outside 1..50 kN/m"),
        (["--rail", "60E1", "--neutral", "27 degC", "--at", "40 degC", "--youngs-modulus", "2 GPa"], "GPa"),
    ],
)
def test_force_bad_input_exit_2(run_cli, args, needle):
    res = run_cli("force", *args)
    assert res.exit_code == 2
    assert needle in res.output
    assert "Traceback" not in res.output


def test_force_table_has_caution(run_cli):
    res = run_cli("force", "--rail", "60E1", "--neutral", "27 degC", "--at", "60 degC")
    assert res.exit_code == 0
    assert "Planning aid only" in res.stdout


def test_console_entry_loads_only_the_command_it_runs():
    # `trackplan force ...` imports only the force command module (fast start-up) and still
    # dispatches as a group: the subcommand name is not taken for an argument.
    import json
    import subprocess
    import sys

    code = ("import sys, json; sys.argv = ['trackplan', 'force', '--rail', '60E1', '--neutral', '27 degC', "
            "'--at', '60 degC', '--json']\n"
            "from trackplan.cli import main\n"
            "try:\n    main()\nexcept SystemExit:\n    pass\n"
            "print(json.dumps([sorted(m for m in sys.modules if m.startswith('trackplan.cli.')), "
            "sorted(m for m in ('matplotlib', 'pvlib', 'scipy', 'pandas', 'pint', 'sqlalchemy') if m in sys.modules)]), "
            "file=sys.stderr)")
    res = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=60)
    assert json.loads(res.stdout)["results"][0]["rise_K"] == pytest.approx(33.0)
    loaded, heavy = json.loads(res.stderr.strip().splitlines()[-1])
    assert "trackplan.cli.force" in loaded and "trackplan.cli.screen" not in loaded
    assert heavy == []  # no matplotlib, pvlib, scipy, pandas or pint on the start-up path


def test_version_is_light_and_in_process(run_cli):
    import subprocess
    import sys

    code = ("import sys; sys.argv = ['trackplan', '--version']\nfrom trackplan.cli import main\nmain()\n"
            "print(sorted(m for m in sys.modules if m.startswith('trackplan.cli.') or m in ('typer', 'pandas')))")
    res = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=60)
    from trackplan import __version__

    assert res.stdout.splitlines() == [f"trackplan {__version__}", "[]"]
    r = run_cli("--version")
    assert r.exit_code == 0 and r.stdout.strip() == f"trackplan {__version__}"


def test_units_any_case(run_cli):
    _, d = run_cli("force", "--rail", "136RE", "--neutral", "95", "--at", "135", "--units", "US", "--json",
                   json_out=True)
    assert d["neutral_temperature_C"] == pytest.approx(35.0)


@pytest.mark.parametrize("args,needle", [
    (["force", "--bogus"], "No such option '--bogus'"),
    (["nosuch"], "No such command 'nosuch'"),
    (["force", "--units", "metric"], "'metric' is not one of"),
])
def test_usage_errors_are_one_line(run_cli, args, needle):
    res = run_cli(*args)
    assert res.exit_code == 2
    lines = [ln for ln in res.output.splitlines() if ln.strip()]
    assert len(lines) == 1 and lines[0].startswith("error: ") and needle in lines[0] and "--help" in lines[0]
    assert "╭" not in res.output and "Usage:" not in res.output


@pytest.mark.parametrize("args", [
    ["force", "--rail", "60E1", "--neutral", "27 degC", "--at", "60 degC", "--at", "-20 degC", "--resistance", "8 kN/m"],
    ["force", "--rail", "136RE", "--neutral", "95", "--at", "140", "--at", "-10", "--units", "us"],
    ["profiles"],
    ["destress", "--rail", "60E1", "--length", "200 m", "--rail-temp", "10", "--current-neutral", "27",
     "--removed", "4.5 m"],
])
def test_terminal_tables_fit_100_columns_without_split_words(run_cli, args):
    # the piped width is 100 columns (trackplan.cli.common.PIPED_WIDTH) unless COLUMNS says otherwise
    out = run_cli(*args).stdout
    lines = out.splitlines()
    assert max(len(ln) for ln in lines) <= 100
    assert "…" not in out  # no header or cell cut short
    if args[0] == "force":  # headers and states whole, not folded into pieces
        assert "compression" in out and "tension" in out
        assert ("breathing" in out) == ("--resistance" in args)


def test_columns_is_honoured_when_piped():
    import os
    import subprocess
    import sys

    code = "import sys; sys.argv = ['trackplan', 'profiles']\nfrom trackplan.cli import main\nmain()"
    env = dict(os.environ, COLUMNS="72")
    res = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, env=env, timeout=60)
    assert max(len(ln) for ln in res.stdout.splitlines()) <= 72
    env.pop("COLUMNS")
    res = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, env=env, timeout=60)
    assert 90 <= max(len(ln) for ln in res.stdout.splitlines()) <= 100
