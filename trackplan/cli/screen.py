"""``trackplan screen``: risk days of every section over its temperature history."""

from __future__ import annotations

import math
from pathlib import Path
from typing import Optional

import typer
from rich.markup import escape
from rich.table import Table

from trackplan import CAUTION, __version__, units
from trackplan.cli.common import (COLUMN_OPTION, JSON_OPTION, TZ_OPTION, UNITS_OPTION, UnitSystem, command, console,
                                  emit_json, err_console, parse_option, print_caution, progress_enabled, wide_console)
from trackplan.cli.network import (REGISTER_OPTION, SCHEDULER_OPTION, SECTIONS_ARG, STRICT_OPTION, print_records,
                                   read_records, read_sections, refuse_if_strict, report_problems)
from trackplan.errors import InputError
from trackplan.screen_report import MIN_TREND_DAYS, heat_total, rate_text, signed, trend_text

_LEVEL_STYLE = {"watch": "yellow", "restrict": "bold red", "critical": "bold magenta", "cold": "bold blue"}
_LEVEL_COLOUR = {"watch": "#f1c40f", "restrict": "#e67e22", "critical": "#c0392b", "cold": "#2e86c1"}
#: Sections drawn in the plots (worst first); every section is in the CSV files.
PLOT_SECTIONS_TIMELINE = 30
PLOT_SECTIONS_ANNUAL = 12


def build_options(date_from, date_to, months, warming, neutral_override, watch_fraction, system, season=None):
    """Parse the command-line options into :class:`trackplan.screening.ScreenOptions`."""
    from trackplan import screening

    start = screening.parse_date(date_from, "--from") if date_from is not None else None
    end = screening.parse_date(date_to, "--to") if date_to is not None else None
    mo = screening.parse_months(months, "--months") if months is not None else None
    warm, _ = parse_option(warming, "temperature_difference", "--warming", system, required=False)
    tn, _ = parse_option(neutral_override, "temperature", "--neutral-override", system, required=False)
    return screening.ScreenOptions(start=start, end=end, months=mo, warming_K=warm or 0.0,
                                   neutral_override_C=tn, watch_fraction=watch_fraction,
                                   season=None if season is None else season.strip().lower()).validate()


def run_screen(sections_file: Path, options, strict: bool, register: Path | None = None, column=None, tz=None,
               scheduler: str | None = None):
    """Read the section file (and the register, if given) and screen its sections; returns the ScreenResult
    (its ``neutral_entries``: section id -> register entry id of the latest neutral, or None)."""
    from trackplan import columns
    from trackplan.assess import Assessor
    from trackplan.screening import Screener

    sf = read_sections(sections_file, strict, register)
    screener = Screener(Assessor(columns=columns.parse_options(column, "--column"), tz=tz), options)
    from trackplan.engine import engine_for

    with engine_for(sf.sections, scheduler) as engine:
        if progress_enabled() and len(sf.sections) > 3:
            from rich.progress import Progress

            # no refresh thread (auto_refresh=False): stability worker processes may be forked during the run
            with Progress(console=err_console, transient=True, auto_refresh=False) as bar:
                read_records(screener.assessor, sf.sections, bar)
                task = bar.add_task("rail temperatures and risk days", total=len(sf.sections))
                result = screener.screen_all(sf.sections, engine=engine,
                                             progress=lambda: (bar.advance(task), bar.refresh()))
        else:
            result = screener.screen_all(sf.sections, engine=engine)
    result.problems = sf.problems + result.problems
    result.neutral_entries = {s.id: s.neutral_entry_id for s in sf.sections}
    refuse_if_strict(strict, result.problems)
    return result


# --------------------------------------------------------------------------
# Terminal
# --------------------------------------------------------------------------


_rate = rate_text
_signed = signed
_heat_total = heat_total
_trend_text = trend_text


