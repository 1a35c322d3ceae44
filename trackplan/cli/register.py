"""``trackplan register ...``: the neutral-temperature register (an SQLite file).

A thin layer over :mod:`trackplan.register` (store, rules, queries),
:mod:`trackplan.marks` (the achieved neutral from a crew's job file) and
:mod:`trackplan.register_report` (history rows and plot, CSV). SQLAlchemy is
imported only inside the commands, so that light commands start fast.
"""

from __future__ import annotations

import datetime as dt
from pathlib import Path
from typing import Optional

import typer
from rich.markup import escape
from rich.table import Table

from trackplan import command_json, units
from trackplan.cli.common import (JSON_OPTION, UNITS_OPTION, UnitSystem, app, command, console, emit_json,
                                  parse_option, print_caution)
from trackplan.errors import InputError

register_app = typer.Typer(
    name="register", no_args_is_help=True,
    help="The neutral-temperature register: every section's neutral history (laid, destressed, adjusted, "
         "measured, repaired, tamped, renewed, notes) in an SQLite file, append-only.\n\n"
         "The file: --db PATH, else $TRACKPLAN_DB, else trackplan.sqlite in the current folder.",
)
app.add_typer(register_app, name="register")

DB_OPTION = typer.Option(None, "--db", help="Register file (default: $TRACKPLAN_DB, else trackplan.sqlite here).",
                         show_default=False)
BY_OPTION = typer.Option(None, "--by", help="Who enters this (required): name or staff id.")


def _open(db: Optional[Path], create: bool = False):
    from trackplan import register

    try:
        return register.open_register(db, create=create)
    except InputError as exc:
        raise InputError(exc.bare_message, f"--db {exc.where}") from None


def _by(by: Optional[str]) -> str:
    if by is None or not by.strip():
        raise InputError("every entry names who made it: add --by NAME (name or staff id)", "--by")
    return by.strip()


# --------------------------------------------------------------------------
# import
# --------------------------------------------------------------------------


@command("import", on=register_app)
def import_cmd(
    sections_file: Path = typer.Argument(..., help="Section file (TOML) whose sections, recorded neutral and events are imported."),
    by: Optional[str] = BY_OPTION,
    db: Optional[Path] = DB_OPTION,
    as_json: bool = JSON_OPTION,
) -> None:
    """Import sections with their recorded neutral temperature and events (idempotent).

    Creates the register if it does not exist. A fact already imported is not
    added again; a changed recorded neutral in the file is added as a new entry.
    A section file with a bad section is refused whole (nothing written).

    Example: trackplan register import examples/network.toml --by "J. Okafor" --db network.sqlite
    """
    from trackplan.cli.network import report_problems
    from trackplan.sections import load_sections

    who = _by(by)
    sf = load_sections(sections_file)
    if sf.problems:
        report_problems(sf.problems, 0)
        raise InputError(f"{len(sf.problems)} section(s) are bad; nothing imported (fix the file and import again)",
                         str(sections_file))
    reg = _open(db, create=True)
    counts = reg.import_sections(sf.sections, who, sections_file.name)
    if as_json:
        emit_json(command_json.register_import_json(reg.path, counts))
        return
    console.print(f"{reg.path}: {counts['sections_added']} section(s) and {counts['entries_added']} entries added; "
                  f"{counts['entries_present']} entries were already there.", highlight=False)


# --------------------------------------------------------------------------
# log
# --------------------------------------------------------------------------


