"""``trackplan check``: the pre-summer check of every welded section."""

from __future__ import annotations

import datetime as dt
from pathlib import Path
from typing import Optional

import typer
from rich.markup import escape
from rich.table import Table

from trackplan import CAUTION, notices, units
from trackplan.cli.common import (ALLOW_SHORT_OPTION, COLUMN_OPTION, JSON_OPTION, TZ_OPTION, UNITS_OPTION, UnitSystem,
                                  command, console, emit_json, print_caution)
from trackplan.cli.network import (DISTRIBUTION_OPTION, PRIORITY_OPTION, REGISTER_OPTION, RETURN_PERIOD_OPTION,
                                   SECTIONS_ARG, STRICT_OPTION, load_and_assess, print_records,
                                   report_problems)

_STYLE = {"act": "bold red", "watch": "yellow", "ok": "green"}


def check_json(a) -> dict:
    c = a.check
    return {
        "id": a.section.id,
        "name": a.section.name,
        "verdict": c.verdict,
        "reasons": c.reasons,
        "current_neutral_temperature_C": c.current_neutral_temperature_C,
        "recorded_neutral_temperature_C": c.cold_neutral_temperature_C,
        "neutral_entry_id": a.section.neutral_entry_id,
        "design_max_rail_temperature_C": c.design_max_rail_temperature_C,
        "design_min_rail_temperature_C": c.design_min_rail_temperature_C,
        "max_compression_force_per_rail_kN": c.max_compression_force_per_rail_N / 1e3,
        "heat_rise_K": c.heat_rise_K,
        "allowable_rise_K": c.allowable_rise_K,
        "heat_margin_K": c.heat_margin_K,
        "max_tension_force_per_rail_kN": c.max_tension_force_per_rail_N / 1e3,
        "max_tension_stress_MPa": c.max_tension_stress_Pa / 1e6,
        "pull_apart_gap_mm": c.pull_apart_gap_m * 1e3,
        "target_neutral_temperature_C": a.target.target_neutral_temperature_C,
        "response": a.stability.response,
        "inputs": {"tz": a.climate.tz, "time_step": a.climate.time_step},
        "warnings": notices.to_json(a.climate.warnings),
    }


def print_checks(results, s: str) -> None:
    table = Table(title="Pre-summer check (worst first)")
    heads = [("section", "left"), ("verdict", "left"),
             (units.header("current neutral", "temperature", s), "right"),
             (units.header("design max", "temperature", s), "right"),
             (units.header("rise / allowable", "temperature_difference", s), "right"),
             (units.header("margin", "temperature_difference", s), "right"),
             (units.header("compr./rail", "force", s), "right"),
             (units.header("design min", "temperature", s), "right"),
             (units.header("break gap", "short_length", s), "right")]
    for h, j in heads:
        table.add_column(h, justify=j, overflow="fold")
    us = s == "us"
    for a in results:
        c = a.check
        table.add_row(
            a.section.id, f"[{_STYLE[c.verdict]}]{c.verdict}[/]",
            units.number(c.current_neutral_temperature_C, "temperature", s),
            units.number(c.design_max_rail_temperature_C, "temperature", s),
            f"{units.number(c.heat_rise_K, 'temperature_difference', s)} / "
            f"{units.number(c.allowable_rise_K, 'temperature_difference', s)}",
            units.number(c.heat_margin_K, "temperature_difference", s),
            units.number(c.max_compression_force_per_rail_N, "force", s, 1 if us else 0),
            units.number(c.design_min_rail_temperature_C, "temperature", s),
            units.number(c.pull_apart_gap_m, "short_length", s, 2 if us else 0),
        )
    console.print(table)
    for a in results:
        c = a.check
        console.print(f"[{_STYLE[c.verdict]}]{a.section.id} {c.verdict}[/]: " + "; ".join(escape(r) for r in c.reasons_in(s)),
                      highlight=False)


def write_check_outputs(out: Path, results, sections_file: Path, system: str) -> list[Path]:
    """CSV of all figures, a PNG force envelope per section, one HTML summary."""
    import pandas as pd

    from trackplan import reports

    reports.matplotlib_backend()
    inputs = [sections_file] + [a.section.climate_path for a in results]
    out = reports.prepare_out_dir(out, inputs, planned=["check.csv", "check_summary.html"] +
                                  [f"force_envelope_{a.section.id}.png" for a in results])
    written = [reports.write_csv(out / "check.csv", pd.DataFrame(reports.check_rows(results)), inputs)]
    pngs = {}
    for a in results:
        png = reports.figure_png_bytes(reports.force_envelope_figure(a, system))
        pngs[a.section.id] = png
        written.append(reports.write_atomic(out / f"force_envelope_{a.section.id}.png",
                                            lambda p, b=png: p.write_bytes(b), inputs))
    html = reports.check_html(results, pngs, CAUTION, system=system,
                              generated=f"Section file {sections_file.name}; generated {dt.date.today().isoformat()} "
                                        "by trackplan check.")
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
    system: UnitSystem = UNITS_OPTION,
    as_json: bool = JSON_OPTION,
) -> None:
    """Pre-summer check: for every section, is its current neutral temperature safe?

    With the current neutral estimate (latest recorded value less the drift
    allowance): the compressive force at the design hot rail temperature and the
    margin to the allowable rise; with the recorded value: tension and the
    pull-apart gap at the design cold temperature. Verdict ok / watch / act with
    reasons, worst first.

    Exit code: 0 when no section needs action, 1 when any section is 'act' (for
    scripts), 2 for bad input (good sections are still reported unless --strict).

    Example: trackplan check examples/network.toml --out check-report
    """
    from trackplan.check import rank_key

    results, problems, _ = load_and_assess(sections_file, strict, return_period, distribution, register,
                                           priority, column=column, tz=tz, allow_short=allow_short)
    results = sorted(results, key=lambda a: rank_key(a.check))
    written = write_check_outputs(out, results, sections_file, system.value) if out is not None else []
    if as_json:
        emit_json({"sections": [check_json(a) for a in results], "problems": [str(p) for p in problems],
                   "files": [str(p) for p in written], "caution": CAUTION})
    else:
        print_checks(results, system.value)
        print_records([(a.section.climate_path.name, a.climate.time_step, a.climate.tz, a.climate.warnings)
                       for a in results])
        if register is not None:
            console.print(f"Neutral temperatures and events from the register {register} (entry ids with --json).",
                          highlight=False)
        if written:
            console.print(f"Wrote {len(written)} files to {written[0].parent}/ (summary: check_summary.html)",
                          highlight=False)
        print_caution()
    report_problems(problems, len(results))
    if problems:
        raise typer.Exit(2)
    if any(a.check.verdict == "act" for a in results):
        raise typer.Exit(1)