def _count_cell(r, lev: str) -> str:
    """Days in the record and, in brackets, days per complete year."""
    n = r.cold_days if lev == "cold" else r.heat_days_by_level[lev]
    text = f"{n} ({_rate(r.days_per_year(lev))})"
    return f"[{_LEVEL_STYLE[lev]}]{text}[/]" if n else text


def _clear(t) -> bool:
    """A slope more than twice its standard error from zero."""
    se = t.heat_days_per_decade_se
    return se is not None and abs(t.heat_days_per_decade) > 2 * se


def trend_sentence(secs) -> str | None:
    """The largest increase and the largest decrease of heat days, each said with its
    standard error and whether it stands out from zero (more than two standard errors)."""
    with_trend = [r for r in secs if r.trend.heat_days_per_decade is not None and _heat_total(r) >= MIN_TREND_DAYS]
    if not with_trend:
        return None
    parts = []
    up = max(with_trend, key=lambda r: r.trend.heat_days_per_decade)
    down = min(with_trend, key=lambda r: r.trend.heat_days_per_decade)
    for word, r in (("Largest increase", up), ("Largest decrease", down)):
        t = r.trend
        if (t.heat_days_per_decade <= 0) if word == "Largest increase" else (t.heat_days_per_decade >= 0):
            continue
        clear = "clear (beyond two standard errors)" if _clear(t) else "within two standard errors of no change"
        parts.append(f"{word}: {r.id} {_signed(t.heat_days_per_decade)} ± {t.heat_days_per_decade_se or 0:.1f} "
                     f"heat days per decade, {clear}")
    if not parts:
        return "No section's heat days rise or fall over the record."
    return "; ".join(parts) + "."


def print_summary(result, s: str, wide: bool = False) -> None:
    from trackplan.screening import rank_key

    secs = sorted(result.sections, key=rank_key)
    dT = lambda v: units.number(v, "temperature_difference", s)
    table = Table(box=None, pad_edge=False, header_style="bold underline", title="Risk days per section, worst first: days in the record (per complete year); "
                  "trend of heat days per decade")
    heads = [("section", "left"), ("years", "right"), ("watch", "right"), ("restrict", "right"),
             ("critical", "right"), ("cold", "right"), ("worst day", "left"), ("trend", "right")]
    if wide:
        heads[1:1] = [("record", "left"), ("missing days", "right")]
        heads.insert(-1, (units.header("rise / allowable", "temperature_difference", s), "right"))
    for h, j in heads:
        table.add_column(h, justify=j, no_wrap=True)
    for r in secs:
        w = r.worst_day
        worst = "–" if w is None else w.date.isoformat() + (f" [{_LEVEL_STYLE[w.level]}]{w.level}[/]" if w.level else "")
        row = [r.id, str(r.complete_years), *[_count_cell(r, lev) for lev in ("watch", "restrict", "critical", "cold")],
               worst, _trend_text(r)]
        if wide:
            row[1:1] = [f"{r.first_date.isoformat()} – {r.last_date.isoformat()}", str(r.missing_days)]
            row.insert(-1, "–" if w is None else f"{dT(w.rise_K)} / {dT(w.allowable_rise_K)}")
        table.add_row(*row)
    (wide_console() if wide else console).print(table)

    worst = sorted((d for r in result.sections for d in r.worst_days[:3] if d.level is not None),
                   key=lambda d: d.margin_K)[:10]
    sec_of = {id(d): r.id for r in result.sections for d in r.worst_days}
    if worst:
        wt = Table(title="Worst days (smallest margin to the allowable rise)")
        for h, j in (("section", "left"), ("date", "left"), ("level", "left"),
                     (units.header("rail max", "temperature", s), "right"),
                     (units.header("neutral − drift", "temperature", s), "right"),
                     (units.header("rise", "temperature_difference", s), "right"),
                     (units.header("allowable", "temperature_difference", s), "right")):
            wt.add_column(h, justify=j)
        for d in worst:
            wt.add_row(sec_of[id(d)], d.date.isoformat(), f"[{_LEVEL_STYLE[d.level]}]{d.level}[/]",
                       units.number(d.rail_temperature_C, "temperature", s),
                       units.number(d.neutral_temperature_C, "temperature", s), dT(d.rise_K),
                       dT(d.allowable_rise_K))
        console.print(wt)

    sentence = trend_sentence(secs)
    console.print("Trend: least-squares slope (as numpy.polyfit, degree 1) of the heat days (watch or worse) per "
                  "complete year, in days per decade ± standard error; 'few days' below "
                  f"{MIN_TREND_DAYS} heat days in the record. " + (sentence or "No section has a trend to give."),
                  highlight=False)
    for n in sorted({r.trend.note for r in secs if r.trend.heat_days_per_decade is None}):
        console.print(f"No trend: {n}.", highlight=False)
    from trackplan.reports import grouped_warnings

    for station, ids, w in grouped_warnings((r.station, r.id, w) for r in secs for w in r.warnings):
        console.print(f"[yellow]Warning[/] ({station}; {', '.join(ids)}): {escape(units.text_in(w, s))}",
                      highlight=False)
    notes = sorted({n for r in secs for n in r.notes if n != r.replay_note})
    replay = sum(r.replay_note is not None for r in secs)
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
        console.print(units.text_in(n, s), highlight=False, markup=False)