@command("log", on=register_app)
def log_cmd(
    section: Optional[str] = typer.Argument(None, help="Section id (not with --job: the job file names it)."),
    kind: Optional[str] = typer.Option(None, "--kind", help="laid | destressed | adjusted | measured | repaired | tamped | renewed | note."),
    date: Optional[str] = typer.Option(None, "--date", help="Date of the work or measurement, YYYY-MM-DD."),
    neutral: Optional[str] = typer.Option(None, "--neutral", help="Neutral temperature set or measured, e.g. '31 degC'."),
    uncertainty: Optional[str] = typer.Option(None, "--uncertainty", help="Standard uncertainty of the neutral temperature, e.g. '2 K' (required for measured)."),
    method: Optional[str] = typer.Option(None, "--method", help="How it was measured, e.g. 'rail uplift' (required for measured)."),
    basis: Optional[str] = typer.Option(None, "--basis", help="How the figure is known, when not from the work itself: estimated | unknown."),
    recovery_days: Optional[int] = typer.Option(None, "--recovery-days", help="tamped/renewed: days over which the ballast recovers (default: the section file's)."),
    corrects: Optional[int] = typer.Option(None, "--corrects", help="Id of the entry this one corrects (a kind 'note' without --neutral withdraws it)."),
    job: Optional[Path] = typer.Option(None, "--job", help="Destress job file with a [readings] table of the crew's observed mark movements: the achieved neutral goes in."),
    by: Optional[str] = BY_OPTION,
    note: Optional[str] = typer.Option(None, "--note", help="Free text."),
    db: Optional[Path] = DB_OPTION,
    system: UnitSystem = UNITS_OPTION,
    as_json: bool = JSON_OPTION,
) -> None:
    """Add one entry to a section's history (nothing is edited or deleted: correct with --corrects).

    With --job: the destressing job file (its [destress] table, as for
    `trackplan destress --job`) and the crew's readings ([readings]: section,
    date, [[readings.marks]] at/movement); the neutral temperature achieved,
    computed back from the observed movements, goes in with its uncertainty.

    Example: trackplan register log KP-101 --kind measured --date 2026-05-20 --neutral "31 degC" --uncertainty "2 K" --method "rail uplift" --by "A. Byrne"

    Example: trackplan register log --job examples/pull-kp101.toml --by "A. Byrne"
    """
    from trackplan import register

    who = _by(by)
    reg = _open(db)
    if job is not None:
        given = {"SECTION": section, "--kind": kind, "--date": date, "--neutral": neutral, "--uncertainty": uncertainty,
                 "--method": method, "--basis": basis, "--corrects": corrects, "--recovery-days": recovery_days}
        clash = [k for k, v in given.items() if v is not None]
        if clash:
            raise InputError(f"{', '.join(clash)} cannot be given with --job (the job file says them)", "--job")
        entry, achieved, plan = job_entry(job, who, note)
    else:
        if section is None:
            raise InputError("give the section id (or --job FILE)", "SECTION")
        if kind is None:
            raise InputError(f"give --kind; accepted: {', '.join(register.KINDS)}", "--kind")
        if date is None:
            raise InputError("give --date YYYY-MM-DD", "--date")
        tn, _ = parse_option(neutral, "temperature", "--neutral", system, required=False)
        u, _ = parse_option(uncertainty, "temperature_difference", "--uncertainty", system, required=False)
        entry = register.NewEntry(
            section_id=section, kind=kind.strip().lower(), date=register.parse_date(date, "--date"), entered_by=who,
            neutral_temperature_C=tn, uncertainty_K=u, method=method, basis=basis, recovery_days=recovery_days,
            corrects=corrects, note=note)
        achieved = plan = None
    try:
        new_id = reg.log(entry)
    except InputError as exc:
        raise InputError(exc.bare_message, _option_of(exc.where)) from None
    s = system.value
    if as_json:
        written = next(e for e in reg.history(entry.section_id).entries if e.id == new_id)
        emit_json(command_json.register_log_json(new_id, entry, written, achieved, plan if achieved else None))
        return
    console.print(f"Entry {new_id} added to section {escape(entry.section_id)} ({entry.kind}).", highlight=False)
    if achieved is not None:
        T = lambda v: units.fmt(v, "temperature", s)  # noqa: E731
        console.print(
            f"Achieved neutral temperature {T(achieved.neutral_temperature_C)} ± "
            f"{units.fmt(achieved.uncertainty_K, 'temperature_difference', s)} (target {T(plan.target_neutral_C)}; "
            f"lowest stretch between marks {T(achieved.lowest_segment_C)}).", highlight=False)
        print_caution()


