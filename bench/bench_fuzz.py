"""Long fuzz run of the input properties (hypothesis), and of the command line itself.

    python bench/bench_fuzz.py [EXAMPLES]        # default 2000 examples per property

Properties (the same as tests/test_fuzz_inputs.py, which runs them briefly in the suite):
quantities parse inside their plausible range or are refused; any record text reads or is
refused; any section neighbour leaves the good section computed. Then the command line:
light commands (force, destress, stability) with fuzzed option values, and check, target and
screen on a one-section file with fuzzed fields, stability overrides and events, must end with
exit code 0, 1 or 2 and never show a traceback or an internal error (exit 3). Prints the number of examples, the time taken and any failure found.
"""

from __future__ import annotations

import sys
import tempfile
import time
from pathlib import Path

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT / "tests"))

import test_fuzz_inputs as props  # noqa: E402


def run_property(name: str, test, n: int) -> None:
    inner = test.hypothesis.inner_test
    strategies = test.hypothesis._given_kwargs
    long = settings(max_examples=n, deadline=None, suppress_health_check=list(HealthCheck))
    wrapped = long(given(**strategies)(inner))
    t0 = time.perf_counter()
    if "tmp_path_factory" in inner.__code__.co_varnames[:inner.__code__.co_argcount]:
        class _Factory:
            def mktemp(self, base):
                return Path(tempfile.mkdtemp(prefix=base))

        wrapped(_Factory())
    else:
        wrapped()
    print(f"{name:45s} {n:6d} examples  {time.perf_counter() - t0:7.1f} s  ok")


#: Plausible values of each option, mixed with the fuzzed text so that runs get past the parsing.
PLAUSIBLE = {
    "--neutral": ["27 degC", "80 degF", "27"], "--at": ["-20 degC", "60 degC", "140 degF"],
    "--resistance": ["8 kN/m", "45 lbf/in"], "--alpha": ["1.15e-5 1/K"], "--youngs-modulus": ["210 GPa"],
    "--length": ["400 m", "1200 ft"], "--rail-temp": ["15 degC", "5"], "--target": ["27 degC", "30"],
    "--marks": ["50 m", "25 m"], "--tensor-capacity": ["600 kN"], "--max-pull": ["400 m"],
    "--observed-movement": ["40 mm"], "--at-mark": ["400 m", "200 m"], "--current-neutral": ["20 degC"],
    "--radius": ["800 m", "300 m"], "--misalignment": ["20 mm", "0 mm"], "--peak-resistance": ["15 kN/m"],
    "--longitudinal-resistance": ["10 kN/m"], "--lateral-stiffness": ["2000 kN/m**2"],
}


def cli_fuzz(n: int) -> None:
    from typer.testing import CliRunner

    from trackplan.cli import app

    runner = CliRunner()
    commands = {
        "force": (["force", "--rail", "60E1"], ["--neutral", "--at", "--resistance", "--alpha", "--youngs-modulus"]),
        "destress": (["destress", "--rail", "60E1"], ["--length", "--rail-temp", "--target", "--marks",
                                                      "--tensor-capacity", "--max-pull", "--observed-movement",
                                                      "--at-mark", "--current-neutral"]),
        "stability": (["stability", "--rail", "60E1"], ["--radius", "--misalignment", "--peak-resistance",
                                                        "--longitudinal-resistance", "--lateral-stiffness"]),
    }
    seen = {0: 0, 1: 0, 2: 0}

    @settings(max_examples=n, deadline=None, suppress_health_check=list(HealthCheck))
    @given(cmd=st.sampled_from(sorted(commands)), data=st.data())
    def one(cmd, data):
        base, opts = commands[cmd]
        chosen = data.draw(st.lists(st.sampled_from(opts), min_size=1, max_size=4, unique=True))
        args = list(base)
        for o in chosen:
            args += [o, data.draw(st.one_of(props.quantity_text(), st.sampled_from(PLAUSIBLE[o])))]
        if cmd == "force" and "--neutral" not in chosen:
            args += ["--neutral", "27 degC"]
        if cmd == "force" and "--at" not in chosen:
            args += ["--at", "40 degC"]
        res = runner.invoke(app, args)
        assert res.exit_code in (0, 1, 2), (args, res.output)
        assert "Traceback" not in res.output and "internal error" not in res.output, (args, res.output)
        seen[res.exit_code] += 1

    t0 = time.perf_counter()
    one()
    print(f"{'command line (force, destress, stability)':45s} {n:6d} examples  {time.perf_counter() - t0:7.1f} s  ok"
          f"  (exit 0: {seen[0]}, 1: {seen[1]}, 2: {seen[2]})")


