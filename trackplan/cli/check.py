"""``trackplan check``: the pre-summer check of every welded section."""

from __future__ import annotations

import datetime as dt
from pathlib import Path
from typing import Optional

import typer
from rich.markup import escape
from rich.table import Table

from trackplan import CAUTION, __version__, units
from trackplan.assessment_tables import network_json
from trackplan.cli.common import (ALLOW_SHORT_OPTION, COLUMN_OPTION, JSON_OPTION, TZ_OPTION, UNITS_OPTION, UnitSystem,
                                  command, console, emit_json, print_caution, wide_console)
from trackplan.cli.network import (DISTRIBUTION_OPTION, PRIORITY_OPTION, REGISTER_OPTION, RETURN_PERIOD_OPTION,
                                   SCHEDULER_OPTION, SECTIONS_ARG, STRICT_OPTION, load_and_assess, network_name, print_data_warnings,
                                   print_network_footer,
                                   report_problems)

_STYLE = {"act": "bold red", "watch": "yellow", "ok": "green"}


def print_checks(results, s: str, wide: bool = False) -> None:
    """The check table (fits 100 columns; --wide adds forces and the target), then
    each section's reasons and action."""
    from trackplan.actions import section_action

    if not results:
        console.print("No section could be checked (see the problems below).", highlight=False)
        return
    tu = units.label(units.display_unit("temperature", s))
    du = units.label(units.display_unit("temperature_difference", s))
    table = Table(title=f"Pre-summer check, worst first (temperatures in {tu}, rises in {du})")
    heads = [("section", "left"), ("verdict", "left"), ("neutral now", "right"), ("design max", "right"),
             ("rise", "right"), ("allowable", "right"), ("margin", "right"), ("design min", "right"),
             (units.header("break gap", "short_length", s), "right")]
    if wide:
        heads += [(units.header("compr. per rail", "force", s), "right"),
                  (units.header("tension per rail", "force", s), "right"), ("target neutral", "right")]
    for h, j in heads:
        table.add_column(h, justify=j, no_wrap=False)
    us = s == "us"
    for a in results:
        c = a.check
        row = [
            a.section.id, f"[{_STYLE[c.verdict]}]{c.verdict}[/]",
            units.number(c.current_neutral_temperature_C, "temperature", s),
            units.number(c.design_max_rail_temperature_C, "temperature", s),
            units.number(c.heat_rise_K, "temperature_difference", s),
            units.number(c.allowable_rise_K, "temperature_difference", s),
            units.number(c.heat_margin_K, "temperature_difference", s),
            units.number(c.design_min_rail_temperature_C, "temperature", s),
            units.number(c.pull_apart_gap_m, "short_length", s, 2 if us else 0),
        ]
        if wide:
            row += [units.number(c.max_compression_force_per_rail_N, "force", s, 1 if us else 0),
                    units.number(-c.max_tension_force_per_rail_N, "force", s, 1 if us else 0),
                    units.number(a.target.target_neutral_temperature_C, "temperature", s)]
        table.add_row(*row)
    (wide_console() if wide else console).print(table)
    for a in results:
        c = a.check
        console.print(f"[{_STYLE[c.verdict]}]{a.section.id} {c.verdict}[/]: " + "; ".join(escape(r) for r in c.reasons_in(s)),
                      highlight=False)
        action = section_action(a)
        if action is not None:
            console.print(f"  [bold]action:[/] {escape(action.text(s))}", highlight=False)
    print_data_warnings(results, s)


def check_settings(return_period, distribution: str, system: str) -> list[tuple[str, str]]:
    """The settings a check was made with, as (name, value) pairs for the output files."""
    return [("return period", "each section's" if return_period is None else f"{return_period:g} years"),
            ("distribution", distribution), ("units", system)]


def envelope_name(section_id: str) -> str:
    """File name of a section's force envelope plot (safe for any id, see :func:`trackplan.reports.safe_name`)."""
    from trackplan.reports import safe_name

    return f"force_envelope_{safe_name(section_id)}.png"


