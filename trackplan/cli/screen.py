"""``trackplan screen``: risk days of every section over its temperature history."""

from __future__ import annotations

import math
from pathlib import Path
from typing import Optional

import typer
from rich.table import Table

from trackplan import CAUTION, units
from trackplan.cli.common import (COLUMN_OPTION, JSON_OPTION, TZ_OPTION, UNITS_OPTION, UnitSystem, command, console, emit_json, err_console,
                                  parse_option, print_caution, progress_enabled)
from trackplan.cli.network import (REGISTER_OPTION, SECTIONS_ARG, STRICT_OPTION, print_records, read_sections,
                                   report_problems)
from trackplan.errors import InputError

_LEVEL_STYLE = {"watch": "yellow", "restrict": "bold red", "critical": "bold magenta", "cold": "bold blue"}
_LEVEL_COLOUR = {"watch": "#f1c40f", "restrict": "#e67e22", "critical": "#c0392b", "cold": "#2e86c1"}
#: Sections drawn in the plots (worst first); every section is in the CSV files.
PLOT_SECTIONS_TIMELINE = 30
PLOT_SECTIONS_ANNUAL = 12


def build_options(date_from, date_to, months, warming, neutral_override, watch_fraction, system):
    """Parse the command-line options into :class:`trackplan.screening.ScreenOptions`."""
    from trackplan import screening

    start = screening.parse_date(date_from, "--from") if date_from is not None else None
    end = screening.parse_date(date_to, "--to") if date_to is not None else None
    mo = screening.parse_months(months) if months is not None else None
    warm, _ = parse_option(warming, "temperature_difference", "--warming", system, required=False)
    tn, _ = parse_option(neutral_override, "temperature", "--neutral-override", system, required=False)
    return screening.ScreenOptions(start=start, end=end, months=mo, warming_K=warm or 0.0,
                                   neutral_override_C=tn, watch_fraction=watch_fraction).validate()


def run_screen(sections_file: Path, options, strict: bool, register: Path | None = None, column=None, tz=None):
    """Read the section file (and the register, if given) and screen its sections; returns the ScreenResult
    (its ``neutral_entries``: section id -> register entry id of the latest neutral, or None)."""
    from trackplan import columns
    from trackplan.assess import Assessor
    from trackplan.screening import Screener

    sf = read_sections(sections_file, strict, register)
    screener = Screener(Assessor(columns=columns.parse_options(column), tz=tz), options)
    if progress_enabled() and len(sf.sections) > 3:
        from rich.progress import Progress

        # no refresh thread (auto_refresh=False): worker processes are forked during the run
        with Progress(console=err_console, transient=True, auto_refresh=False) as bar:
            task = bar.add_task("screening sections", total=len(sf.sections))
            result = screener.screen_all(sf.sections, progress=lambda: (bar.advance(task), bar.refresh()))
    else:
        result = screener.screen_all(sf.sections)
    result.problems = sf.problems + result.problems
    result.neutral_entries = {s.id: s.neutral_entry_id for s in sf.sections}
    if strict and result.problems:
        raise result.problems[0]
    return result


# --------------------------------------------------------------------------
# Terminal
# --------------------------------------------------------------------------


def _per_year(v) -> str:
    return "–" if v is None else f"{v:.1f}"


def _trend_text(t) -> str:
    if t.heat_days_per_decade is None:
        return "–"
    se = f" ± {t.heat_days_per_decade_se:.1f}" if t.heat_days_per_decade_se is not None else ""
    return f"{t.heat_days_per_decade:+.1f}{se}"


