"""``trackplan demo``: target and check on the bundled example network."""

from __future__ import annotations

from pathlib import Path

import typer

from trackplan import CAUTION
from trackplan.cli.common import UNITS_OPTION, UnitSystem, command, console, print_caution
from trackplan.samples import example_network

DEFAULT_OUT = "trackplan-demo"


@command("demo")
def demo_cmd(
    out: Path = typer.Option(Path(DEFAULT_OUT), "--out", help="Folder for the report (created in the current directory by default)."),
    system: UnitSystem = UNITS_OPTION,
) -> None:
    """Run the planner's job on the bundled example network of a fictional railway.

    Recommends the neutral temperature for each of its welded sections (target),
    runs the pre-summer check, prints both, and writes the report (CSV, force
    envelopes, HTML summary) to --out. The railway, its places and its climate
    records are invented (synthetic, seeded).

    Example: trackplan demo --out demo-report --units us
    """
    from trackplan.check import rank_key
    from trackplan.cli.check import print_checks, write_check_outputs
    from trackplan.cli.network import load_and_assess
    from trackplan.cli.target import print_targets

    from trackplan import reports

    reports.prepare_out_dir(out)  # a bad --out is said before the work, not after
    net = example_network()  # examples/network.toml, see trackplan.samples
    console.print(f"[bold]trackplan demo[/]: the example network of a fictional railway ({net.name}), "
                  "synthetic climates of three invented stations.", highlight=False)
    results, problems, _ = load_and_assess(net, True, None, "gumbel")
    print_targets(results, system.value)
    ranked = sorted(results, key=lambda a: rank_key(a.check))
    print_checks(ranked, system.value)
    written = write_check_outputs(out, ranked, net, system.value)
    console.print(f"Report written to {out.resolve()}/ ({len(written)} files; open check_summary.html).",
                  highlight=False)
    print_caution()