def write_check_outputs(out: Path, results, sections_file: Path, system: str, settings=None) -> list[Path]:
    """CSV of all figures, a PNG force envelope per section, one HTML summary."""
    settings = check_settings(None, "gumbel", system) if settings is None else settings
    from trackplan import reports, tables

    reports.matplotlib_backend()
    inputs = [sections_file] + [a.section.climate_path for a in results]
    out = reports.prepare_out_dir(out, inputs, planned=["check.csv", "check_summary.html"] +
                                  [envelope_name(a.section.id) for a in results])
    written = [reports.write_csv(out / "check.csv", tables.frame(reports.check_rows(results)), inputs,
                                 settings=[("command", "trackplan check"), ("section file", str(sections_file)),
                                           *settings])]
    pngs = {}
    for a in results:
        png = reports.figure_png_bytes(reports.force_envelope_figure(a, system))
        pngs[a.section.id] = png
        written.append(reports.write_atomic(out / envelope_name(a.section.id),
                                            lambda p, b=png: p.write_bytes(b), inputs))
    html = reports.check_html(results, pngs, CAUTION, system=system, network=network_name(sections_file),
                              generated=f"Section file {sections_file.name}; generated {dt.date.today().isoformat()} "
                                        f"by trackplan {__version__} check.",
                              settings="Settings: " + ", ".join(f"{k} {v}" for k, v in settings) + ".")
    written.append(reports.write_text(out / "check_summary.html", html, inputs))
    return written


@command("check")
def check_cmd(
    sections_file: Path = SECTIONS_ARG,
    out: Optional[Path] = typer.Option(None, "--out", help="Folder for check.csv, a force-envelope PNG per section and check_summary.html."),
    return_period: Optional[float] = RETURN_PERIOD_OPTION,
    distribution: str = DISTRIBUTION_OPTION,
    priority: str = PRIORITY_OPTION,
    column: Optional[list[str]] = COLUMN_OPTION,
    tz: Optional[str] = TZ_OPTION,
    allow_short: bool = ALLOW_SHORT_OPTION,
    strict: bool = STRICT_OPTION,
    register: Optional[Path] = REGISTER_OPTION,
    scheduler: Optional[str] = SCHEDULER_OPTION,
    system: UnitSystem = UNITS_OPTION,
    wide: bool = typer.Option(False, "--wide", help="Add the forces per rail and the target neutral temperature to the table."),
    as_json: bool = JSON_OPTION,
) -> None:
    """Pre-summer check: for every section, is its current neutral temperature safe?

    With the current neutral estimate (latest recorded value less the drift
    allowance): the compressive force at the design hot rail temperature and the
    margin to the allowable rise; with the recorded value: tension and the
    pull-apart gap at the design cold temperature. Verdict ok / watch / act with
    reasons, worst first.

    Exit code: 0 when no section needs action, 1 when any section is 'act' (for
    scripts), 2 for bad input (good sections are still reported unless --strict),
    3 for an internal error (a fault to report).

    Example: trackplan check examples/network.toml --out check-report
    """
    from trackplan.check import rank_key

    results, problems, _ = load_and_assess(sections_file, strict, return_period, distribution, register,
                                           priority, column=column, tz=tz, allow_short=allow_short,
                                           scheduler=scheduler)
    results = sorted(results, key=lambda a: rank_key(a.check))
    settings = check_settings(return_period, distribution, system.value)
    written = write_check_outputs(out, results, sections_file, system.value, settings) if out is not None else []
    if as_json:
        emit_json(network_json("check", results, problems, written))
    else:
        print_checks(results, system.value, wide)
        print_network_footer(results, register, written, "check_summary.html")
        print_caution()
    report_problems(problems, len(results))
    if problems:
        raise typer.Exit(2)
    if any(a.check.verdict == "act" for a in results):
        raise typer.Exit(1)