# --------------------------------------------------------------------------
# Files
# --------------------------------------------------------------------------


def settings_pairs(o, system: str = "si") -> list[tuple[str, str]]:
    """The settings a screening was made with, as (name, value) pairs (every file records them)."""
    if o.season is not None:
        months = f"{o.season} at each station's hemisphere"
    elif o.months is not None:
        months = f"{o.months[0]}-{o.months[1]}"
    else:
        months = "all"
    return [
        ("command", "trackplan screen"),
        ("from", o.start.isoformat() if o.start else "start of each record"),
        ("to", o.end.isoformat() if o.end else "end of each record"),
        ("months", months),
        ("warming", units.fmt(o.warming_K, "temperature_difference", system) if o.warming_K else "none"),
        ("neutral override", units.fmt(o.neutral_override_C, "temperature", system)
         if o.neutral_override_C is not None else "none"),
        ("watch fraction", f"{o.watch_fraction:g}"),
    ]


def settings_line(o, system: str = "si") -> str:
    """The settings in one line for plot titles: months and the what-ifs."""
    pairs = dict(settings_pairs(o, system))
    parts = [f"months {pairs['months']}"]
    if o.start or o.end:
        parts.append(f"{pairs['from']} to {pairs['to']}")
    if o.warming_K:
        parts.append(f"what-if warming {units.fmt(o.warming_K, 'temperature_difference', system)}")
    if o.neutral_override_C is not None:
        parts.append(f"what-if neutral {pairs['neutral override']}")
    return "; ".join(parts)


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
    ax.set_title("Flagged days" + (f" ({len(secs)} worst of {len(result.sections)} sections)" if more > 0 else "")
                 + f"\n{settings_line(result.options, system)}", fontsize=10)
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
    fig, axes = plt.subplots(rows, cols, figsize=(5.0 * cols, 2.1 * rows + 0.6), squeeze=False)
    for k, (ax, r) in enumerate(zip(axes.ravel(), secs)):
        a = r.annual
        # stacked steps, one polygon per level (as fast as a bar chart is slow)
        bottom = np.zeros(a.year.size)
        for lev, col in (("watch", a.watch_days), ("restrict", a.restrict_days), ("critical", a.critical_days)):
            ax.fill_between(a.year, bottom, bottom + col, step="mid", color=_LEVEL_COLOUR[lev], label=lev, lw=0)
            bottom = bottom + col
        if a.cold_days.any():
            ax.fill_between(a.year, 0, -a.cold_days, step="mid", color=_LEVEL_COLOUR["cold"], label="cold (down)", lw=0)
        part = ~a.complete
        if part.any():
            ax.plot(a.year[part], np.zeros(int(part.sum())), "x", color="0.4", label="incomplete year")
        t = r.trend
        if t.heat_days_per_decade is not None and heat_total(r) >= MIN_TREND_DAYS:
            x = a.year[a.complete].astype(float)
            p = np.polyfit(x, a.heat_days[a.complete].astype(float), 1)
            ax.plot(x, np.polyval(p, x), "k--", lw=1, label="trend of heat days")
        ax.axhline(0, color="k", lw=0.5)
        tt = trend_text(r)
        trend = {"–": "no trend", "few days": "too few days for a trend"}.get(tt, f"trend {tt} days/decade")
        cold = ", cold below" if a.cold_days.any() else ""
        ax.set_title(f"{r.id}: heat days per year{cold} ({trend})", fontsize=8)
        ax.set_ylabel("days", fontsize=8)
        ax.tick_params(labelsize=7)
        # whole days only; an empty panel shows 0..1 day, not a stretch below zero
        top = max(1.0, float((a.watch_days + a.restrict_days + a.critical_days).max(initial=0)))
        bottom = -max(1.0, float(a.cold_days.max(initial=0))) if a.cold_days.any() else 0.0
        ax.set_ylim(bottom * 1.05, top * 1.08)
        ax.yaxis.get_major_locator().set_params(integer=True)
        ax.grid(axis="y", alpha=0.3)
    for ax in axes.ravel()[len(secs):]:
        ax.set_visible(False)
    more = (f"{len(secs)} worst of {len(result.sections)} sections (every section in annual_counts.csv); "
            if len(result.sections) > len(secs) else "")
    H = 2.1 * rows + 0.6
    fig.suptitle(f"Days per year by level: {more}{settings_line(result.options, system)}", fontsize=9,
                 y=1.0 - 0.08 / H)
    # one legend for every panel, above them, so that it covers no bar
    handles, labels = {}, []
    for ax in axes.ravel()[:len(secs)]:
        for h, lab in zip(*ax.get_legend_handles_labels()):
            handles.setdefault(lab, h)
    if handles:
        fig.legend(list(handles.values()), list(handles.keys()), fontsize=7, loc="upper center",
                   ncol=min(len(handles), 6), bbox_to_anchor=(0.5, 1.0 - 0.3 / H), frameon=False)
    fig.subplots_adjust(hspace=0.5, wspace=0.18, top=1.0 - 0.75 / H)
    return fig