def _option_of(where: str | None) -> str | None:
    """The option a field error of the register comes from."""
    if where is None:
        return None
    for field, opt in (("neutral_temperature", "--neutral"), ("uncertainty", "--uncertainty"), ("method", "--method"),
                       ("basis", "--basis"), ("recovery_days", "--recovery-days"), ("entered_by", "--by"),
                       ("kind", "--kind"), ("date", "--date"), ("corrects", "--corrects")):
        if where.endswith(field):
            return f"{where[: -len(field)].strip()} {opt}".strip()
    return where


#: Register kind for each destressing mode.
MODE_KIND = {"free": "destressed", "heating": "destressed", "restrained": "adjusted", "repair": "repaired"}


def job_entry(path: Path, by: str, note: str | None):
    """The register entry of a destressing job file with the crew's readings.

    The job's ``[destress]`` table gives the plan (:func:`trackplan.destressing.plan_destressing`:
    base temperature, expansion coefficient, pulled lengths, target); its
    ``[readings]`` table the section, the date and the observed movements,
    inverted by :func:`trackplan.marks.achieved_from_readings`.

    Returns ``(NewEntry, Achieved, DestressPlan)``.
    """
    import tomllib

    from trackplan import destressing, marks, rails, register
    from trackplan.cli.destress import read_job
    from trackplan.cli.force import resolve_steel

    job = read_job(path)
    data = tomllib.loads(Path(path).read_text(encoding="utf-8"))
    rd = marks.read_readings(data, path)
    v = lambda k: job[k][0] if k in job else None  # noqa: E731
    where = f"{path} [destress]"
    if v("rail") is None or v("length") is None or v("rail_temp") is None:
        raise InputError("the job needs rail, length and rail_temp (as for trackplan destress --job)", where)
    profile = rails.get_profile(v("rail"), where=f"{where} rail")
    st = resolve_steel(profile, v("steel"), v("youngs_modulus"), v("alpha"))
    rem, opn = v("removed"), v("opening")
    mode = (v("mode") or ("repair" if (rem is not None or opn is not None) else
                          ("restrained" if v("current_neutral") is not None else "free"))).strip().lower()
    pull = (v("pull") or ("centre" if mode == "repair" else "end")).strip().lower()
    pull = {"center": "centre", "both": "centre", "one-end": "end"}.get(pull, pull)
    weld = destressing.weld_allowance(v("weld"), f"{where} weld") if v("weld") else None
    try:
        plan = destressing.plan_destressing(
            length_m=v("length"), rail_temperature_C=v("rail_temp"), target_neutral_C=v("target"),
            area_m2=profile.area_m2, E_Pa=st.E_Pa, alpha_per_K=st.alpha_per_K, mode=mode, pull=pull, weld=weld,
            current_neutral_C=v("current_neutral"), removed_length_m=rem, opening_m=opn,
            mark_spacing_m=v("marks"), tensor_capacity_N=v("tensor_capacity"),
            max_pull_length_m=destressing.MAX_PULL_LENGTH_M if v("max_pull") is None else v("max_pull"),
            observed_movement_m=v("observed_movement"), at_mark_m=v("at_mark"))
    except InputError as exc:
        raise InputError(exc.bare_message, f"{where} ({exc.where})") from None
    readings = rd["readings"]
    if not readings:
        if plan.observed_movement_m is None:
            raise InputError("no readings: add [[readings.marks]] tables (at, movement), or observed_movement and "
                             "at_mark in [destress]", f"{path} [readings]")
        readings = [marks.Reading(plan.at_mark_m, plan.observed_movement_m)]
    lp = plan.pulled_lengths_m[0]
    for r in readings:
        if r.half == "B" and plan.pull == "end":
            raise InputError("half B belongs to a pull towards a central cut (pull = \"centre\")", f"{path} [readings]")
        if r.at_m > lp * (1 + 1e-9):
            raise InputError(f"a mark at {r.at_m:g} m lies beyond the pulled length {lp:g} m", f"{path} [readings]")
    ach = marks.achieved_from_readings(readings, plan.base_temperature_C, plan.alpha_per_K, rd["base_uncertainty_K"],
                                       rd["reading_uncertainty_m"], plan.target_neutral_C)
    seg = min(ach.segments, key=lambda s: s[3])
    text = (f"target {plan.target_neutral_C:.1f} degC; base {plan.base_temperature_C:.1f} degC; lowest stretch "
            f"{seg[3]:.1f} degC between {seg[1]:g} and {seg[2]:g} m (half {seg[0]})")
    entry = register.NewEntry(
        section_id=rd["section"], kind=MODE_KIND[plan.mode], date=rd["date"], entered_by=by,
        source=f"job file {Path(path).name}", neutral_temperature_C=round(ach.neutral_temperature_C, 3),
        uncertainty_K=round(ach.uncertainty_K, 3),
        method=f"mark movements ({len(readings)} marks), {plan.mode} {plan.pull}",
        note=text + (f"; {note}" if note else ""))
    return entry, ach, plan


