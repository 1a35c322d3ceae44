"""``trackplan outlook``: future risk days of every section over a climate-projection ensemble."""

from __future__ import annotations

from pathlib import Path
from typing import List, Optional

import typer

from trackplan import CAUTION
from trackplan.cli.common import (JSON_OPTION, UNITS_OPTION, UnitSystem, command, console, emit_json, parse_option,
                                  print_caution)
from trackplan.cli.network import SECTIONS_ARG, STRICT_OPTION, report_problems
from trackplan.errors import InputError

SCHEDULER_OPTION = typer.Option(None, "--scheduler", help="Run on an existing Dask cluster at tcp://HOST:PORT (default: a local cluster sized to this machine).")
#: Fan charts drawn at most (every section is in the CSV and JSON).
PLOT_SECTIONS = 30


def build_options(baseline, periods, scenarios, neutral_override, watch_fraction, return_period, system):
    from trackplan import outlook as core
    from trackplan.outlook_run import OutlookOptions
    from trackplan.screening import NEUTRAL_RANGE_C

    base = core.parse_window(baseline, "--baseline")
    pers = []
    for text in periods or ["2021-2050,2041-2070,2071-2100"]:
        for part in str(text).split(","):
            if part.strip():
                pers.append(core.parse_window(part, "--periods"))
    tn, _ = parse_option(neutral_override, "temperature", "--neutral-override", system, required=False)
    if tn is not None and not NEUTRAL_RANGE_C[0] <= tn <= NEUTRAL_RANGE_C[1]:
        raise InputError(f"{tn:.1f} degC is outside {NEUTRAL_RANGE_C[0]:g}..{NEUTRAL_RANGE_C[1]:g} degC, the "
                         "range of neutral temperatures in practice", "--neutral-override")
    if not 0.0 < watch_fraction < 1.0:
        raise InputError(f"{watch_fraction:g} is outside 0..1 (exclusive); e.g. 0.8", "--watch-fraction")
    if return_period is not None and not 2 <= return_period <= 1000:
        raise InputError(f"{return_period:g} years is outside 2..1000", "--return-period")
    scen = tuple(s.strip().lower() for t in (scenarios or []) for s in str(t).split(",") if s.strip())
    return OutlookOptions(baseline=base, periods=tuple(pers), scenarios=scen, neutral_override_C=tn,
                          watch_fraction=watch_fraction, return_period_years=return_period)


def _cell(d) -> str:
    """``median (p10-p90)``, one decimal below 100 (days per year), none above (to fit 100 columns)."""
    if not d:
        return "–"
    digits = 0 if max(abs(d["median"]), abs(d["p10"]), abs(d["p90"])) >= 99.95 else 1
    return f"{d['median']:.{digits}f} ({d['p10']:.{digits}f}-{d['p90']:.{digits}f})"


def print_table(res, system: str) -> None:
    """Sections x scenario x period, fitting 100 columns."""
    from rich.table import Table

    from trackplan import units

    tu = units.label(units.display_unit("temperature", system))
    du = units.label(units.display_unit("temperature_difference", system))
    t = Table(title="Climate outlook: ensemble median (p10-p90) over models", title_justify="left",
              header_style="bold", box=None, pad_edge=False, padding=(0, 1, 0, 0))
    for name, just in (("section", "left"), ("scen.", "left"), ("period", "left"), ("n", "right"),
                       ("restrict/yr", "right"), ("critical/yr", "right"), ("cold/yr", "right"),
                       (f"design max ({tu})", "right"), (f"change ({du})", "right")):
        t.add_column(name, justify=just, no_wrap=True)
    f = lambda d, kind: "–" if not d else "{} ({}-{})".format(*(units.number(d[q], kind, system, 0)
                                                             for q in ("median", "p10", "p90")))
    for s in res.sections:
        first = True
        for r in s.periods:
            ch = r["change_from_baseline"].get("design_max_rail_temperature_K")
            t.add_row(s.id if first else "", r["scenario"], r["period"] + ("*" if r["baseline"] else ""),
                      str(r["models"]), _cell(r["restrict_days_per_year"]), _cell(r["critical_days_per_year"]),
                      _cell(r["cold_days_per_year"]), f(r["design_max_rail_temperature_C"], "temperature"),
                      "" if r["baseline"] else ("–" if not ch else "{:+.1f}".format(
                          units.convert_for_display(ch["median"], "temperature_difference", system)[0])))
            first = False
    console.print(t)
    console.print("* baseline. restrict/critical/cold: days per year (restrict excludes critical days, as in "
                  "screen). change: median change of the design maximum from each model's baseline.",
                  highlight=False)
    from trackplan.outlook import BIAS_ADJUSTMENT_NOTE

    console.print(BIAS_ADJUSTMENT_NOTE, highlight=False)
    e = res.engine
    console.print(f"Engine: Dask, scheduler {e['scheduler']}, {e['workers']} worker(s); "
                  f"{len(res.runs)} run(s).", highlight=False)
    for w in res.warnings:
        console.print(f"warning [{w.code}]: {w}", highlight=False, markup=False)