def print_summary(result, s: str) -> None:
    from trackplan.screening import rank_key

    secs = sorted(result.sections, key=rank_key)
    dT = lambda v: units.number(v, "temperature_difference", s)
    table = Table(title="Risk days per section (days per complete year; worst first)")
    for h, j in (("section", "left"), ("record", "left"), ("complete years", "right"), ("missing days", "right"),
                 ("watch", "right"), ("restrict", "right"), ("critical", "right"), ("cold", "right"),
                 (units.header("worst day: rise / allowable", "temperature_difference", s), "left"),
                 ("heat-day trend (days/decade)", "right")):
        table.add_column(h, justify=j, overflow="fold")
    for r in secs:
        w = r.worst_day
        worst = "–" if w is None else f"{w.date.isoformat()}: {dT(w.rise_K)} / {dT(w.allowable_rise_K)}" + (
            f" [{_LEVEL_STYLE[w.level]}]{w.level}[/]" if w.level else "")
        table.add_row(
            r.id, f"{r.first_date.isoformat()} – {r.last_date.isoformat()}", str(r.complete_years),
            str(r.missing_days),
            *[f"[{_LEVEL_STYLE[lev]}]{_per_year(r.days_per_year(lev))}[/]" if r.days_per_year(lev) else
              _per_year(r.days_per_year(lev)) for lev in ("watch", "restrict", "critical", "cold")],
            worst, _trend_text(r.trend),
        )
    console.print(table)

    worst = sorted((d for r in result.sections for d in r.worst_days[:3] if d.level is not None),
                   key=lambda d: d.margin_K)[:10]
    sec_of = {id(d): r.id for r in result.sections for d in r.worst_days}
    if worst:
        wt = Table(title="Worst days (smallest margin to the allowable rise)")
        for h, j in (("section", "left"), ("date", "left"), ("level", "left"),
                     (units.header("rail max", "temperature", s), "right"),
                     (units.header("neutral less drift", "temperature", s), "right"),
                     (units.header("rise", "temperature_difference", s), "right"),
                     (units.header("allowable", "temperature_difference", s), "right")):
            wt.add_column(h, justify=j)
        for d in worst:
            wt.add_row(sec_of[id(d)], d.date.isoformat(), f"[{_LEVEL_STYLE[d.level]}]{d.level}[/]",
                       units.number(d.rail_temperature_C, "temperature", s),
                       units.number(d.neutral_temperature_C, "temperature", s), dT(d.rise_K),
                       dT(d.allowable_rise_K))
        console.print(wt)

    trends = [r for r in secs if r.trend.heat_days_per_decade is not None]
    if trends:
        worst_t = max(trends, key=lambda r: r.trend.heat_days_per_decade)
        t = worst_t.trend
        console.print(
            "Trend: least-squares slope (as numpy.polyfit, degree 1) of the heat days (watch or worse) per complete year, in days "
            f"per decade ± standard error. Steepest: {worst_t.id} {t.heat_days_per_decade:+.1f} days per decade "
            f"(restrict or worse {t.restrict_days_per_decade:+.1f}, cold {t.cold_days_per_decade:+.1f}; {t.note}).",
            highlight=False)
    for n in sorted({r.trend.note for r in secs if r.trend.heat_days_per_decade is None}):
        console.print(f"No trend: {n}.", highlight=False)
    notes = sorted({n for r in secs for n in r.notes if not n.startswith("days before the neutral date")})
    replay = sum(any(n.startswith("days before the neutral date") for n in r.notes) for r in secs)
    o = result.options
    console.print(
        f"Levels: watch from {o.watch_fraction:.0%} of the allowable rise, restrict from the allowable rise, critical "
        "from the lower critical rise; heat rise above the neutral less drift, cold (tension or break gap beyond "
        "the limits) with the neutral without drift. Days with missing data are not counted. Screening counts the "
        "days of the record; `trackplan check` judges the design (return-level) temperatures, which can lie beyond "
        "every recorded day, so a section can be 'act' there with no restrict day here.", highlight=False)
    if replay:
        console.print(f"{replay} section(s) are screened before their neutral date with the recorded neutral "
                      "temperature: a replay of the climate on the section as recorded, not its past.",
                      highlight=False)
    for n in notes:
        console.print(n, highlight=False)


# --------------------------------------------------------------------------
# Files
# --------------------------------------------------------------------------


def timeline_figure(result, system: str = "si"):
    """Flagged days of the worst sections on a time line, one row per section."""
    import matplotlib.pyplot as plt
    import numpy as np

    from trackplan.screening import rank_key

    secs = sorted(result.sections, key=rank_key)[:PLOT_SECTIONS_TIMELINE]
    fig, ax = plt.subplots(figsize=(10, 1.2 + 0.32 * max(len(secs), 1)))
    for row, r in enumerate(secs):
        f = r.flagged
        for lev in ("watch", "restrict", "critical", "cold"):
            m = f.level == lev
            if m.any():
                ax.scatter(f.date[m].astype("datetime64[D]").astype("O"), np.full(int(m.sum()), row), marker="|",
                           s=60, color=_LEVEL_COLOUR[lev], label=lev if row == 0 or lev not in
                           ax.get_legend_handles_labels()[1] else None)
        ax.plot([r.first_date, r.last_date], [row, row], color="0.85", lw=0.6, zorder=0)
    ax.set_yticks(range(len(secs)), [r.id for r in secs], fontsize=7)
    ax.invert_yaxis()
    ax.set_xlabel("date")
    more = len(result.sections) - len(secs)
    ax.set_title("Flagged days" + (f" ({len(secs)} worst of {len(result.sections)} sections)" if more > 0 else ""),
                 fontsize=10)
    handles, labels = ax.get_legend_handles_labels()
    uniq = dict(zip(labels, handles))
    if uniq:
        ax.legend(uniq.values(), uniq.keys(), fontsize=7, loc="upper left", bbox_to_anchor=(1.0, 1.0))
    ax.grid(axis="x", alpha=0.3)
    return fig