# --------------------------------------------------------------------------
# history, due
# --------------------------------------------------------------------------


@command("history", on=register_app)
def history_cmd(
    section: str = typer.Argument(..., help="Section id."),
    out: Optional[Path] = typer.Option(None, "--out", help="Folder for history_SECTION.png (neutral over time, uncertainty, events) and history_SECTION.csv."),
    db: Optional[Path] = DB_OPTION,
    system: UnitSystem = UNITS_OPTION,
    as_json: bool = JSON_OPTION,
) -> None:
    """A section's neutral-temperature history: every entry, the latest neutral, and a plot.

    Example: trackplan register history KP-101 --out register-report
    """
    from trackplan import register_report

    reg = _open(db)
    h = reg.history(section)
    s = system.value
    written = []
    if out is not None:
        written = _write_history(reg, h, out, s)
    latest = h.latest_neutral
    if as_json:
        emit_json({**command_json.register_history_json(section, h), "files": [str(p) for p in written]})
        return
    info = reg.section_info(section)
    table = Table(title=f"Neutral-temperature history: {section} {info['name']}")
    heads = [("id", "right"), ("date", "left"), ("kind", "left"), (units.header("neutral", "temperature", s), "right"),
             (units.header("±", "temperature_difference", s), "right"), ("basis", "left"), ("by", "left"),
             ("status", "left"), ("method; source; note", "left")]
    for name, j in heads:
        table.add_column(name, justify=j, overflow="fold")
    for r in register_report.history_rows(h, s):
        style = "dim" if r["status"].startswith("corrected") else None
        table.add_row(*(escape(r[k]) for k in ("id", "date", "kind", "neutral", "uncertainty", "basis", "by", "status",
                                                "details")), style=style)
    console.print(table)
    if latest is not None:
        u = f" ± {units.fmt(latest.uncertainty_K, 'temperature_difference', s)}" if latest.uncertainty_K else ""
        console.print(f"Latest neutral temperature: {units.fmt(latest.neutral_temperature_C, 'temperature', s)}{u} "
                      f"(entry {latest.id}, {latest.kind}, "
                      f"{latest.date.isoformat() if latest.date else 'undated'}, basis {latest.basis}).",
                      highlight=False)
    else:
        console.print("[bold red]No neutral temperature in the register for this section.[/]", highlight=False)
    if written:
        console.print(f"Wrote {', '.join(p.name for p in written)} to {written[0].parent}/", highlight=False)
    print_caution()


