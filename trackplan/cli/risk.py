"""``trackplan risk``: probability of buckling per section and season, and what to measure first."""

from __future__ import annotations

from pathlib import Path
from typing import Optional

import typer
from rich.table import Table

from trackplan.cli.common import (JSON_OPTION, UNITS_OPTION, UnitSystem, command, console, emit_json, err_console,
                                  print_caution, progress_enabled)
from trackplan.cli.network import REGISTER_OPTION, SECTIONS_ARG, STRICT_OPTION, read_sections, report_problems

#: Sections listed in the terminal (every section is in the JSON and CSV).
TABLE_ROWS = 40


def _p(v: float) -> str:
    if v == 0:
        return "0"
    return f"{v:.2e}" if v < 1e-3 else f"{v:.4f}"


def print_table(result, system: str) -> None:
    from trackplan import units

    t = Table(title=f"Probability of buckling per season ({result.options.season}, "
                    f"{result.options.samples:,} samples, seed {result.options.seed})", title_justify="left")
    for name, just in (("Section", "left"), ("P/season", "right"), ("± se", "right"), ("Neutral", "right"),
                       ("sd", "right"), ("Buckling rise", "right"), ("Measured", "right"),
                       ("Consol.", "right"), ("First", "left")):
        t.add_column(name, justify=just, no_wrap=True)
    for s in result.sections[:TABLE_ROWS]:
        action, gain = s.first_action
        t.add_row(s.id, _p(s.probability), _p(s.estimate.standard_error),
                  units.fmt(s.neutral_temperature_C, "temperature", system, 0),
                  units.fmt(s.uncertainty.neutral_sd_K, "temperature_difference", system, 0),
                  units.fmt(s.buckling_rise_K, "temperature_difference", system, 0),
                  _p(s.measured.probability), "–" if s.consolidated is None else _p(s.consolidated.probability),
                  "–" if gain <= 0 else ("measure" if action.startswith("measure") else "consol."))
    console.print(t)
    console.print("P/season: probability of at least one buckle per season; Measured / Consol.: the same if the "
                  "neutral temperature were measured now / the ballast consolidated; First: the larger drop.",
                  highlight=False)
    if len(result.sections) > TABLE_ROWS:
        console.print(f"{TABLE_ROWS} of {len(result.sections)} sections shown; every section with --json or --out.",
                      highlight=False)
    err = result.surrogate_max_error_pct
    console.print(f"Network: {result.network_expected_buckles_per_year:.3g} expected buckles per year "
                  f"(± {result.network_standard_error:.2g}). Stand-in of the stability model: "
                  f"{result.surrogate_families} track famil{'y' if result.surrogate_families == 1 else 'ies'}"
                  + ("" if err is None else f", largest error {err:.1f} % on its test points (overstating the "
                                            f"buckling rise by at most {result.surrogate_max_overstatement_pct:.1f} %)")
                  + ".",
                  highlight=False)
    from trackplan.risk_report import COVERAGE

    console.print(f"[dim]{COVERAGE}[/]", highlight=False)


def write_outputs(out: Path, result, sections_file: Path) -> list[Path]:
    """risk_sections.csv and risk_network.png."""
    from trackplan import reports, risk_report, tables

    reports.matplotlib_backend()
    inputs = [sections_file]
    out = reports.prepare_out_dir(out, inputs, planned=["risk_sections.csv", "risk_network.png"])
    return [reports.write_csv(out / "risk_sections.csv", tables.frame(risk_report.rows(result)), inputs),
            reports.save_figure(out / "risk_network.png", risk_report.figure(result), inputs)]


@command("risk")
def risk_cmd(
    sections_file: Path = SECTIONS_ARG,
    samples: int = typer.Option(10_000, "--samples", help="Monte Carlo samples per section and what-if (100..10,000,000)."),
    seed: int = typer.Option(1, "--seed", help="Seed of the random draws: the same seed gives the same result."),
    season: str = typer.Option("summer", "--season", help="summer (May-Sep north, Nov-Mar south), year, or months M1-M2 such as 6-8."),
    out: Optional[Path] = typer.Option(None, "--out", help="Folder for risk_sections.csv and risk_network.png."),
    strict: bool = STRICT_OPTION,
    register: Optional[Path] = REGISTER_OPTION,
    system: UnitSystem = UNITS_OPTION,
    as_json: bool = JSON_OPTION,
) -> None:
    """Probability of buckling per section and season, and what to measure first.

    Monte Carlo over what is uncertain: the neutral temperature (spread by its
    basis, drifting since it was set), peak lateral and longitudinal resistance,
    misalignment, and the rail temperature model's error on the record's daily
    maxima. The buckling rise is that of the loaded track (lower critical rise,
    or the rise at 25 mm for progressive response) from a stand-in of the
    stability model, built once per track family and cached. For each section
    also the probability if the neutral temperature were measured now or the
    ballast consolidated. Spreads: data/risk_inputs.csv, overridable in
    [sections.ID.risk].

    Example: trackplan risk examples/network.toml --samples 20000 --seed 7 --out risk-report
    """
    from trackplan import risk_report
    from trackplan.risk_network import RiskOptions, RiskRunner

    options = RiskOptions(samples=samples, seed=seed, season=season).validate()
    sf = read_sections(sections_file, strict, register)
    runner = RiskRunner(options)
    if progress_enabled() and len(sf.sections) > 3:
        from rich.progress import Progress

        with Progress(console=err_console, transient=True, auto_refresh=False) as bar:
            task = bar.add_task("buckling probability", total=len(sf.sections))
            result = runner.run_all(sf.sections, progress=lambda: (bar.advance(task), bar.refresh()))
    else:
        result = runner.run_all(sf.sections)
    result.problems = sf.problems + result.problems
    if strict and result.problems:
        raise result.problems[0]
    written = write_outputs(out, result, sections_file) if out is not None else []
    if as_json:
        emit_json({**risk_report.result_json(result), "files": [str(p) for p in written]})
    else:
        if result.sections:
            print_table(result, system.value)
        if written:
            console.print(f"Wrote {len(written)} files to {written[0].parent}/", highlight=False)
        print_caution()
    report_problems(result.problems, len(result.sections))
    if result.problems:
        raise typer.Exit(2)
