"""``trackplan target``: recommended neutral temperature and laying range per section."""

from __future__ import annotations

from pathlib import Path
from typing import Optional

import typer
from rich.table import Table

from trackplan import units
from trackplan.assessment_tables import network_json
from trackplan.cli.common import (ALLOW_SHORT_OPTION, COLUMN_OPTION, JSON_OPTION, TZ_OPTION, UNITS_OPTION, UnitSystem,
                                  command, console, emit_json, print_caution)
from trackplan.cli.network import (DISTRIBUTION_OPTION, PRIORITY_OPTION, REGISTER_OPTION, RETURN_PERIOD_OPTION,
                                   SECTIONS_ARG, STRICT_OPTION, load_and_assess, print_data_warnings, print_network_footer,
                                   report_problems)


def print_targets(results, s: str) -> None:
    """Terminal table of targets (fits 100 columns)."""
    if not results:
        console.print("No section could be assessed (see the problems below).", highlight=False)
        return
    tu = units.label(units.display_unit("temperature", s))
    du = units.label(units.display_unit("temperature_difference", s))
    table = Table(title=f"Recommended neutral temperature (temperatures in {tu}, rise in {du})", box=None,
                  pad_edge=False, header_style="bold underline")
    for head, just in (("section", "left"), ("design max", "right"), ("design min", "right"),
                       ("allowable rise", "right"), ("feasible window", "right"), ("target", "right"),
                       ("laying range", "right"), ("cold limit", "left")):
        table.add_column(head, justify=just, no_wrap=True)
    T = lambda v: units.number(v, "temperature", s)
    for a in results:
        t = a.target
        win = f"{T(t.heat_floor_C)}–{T(t.cold_ceiling_C)}" if t.feasible else "[red]empty[/]"
        rng = f"{T(t.laying_range_C[0])}–{T(t.laying_range_C[1])}" if t.laying_range_C else "–"
        table.add_row(a.section.id, T(a.climate.design_max_C), T(a.climate.design_min_C),
                      units.number(a.allowable_rise_K, "temperature_difference", s), win,
                      f"[bold]{T(t.target_neutral_temperature_C)}[/]"
                      + ("" if t.feasible or t.target_neutral_temperature_C is None else "*"), rng,
                      {"pull-apart gap": "break gap", "tension stress": "stress"}.get(t.governing_cold, t.governing_cold))
    console.print(table)
    starred = sorted({a.target.priority for a in results
                      if not a.target.feasible and a.target.target_neutral_temperature_C is not None})
    if starred:
        console.print(f"* empty window: the target keeps the {' and '.join(starred)} limit first (--priority); "
                      "the risk on the other side is said below.", highlight=False)
    for a in results:
        t = a.target
        if not t.feasible:
            console.print(f"[bold red]{a.section.id}[/]: no neutral temperature satisfies both heat and cold limits "
                          f"({units.fmt(t.shortfall_K, 'temperature_difference', s)} short). What would open the window:",
                          highlight=False)
            if t.risk is not None:
                console.print(f"  {t.risk.text(s)}", highlight=False, markup=False)
            for o in t.openers:
                console.print(f"  • {o.text(s)}", highlight=False, markup=False)
        elif t.narrow:
            console.print(f"[yellow]{a.section.id}[/]: the window is narrower than the laying range; lay within it.",
                          highlight=False)
    print_data_warnings(results, s)
    if results:
        rules = "; ".join(
            f"{r.name} {units.number(r.neutral_C[0], 'temperature', s, 0)}"
            + (f"–{units.number(r.neutral_C[1], 'temperature', s, 0)}" if r.neutral_C[1] != r.neutral_C[0] else "")
            for r in results[0].practice if r.neutral_C)
        console.print(f"Regional practice for context (first section): {rules} "
                      f"({units.label(units.display_unit('temperature', s))}).", highlight=False)


def write_target_outputs(out: Path, results, sections_file: Path, system: str, return_period, distribution: str,
                         priority: str | None = None, register: Path | None = None):
    """target.csv (SI, settings in '# key: value' lines) and target_summary.html."""
    import datetime as dt

    from trackplan import __version__, reports, tables
    from trackplan.cli.network import network_name
    from trackplan.target_report import target_html, target_rows

    inputs = [sections_file] + [a.section.climate_path for a in results]
    out = reports.prepare_out_dir(out, inputs, planned=["target.csv", "target_summary.html"])
    settings = [("return period", "each section's" if return_period is None else f"{return_period:g} years"),
                ("distribution", distribution), ("priority of an empty window", priority),
                ("register", None if register is None else str(register)), ("units", system)]
    settings = [(k, v) for k, v in settings if v is not None]
    written = [reports.write_csv(out / "target.csv", tables.frame(target_rows(results)), inputs,
                                 [("command", "trackplan target"), ("section file", str(sections_file)), *settings])]
    page = target_html(results, system, network_name(sections_file),
                       "Settings: " + ", ".join(f"{k} {v}" for k, v in settings) + ".",
                       f"Section file {sections_file.name}; generated {dt.date.today().isoformat()} by trackplan "
                       f"{__version__} target.")
    written.append(reports.write_text(out / "target_summary.html", page, inputs))
    return written


@command("target")
def target_cmd(
    sections_file: Path = SECTIONS_ARG,
    return_period: Optional[float] = RETURN_PERIOD_OPTION,
    distribution: str = DISTRIBUTION_OPTION,
    priority: str = PRIORITY_OPTION,
    column: Optional[list[str]] = COLUMN_OPTION,
    tz: Optional[str] = TZ_OPTION,
    allow_short: bool = ALLOW_SHORT_OPTION,
    out: Optional[Path] = typer.Option(None, "--out", help="Folder for target.csv and target_summary.html."),
    strict: bool = STRICT_OPTION,
    register: Optional[Path] = REGISTER_OPTION,
    system: UnitSystem = UNITS_OPTION,
    as_json: bool = JSON_OPTION,
) -> None:
    """Recommend the neutral (stress-free) temperature to install on each welded section.

    From the design hot and cold rail temperatures (the section's climate record and
    return period), the allowable rise from the lateral stability analysis, the drift
    allowance and the cold-side limits (pull-apart gap, tension stress): the feasible
    window, a target biased to the hot side, and a laying range. An empty window is
    said plainly, with what would open it. Regional rules of practice are shown for
    context.

    Example: trackplan target examples/network.toml --units us
    """
    if out is not None:
        from trackplan import reports

        reports.prepare_out_dir(out, [sections_file])  # a bad --out is said before the work, not after
    results, problems, _ = load_and_assess(sections_file, strict, return_period, distribution, register,
                                           priority, column=column, tz=tz, allow_short=allow_short)
    written = write_target_outputs(out, results, sections_file, system.value, return_period, distribution,
                                   priority, register) if out is not None else []
    if as_json:
        emit_json(network_json("target", results, problems, written))
    else:
        print_targets(results, system.value)
        print_network_footer(results, register, written, "target_summary.html")
        print_caution()
    report_problems(problems, len(results))
    if problems:
        raise typer.Exit(2)