#: Section fields and values for the network fuzz (plausible and hostile values mixed).
_NET_FIELDS = ["name", "location", "radius", "length", "track_azimuth", "misalignment", "shade", "latitude",
               "neutral_temperature", "drift_allowance", "gap_limit", "sleeper", "ballast", "sleeper_spacing",
               "steel", "alpha", "rail_temperature_method", "return_period", "loading", "neutral_basis",
               "neutral_date", "climate_units_confirmed", "tz"]
_NET_HOSTILE = ['"$x$"', '"[/b]"', '"a\\u0000"', '"NV/1"', '"=1+1"', "1e308", "nan", "inf", "2099-01-01", "[]",
                '"800 m"', '"5 K"', '"timber"', '"disturbed"']


def network_fuzz(n: int) -> None:
    """check, target and screen on a one-section file whose fields, stability overrides and
    events are fuzzed: exit 0, 1 or 2, never an internal error."""
    from typer.testing import CliRunner

    from trackplan.cli import app

    import test_robust_inputs as robust

    d = Path(tempfile.mkdtemp(prefix="net-fuzz"))
    robust._daily_csv(d / "r.csv", years=3)
    runner = CliRunner()
    values = st.one_of(props._TOML_VALUES, st.sampled_from(_NET_HOSTILE))
    extra = st.one_of(
        st.just(""),
        st.builds(lambda k, v: f"[sections.A.stability]\n{k} = {v}\n",
                  st.sampled_from(["peak_resistance", "limit_resistance", "longitudinal_resistance", "axle_load",
                                   "support_modulus", "bogus"]), values),
        st.builds(lambda day, kind, v: f"[[sections.A.events]]\ndate = {day}\nkind = {kind}\nneutral_temperature = {v}\n",
                  st.sampled_from(["2020-01-01", "2099-01-01", '"x"']),
                  st.sampled_from(['"destress"', '"tamping"', '"x"', "[]"]), values))
    seen = {0: 0, 1: 0, 2: 0}

    @settings(max_examples=n, deadline=None, suppress_health_check=list(HealthCheck))
    @given(fields=st.dictionaries(st.sampled_from(_NET_FIELDS), values, max_size=4), more=extra,
           cmd=st.sampled_from(["check", "target", "screen"]))
    def one(fields, more, cmd):
        body = {"rail": '"60E1"', "climate": '"r.csv"', "neutral_temperature": '"30 degC"', **fields}
        (d / "n.toml").write_text("[sections.A]\n" + "".join(f"{k} = {v}\n" for k, v in body.items()) + more)
        res = runner.invoke(app, [cmd, str(d / "n.toml"), "--json"])
        assert res.exit_code in (0, 1, 2), (body, more, res.output[-600:])
        seen[res.exit_code] += 1

    t0 = time.perf_counter()
    one()
    print(f"{'network (check, target, screen) section fields':45s} {n:6d} examples  "
          f"{time.perf_counter() - t0:7.1f} s  ok  (exit 0: {seen[0]}, 1: {seen[1]}, 2: {seen[2]})")


def main() -> None:
    n = int(sys.argv[1]) if len(sys.argv) > 1 else 2000
    print(f"fuzz run, {n} examples per property (a shared machine: times are indicative)")
    run_property("quantities in range or refused", props.test_parsed_quantities_are_in_range_or_refused, n)
    run_property("record text read or refused", props.test_any_record_text_reads_or_is_refused, n)
    run_property("section neighbours never lose a section", props.test_any_section_reads_or_is_reported, n)
    cli_fuzz(max(50, n // 4))
    network_fuzz(max(50, n // 4))


if __name__ == "__main__":
    main()