def write_outputs(out: Path, res, sections_file: Path, projections_dir: Path, system: str) -> list:
    import datetime as dt

    from trackplan import outlook_report, reports

    reports.matplotlib_backend()
    plotted = res.sections[:PLOT_SECTIONS]
    planned = ["outlook.csv", "outlook_summary.html"] + [f"outlook_{s.id}.png" for s in plotted]
    inputs = [sections_file] + sorted({s.record for s in res.sections}) + [
        f for r in res.runs for f in r["files"]]
    out = reports.prepare_out_dir(out, inputs, planned=planned)
    written = [reports.write_csv(out / "outlook.csv", outlook_report.csv_frame(res), inputs)]
    pngs = {}
    for s in plotted:
        png = reports.figure_png_bytes(outlook_report.fan_figure(s, system))
        written.append(reports.write_atomic(out / f"outlook_{s.id}.png", lambda p, b=png: p.write_bytes(b), inputs))
        pngs[s.id] = png
    html = outlook_report.html_summary(res, pngs, CAUTION, system,
                                       f"Generated {dt.date.today().isoformat()} from {sections_file.name} and "
                                       f"{projections_dir}.")
    written.append(reports.write_text(out / "outlook_summary.html", html, inputs))
    return written


@command("outlook")
def outlook_cmd(
    sections_file: Path = SECTIONS_ARG,
    projections: Path = typer.Option(..., "--projections", help="Folder of CF NetCDF files of daily tasmax and tasmin: one file (or set) per model and experiment, historical plus scenarios."),
    baseline: str = typer.Option("1991-2020", "--baseline", help="Baseline years Y1-Y2: the bias adjustment is trained on them (with the station record) and changes are from them."),
    periods: Optional[List[str]] = typer.Option(None, "--periods", help="Periods Y1-Y2, comma-separated or repeated (default 2021-2050,2041-2070,2071-2100)."),
    scenario: Optional[List[str]] = typer.Option(None, "--scenario", help="Only these scenarios (experiment_id, e.g. ssp245); repeat or comma-separate. Default: every one found."),
    neutral_override: Optional[str] = typer.Option(None, "--neutral-override", help="What-if: neutral temperature of every section, e.g. '35 degC' (the drift allowance still applies on the heat side)."),
    watch_fraction: float = typer.Option(0.8, "--watch-fraction", help="'watch' from this fraction of the allowable rise (as in screen)."),
    return_period: Optional[float] = typer.Option(None, "--return-period", help="Return period of the design maximum in years (default: each section's, 50)."),
    scheduler: Optional[str] = SCHEDULER_OPTION,
    workers: Optional[int] = typer.Option(None, "--workers", help="Workers of the local cluster (default: one per core, at most 8)."),
    out: Optional[Path] = typer.Option(None, "--out", help="Folder for outlook.csv, one fan chart per section (outlook_ID.png) and outlook_summary.html."),
    strict: bool = STRICT_OPTION,
    system: UnitSystem = UNITS_OPTION,
    as_json: bool = JSON_OPTION,
) -> None:
    """Future risk days per section from a bias-adjusted climate-model ensemble.

    For each section and each model run (model and scenario): the nearest grid
    cell (distance reported), quantile delta mapping of the model's daily
    maximum and minimum against the section's own station record over the
    baseline (once per station, cell, model and scenario), the daily rail
    temperature path, and the section's neutral, allowable and critical rises as
    screen uses them. Per scenario and period: restrict, critical and cold days
    per year and the design maximum rail temperature, as the ensemble median
    and 10th-90th percentile over models, with the change from the baseline.
    Runs on Dask: a local cluster by default, --scheduler for an existing one.

    Exit code: 0 when everything was computed, 2 for bad input (what could be
    computed is still reported unless --strict).

    Example: trackplan outlook examples/network.toml --projections examples/projections --out outlook-report
    """
    from trackplan.engine import dask_engine
    from trackplan.outlook_run import run_outlook
    from trackplan.outlook_report import result_json
    from trackplan.sections import load_sections

    options = build_options(baseline, periods, scenario, neutral_override, watch_fraction, return_period,
                            system.value)
    if workers is not None and not 1 <= workers <= 256:
        raise InputError(f"{workers} workers is outside 1..256", "--workers")
    if not projections.is_dir():
        raise InputError("not a folder of NetCDF files", f"--projections {projections}")
    sf = load_sections(sections_file, strict=strict)
    with dask_engine(scheduler, workers) as engine:
        res = run_outlook(sf.sections, projections, options, engine)
    res.problems = sf.problems + res.problems
    if strict and res.problems:
        raise res.problems[0]
    written = write_outputs(out, res, sections_file, projections, system.value) if out is not None and res.sections \
        else []
    if as_json:
        emit_json(result_json(res, CAUTION, written))
    else:
        if res.sections:
            print_table(res, system.value)
        if written:
            console.print(f"Wrote {len(written)} files to {written[0].parent}/ (outlook.csv, fan charts, "
                          "outlook_summary.html)", highlight=False)
        print_caution()
    report_problems(res.problems, len(res.sections))
    if res.problems:
        raise typer.Exit(2)