def annual_figure(result, system: str = "si"):
    """Days per year per level for the worst sections, cold days downward, with the heat-day trend line."""
    import matplotlib.pyplot as plt
    import numpy as np

    from trackplan.screening import rank_key

    secs = sorted(result.sections, key=rank_key)[:PLOT_SECTIONS_ANNUAL]
    n = max(len(secs), 1)
    cols = 2 if n > 1 else 1
    rows = math.ceil(n / cols)
    fig, axes = plt.subplots(rows, cols, figsize=(5.0 * cols, 2.1 * rows), squeeze=False)
    for k, (ax, r) in enumerate(zip(axes.ravel(), secs)):
        a = r.annual
        # stacked steps, one polygon per level (as fast as a bar chart is slow)
        bottom = np.zeros(a.year.size)
        for lev, col in (("watch", a.watch_days), ("restrict", a.restrict_days), ("critical", a.critical_days)):
            ax.fill_between(a.year, bottom, bottom + col, step="mid", color=_LEVEL_COLOUR[lev], label=lev, lw=0)
            bottom = bottom + col
        ax.fill_between(a.year, 0, -a.cold_days, step="mid", color=_LEVEL_COLOUR["cold"], label="cold (down)", lw=0)
        part = ~a.complete
        if part.any():
            ax.plot(a.year[part], np.zeros(int(part.sum())), "x", color="0.4", label="incomplete year")
        t = r.trend
        if t.heat_days_per_decade is not None:
            x = a.year[a.complete].astype(float)
            p = np.polyfit(x, a.heat_days[a.complete].astype(float), 1)
            ax.plot(x, np.polyval(p, x), "k--", lw=1, label="trend of heat days")
        ax.axhline(0, color="k", lw=0.5)
        trend = "no trend" if t.heat_days_per_decade is None else f"trend {t.heat_days_per_decade:+.1f} days/decade"
        ax.set_title(f"{r.id}: days per year, cold below ({trend})", fontsize=8)
        ax.set_ylabel("days", fontsize=8)
        ax.tick_params(labelsize=7)
        if k == 0:
            ax.legend(fontsize=6, loc="upper left")
        ax.grid(axis="y", alpha=0.3)
    for ax in axes.ravel()[len(secs):]:
        ax.set_visible(False)
    if len(result.sections) > len(secs):
        fig.suptitle(f"{len(secs)} worst of {len(result.sections)} sections; every section in annual_counts.csv",
                     fontsize=9)
    fig.subplots_adjust(hspace=0.45, wspace=0.18)
    return fig


def write_outputs(out: Path, result, sections_file: Path, system: str) -> list[Path]:
    """flagged_days.csv, annual_counts.csv, screen_summary.csv and the two plots."""
    import pandas as pd

    from trackplan import reports, screening

    reports.matplotlib_backend()
    inputs = [sections_file] + sorted({str(r.climate_path) for r in result.sections if r.climate_path})
    out = reports.prepare_out_dir(out, inputs, planned=["flagged_days.csv", "annual_counts.csv", "screen_summary.csv",
                                                        "flagged_timeline.png", "annual_counts.png"])
    written = [
        reports.write_csv(out / "flagged_days.csv", screening.flagged_frame(result), inputs),
        reports.write_csv(out / "annual_counts.csv", screening.annual_frame(result), inputs),
    ]
    rows = []
    for r in result.sections:
        j = screening.section_json(r)
        rows.append({
            "section": r.id, "name": r.name, "station": r.station, "first_date": j["first_date"],
            "last_date": j["last_date"], "screened_days": r.screened_days, "missing_days": r.missing_days,
            "complete_years": r.complete_years,
            **{f"{lev}_days": r.heat_days_by_level[lev] for lev in screening.LEVELS},
            "cold_days": r.cold_days,
            **{f"{lev}_days_per_year": j["days_per_year"][lev] for lev in screening.LEVELS + ("cold",)},
            "worst_date": j["worst_day"]["date"] if j["worst_day"] else None,
            "worst_rise_K": j["worst_day"]["rise_K"] if j["worst_day"] else None,
            "worst_allowable_rise_K": j["worst_day"]["allowable_rise_K"] if j["worst_day"] else None,
            "heat_days_per_decade": r.trend.heat_days_per_decade,
            "restrict_days_per_decade": r.trend.restrict_days_per_decade,
            "cold_days_per_decade": r.trend.cold_days_per_decade,
            "allowable_rise_K": r.allowable_rise_K, "critical_rise_K": j["critical_rise_K"],
            "critical_basis": r.critical_basis, "cold_limit_rise_K": r.cold_limit_rise_K,
        })
    written.append(reports.write_csv(out / "screen_summary.csv", pd.DataFrame(rows), inputs))
    written.append(reports.save_figure(out / "flagged_timeline.png", timeline_figure(result, system), inputs))
    written.append(reports.save_figure(out / "annual_counts.png", annual_figure(result, system), inputs))
    return written