def _write_history(reg, h, out: Path, s: str) -> list[Path]:
    """history_<id>.png and history_<id>.csv (the entries of the history JSON, flattened; values as stored)."""
    from trackplan import register_report, reports, tables

    reports.matplotlib_backend()
    safe = "".join(c if c.isalnum() or c in "-_." else "_" for c in h.section_id)
    folder = reports.prepare_out_dir(out, [reg.path], planned=[f"history_{safe}.png", f"history_{safe}.csv"])
    rows = tables.csv_rows(command_json.register_history_json(h.section_id, h)["entries"])
    cols = list(rows[0]) if rows else ["id"]
    csv_path = reports.write_text(folder / f"history_{safe}.csv",
                                  register_report.csv_text(cols, [tuple(r[c] for c in cols) for r in rows]), [reg.path])
    png = reports.save_figure(folder / f"history_{safe}.png", register_report.history_figure(h, s), [reg.path])
    return [png, csv_path]


@command("due", on=register_app)
def due_cmd(
    older_than: str = typer.Option("5y", "--older-than", help="A neutral temperature not set or measured within this period is due: 5y, 18m, 26w, 90d."),
    db: Optional[Path] = DB_OPTION,
    as_json: bool = JSON_OPTION,
) -> None:
    """Sections due for a neutral-temperature check, most pressing first.

    Due: no neutral temperature in the register; the latest is unknown or
    estimated; tamped since it was last set or measured; not set or measured
    within --older-than; never measured in the track.

    Example: trackplan register due --older-than 5y
    """
    from trackplan import register

    days = register.parse_period(older_than, "--older-than")
    reg = _open(db)
    rows = register.due(reg.histories(), dt.date.today(), days)
    if as_json:
        emit_json(command_json.register_due_json(rows, days))
        return
    table = Table(title=f"Sections due for a neutral-temperature check (period {older_than})")
    for name in ("section", "last set or measured", "reason"):
        table.add_column(name, overflow="fold")
    for r in rows:
        table.add_row(escape(r["id"]), r["last_verified"].isoformat() if r["last_verified"] else "never",
                      escape(r["reason"]))
    console.print(table)
    console.print(f"{len(rows)} of {len(reg.section_ids())} section(s) due.", highlight=False)
    print_caution()


# --------------------------------------------------------------------------
# export, verify
# --------------------------------------------------------------------------


@command("export", on=register_app)
def export_cmd(
    out: Path = typer.Option(..., "--out", help="Folder for one CSV file per table (meta.csv, sections.csv, entries.csv)."),
    db: Optional[Path] = DB_OPTION,
) -> None:
    """Export the register: one CSV file per table, as stored.

    Example: trackplan register export --out register-export
    """
    from trackplan import register_report, reports

    reg = _open(db)
    tables = reg.table_rows()
    folder = reports.prepare_out_dir(out, [reg.path], planned=[f"{n}.csv" for n in tables])
    written = [reports.write_text(folder / f"{name}.csv", register_report.csv_text(cols, rows), [reg.path])
               for name, (cols, rows) in tables.items()]
    console.print(f"Wrote {', '.join(p.name for p in written)} to {folder}/", highlight=False)


@command("verify", on=register_app)
def verify_cmd(
    db: Optional[Path] = DB_OPTION,
    as_json: bool = JSON_OPTION,
) -> None:
    """Integrity check of the register: SQLite's own check, references, schema, the rules of every entry.

    Exit code 0 when consistent, 1 when problems were found.

    Example: trackplan register verify --db network.sqlite
    """
    reg = _open(db)
    problems = reg.verify()
    n = len(reg.entries())
    if as_json:
        emit_json(command_json.register_verify_json(reg.path, problems, n, len(reg.section_ids())))
    else:
        for p in problems:
            console.print(f"[bold red]problem:[/] {escape(p)}", highlight=False)
        console.print(f"{reg.path}: {n} entries, " + ("consistent." if not problems else f"{len(problems)} problem(s)."),
                      highlight=False)
    if problems:
        raise typer.Exit(1)