def write_outputs(out: Path, result, sections_file: Path, system: str) -> list[Path]:
    """flagged_days.csv, annual_counts.csv, screen_summary.csv, the two plots and
    screen_summary.html; every file records the settings it was made with."""
    from trackplan import reports, screening, screening_tables, tables
    from trackplan.cli.network import network_name

    reports.matplotlib_backend()
    inputs = [sections_file] + sorted({str(r.climate_path) for r in result.sections if r.climate_path})
    out = reports.prepare_out_dir(out, inputs, planned=["flagged_days.csv", "annual_counts.csv", "screen_summary.csv",
                                                        "flagged_timeline.png", "annual_counts.png",
                                                        "screen_summary.html"])
    settings = [settings_pairs(result.options, "si")[0], ("section file", str(sections_file)),
                *settings_pairs(result.options, "si")[1:]]
    data = screening_tables.result_json(result)  # the summary and the annual counts are its rows
    written = [
        reports.write_csv(out / "flagged_days.csv", screening.flagged_frame(result), inputs, settings),
        reports.write_csv(out / "annual_counts.csv", tables.frame(screening_tables.annual_rows(data),
                                                                  screening_tables.ANNUAL_COLUMNS), inputs, settings),
        reports.write_csv(out / "screen_summary.csv", tables.frame(screening_tables.summary_rows(data)), inputs,
                          settings),
    ]
    pngs = {"flagged_timeline.png": reports.figure_png_bytes(timeline_figure(result, system)),
            "annual_counts.png": reports.figure_png_bytes(annual_figure(result, system))}
    for name, png in pngs.items():
        written.append(reports.write_atomic(out / name, lambda p, b=png: p.write_bytes(b), inputs))
    from trackplan.screen_report import screen_html

    html = screen_html(result, pngs, settings, system, network_name(sections_file), trend_sentence(
        sorted(result.sections, key=screening.rank_key)), f"Section file {sections_file.name}; trackplan "
        f"{__version__} screen.")
    written.append(reports.write_text(out / "screen_summary.html", html, inputs))
    return written