@command("screen")
def screen_cmd(
    sections_file: Path = SECTIONS_ARG,
    date_from: Optional[str] = typer.Option(None, "--from", help="First day screened, YYYY-MM-DD (default: the record's first)."),
    date_to: Optional[str] = typer.Option(None, "--to", help="Last day screened, YYYY-MM-DD (default: the record's last)."),
    months: Optional[str] = typer.Option(None, "--months", help="Months screened, M1-M2 inclusive, e.g. 5-9; may wrap the year end (11-2), then years are seasons labelled by their start year."),
    warming: Optional[str] = typer.Option(None, "--warming", help="What-if: shift every daily rail temperature by this difference, e.g. '1.5 K' (a uniform shift, not a climate projection)."),
    neutral_override: Optional[str] = typer.Option(None, "--neutral-override", help="What-if: neutral temperature on every day, e.g. '35 degC' ('after destressing to this'; the drift allowance still applies on the heat side)."),
    watch_fraction: float = typer.Option(0.8, "--watch-fraction", help="'watch' from this fraction of the allowable rise (default 0.8, as in check)."),
    out: Optional[Path] = typer.Option(None, "--out", help="Folder for flagged_days.csv, annual_counts.csv, screen_summary.csv, flagged_timeline.png and annual_counts.png."),
    column: Optional[list[str]] = COLUMN_OPTION,
    tz: Optional[str] = TZ_OPTION,
    strict: bool = STRICT_OPTION,
    register: Optional[Path] = REGISTER_OPTION,
    system: UnitSystem = UNITS_OPTION,
    as_json: bool = JSON_OPTION,
) -> None:
    """Risk days in the temperature history: how often would each section have been at risk?

    For every day of each section's climate record: the daily maximum rail
    temperature against the day's neutral temperature less the drift allowance
    (recorded value, replaced by destressing and renewal events from their dates)
    and the day's allowable rise (reduced after tamping, ballast work or renewal
    and recovering over the event's recovery_days). Heat levels: watch (from
    0.8 of the allowable rise), restrict (from the allowable rise: a heat speed
    restriction would be advised under local rules), critical (from the lower
    critical rise). Cold: tension stress or break gap beyond the section's limits
    at the daily minimum, with the neutral without drift. Counts per year, worst
    days and the trend in days per decade.

    Exit code: 0 when every section was screened, 2 for bad input (good sections
    are still reported unless --strict).

    Example: trackplan screen examples/network.toml --months 5-9 --warming "1.5 K" --out screen-report
    """
    from trackplan import screening

    options = build_options(date_from, date_to, months, warming, neutral_override, watch_fraction, system.value)
    result = run_screen(sections_file, options, strict, register, column, tz)
    written = write_outputs(out, result, sections_file, system.value) if out is not None else []
    if as_json:
        emit_json({
            "sections": [{**screening.section_json(r), "neutral_entry_id": result.neutral_entries.get(r.id)}
                         for r in result.sections],
            "settings": screening.options_json(options),
            "levels": list(screening.LEVELS) + [screening.COLD_LEVEL],
            "problems": [str(p) for p in result.problems],
            "files": [str(p) for p in written],
            "caution": CAUTION,
        })
    else:
        if result.sections:
            print_summary(result, system.value)
            print_records([(r.climate_path.name, r.inputs.get('time_step'), r.inputs.get('tz'), r.warnings)
                           for r in result.sections])
        if register is not None:
            console.print(f"Neutral temperatures and events from the register {register} (entry ids with --json).",
                          highlight=False)
        if written:
            console.print(f"Wrote {len(written)} files to {written[0].parent}/ (flagged_days.csv, annual_counts.csv, "
                          "plots)", highlight=False)
        print_caution()
    report_problems(result.problems, len(result.sections))
    if result.problems:
        raise typer.Exit(2)