@command("screen")
def screen_cmd(
    sections_file: Path = SECTIONS_ARG,
    date_from: Optional[str] = typer.Option(None, "--from", help="First day screened, YYYY-MM-DD (default: the record's first)."),
    date_to: Optional[str] = typer.Option(None, "--to", help="Last day screened, YYYY-MM-DD (default: the record's last)."),
    months: Optional[str] = typer.Option(None, "--months", help="Months screened, M1-M2 inclusive, e.g. 5-9; may wrap the year end (11-2), then years are seasons labelled by their start year. The same months at every station: see --season."),
    season: Optional[str] = typer.Option(None, "--season", help="summer (May-September north of the equator, November-March south) or winter (the other way round), at each station's hemisphere; instead of --months."),
    warming: Optional[str] = typer.Option(None, "--warming", help="What-if: shift every daily rail temperature by this difference, e.g. '1.5 K' (a uniform shift, not a climate projection)."),
    neutral_override: Optional[str] = typer.Option(None, "--neutral-override", help="What-if: neutral temperature on every day, e.g. '35 degC' ('after destressing to this'; the drift allowance still applies on the heat side)."),
    watch_fraction: float = typer.Option(0.8, "--watch-fraction", help="'watch' from this fraction of the allowable rise (default 0.8, as in check)."),
    out: Optional[Path] = typer.Option(None, "--out", help="Folder for flagged_days.csv, annual_counts.csv, screen_summary.csv, flagged_timeline.png, annual_counts.png and screen_summary.html."),
    column: Optional[list[str]] = COLUMN_OPTION,
    tz: Optional[str] = TZ_OPTION,
    strict: bool = STRICT_OPTION,
    register: Optional[Path] = REGISTER_OPTION,
    scheduler: Optional[str] = SCHEDULER_OPTION,
    system: UnitSystem = UNITS_OPTION,
    wide: bool = typer.Option(False, "--wide", help="Add the record's dates, missing days and the worst day's rise to the table."),
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
    from trackplan import screening_tables

    options = build_options(date_from, date_to, months, warming, neutral_override, watch_fraction, system.value, season)
    result = run_screen(sections_file, options, strict, register, column, tz, scheduler)
    written = write_outputs(out, result, sections_file, system.value) if out is not None else []
    if as_json:
        emit_json({**screening_tables.result_json(result), "files": [str(p) for p in written], "caution": CAUTION})
    else:
        if result.sections:
            print_summary(result, system.value, wide)
            print_records([(r.climate_path.name, r.inputs.get('time_step'), r.inputs.get('tz'), r.warnings)
                           for r in result.sections])
        else:
            console.print("No section could be screened (see the problems below).", highlight=False)
        if register is not None:
            console.print(f"Neutral temperatures and events from the register {register} (entry ids with --json).",
                          highlight=False)
        if written:
            console.print(f"Wrote {len(written)} files to {written[0].parent}/ (summary: screen_summary.html)",
                          highlight=False)
        print_caution()
    report_problems(result.problems, len(result.sections))
    if result.problems:
        raise typer.Exit(2)
