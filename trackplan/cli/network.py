"""Shared steps of the commands that work on a section file (target, check, demo):
read the file, assess every section with a progress bar on a terminal, report problems."""

from __future__ import annotations

from pathlib import Path

import typer

from trackplan.cli.common import err_console, print_error, progress_enabled
from trackplan import names
from trackplan.errors import InputError

SECTIONS_ARG = typer.Argument(..., help="Section file (TOML): [defaults] and one [sections.ID] table per welded section.")
STRICT_OPTION = typer.Option(False, "--strict", help="Refuse the whole file if any section is bad (default: assess the good ones, report the bad, exit 2).")
PRIORITY_OPTION = typer.Option("heat", "--priority", help="When a section's neutral window is empty: heat (default: never below the heat floor, cold-side risk stated) or cold.")
RETURN_PERIOD_OPTION = typer.Option(None, "--return-period", help="Return period of the design temperatures in years (default: each section's, 50).")
DISTRIBUTION_OPTION = typer.Option("gumbel", "--distribution", help="Extreme-value distribution for the design temperatures: gumbel or gev.")
REGISTER_OPTION = typer.Option(None, "--register", help="Neutral-temperature register (SQLite file of `trackplan register`): each section's neutral history and events come from it; the section file keeps the track description.")


def read_sections(path: Path, strict: bool, register: Path | None = None):
    """Read the section file; with ``register``, take each section's neutral history and
    events from the register (a section it does not hold is a problem, never silently
    assessed from the file). Returns the SectionFile."""
    from trackplan.sections import load_sections

    sf = load_sections(path)
    if register is not None:
        from trackplan.register import apply_register

        try:
            sf.sections, more = apply_register(sf.sections, register)
        except InputError as exc:
            raise InputError(exc.bare_message, f"--register {exc.where}") from None
        sf.problems = sf.problems + more
    refuse_if_strict(strict, sf.problems)
    return sf


SCHEDULER_OPTION = typer.Option(None, "--scheduler", help="Run on an existing Dask cluster at tcp://HOST:PORT (default: a local cluster sized to this machine for large networks, else in this process).")


def load_and_assess(path: Path, strict: bool, return_period: float | None, distribution: str,
                    register: Path | None = None, priority: str = "heat", column: list[str] | None = None,
                    tz: str | None = None, allow_short: bool = False, scheduler: str | None = None):
    """Read the section file (and the register, if given) and assess its sections.

    ``column`` (``--column`` texts), ``tz`` and ``allow_short`` override every section's.
    Returns ``(assessments, problems, assessor)``; with ``strict`` any problem ends the run
    (all of them reported, exit 2).
    """
    from trackplan import columns
    from trackplan.assess import Assessor

    if return_period is not None and not 2 <= return_period <= 1000:
        raise InputError(f"{return_period:g} years is outside 2..1000", "--return-period")
    if distribution not in names.DISTRIBUTIONS:
        raise InputError(f"unknown distribution {distribution!r}; accepted: {', '.join(names.DISTRIBUTIONS)}",
                         "--distribution")
    if priority not in names.PRIORITIES:
        raise InputError(f"unknown priority {priority!r}; accepted: {', '.join(names.PRIORITIES)}", "--priority")
    sf = read_sections(path, strict, register)
    assessor = Assessor(return_period, distribution, priority, columns.parse_options(column, "--column"), tz,
                        allow_short)
    from trackplan.engine import engine_for

    with engine_for(sf.sections, scheduler) as engine:
        if progress_enabled() and len(sf.sections) > 3:
            from rich.progress import Progress

            # no refresh thread (auto_refresh=False): stability worker processes may be forked during the run
            with Progress(console=err_console, transient=True, auto_refresh=False) as bar:
                read_records(assessor, sf.sections, bar)
                task = bar.add_task("rail temperatures, stability and verdicts", total=len(sf.sections))
                results, problems = assessor.assess_all(sf.sections, engine=engine,
                                                        progress=lambda: (bar.advance(task), bar.refresh()))
        else:
            results, problems = assessor.assess_all(sf.sections, engine=engine)
    problems = sf.problems + problems
    refuse_if_strict(strict, problems)
    return results, problems, assessor


#: Warnings about what a record can support, printed once per record under the tables.
RECORD_CODES = ("smoothed_series", "typical_year", "repeated_years", "short_record")


def print_records(rows) -> None:
    """How each climate record was read, and what it cannot support: ``rows`` of (file name,
    time step, zone, warnings); record-quality warnings (:data:`RECORD_CODES`) once per record."""
    from rich.markup import escape

    from trackplan import notices
    from trackplan.cli.common import console

    rows = list(rows)
    seen = list(dict.fromkeys((n, step, tz) for n, step, tz, _ in rows))
    if seen:
        console.print("Climate records read: " + "; ".join(f"{n} ({step}, zone {tz or 'not stated'})"
                                                           for n, step, tz in seen), highlight=False)
    said = set()
    for _, _, _, ws in rows:
        for w in map(notices.as_notice, ws):
            if w.code in RECORD_CODES and str(w) not in said:
                said.add(str(w))
                console.print(f"[yellow]Warning ({w.code}):[/] {escape(str(w))}", highlight=False)


def print_network_footer(results, register: Path | None, written: list, summary: str) -> None:
    """Under a check or target table: each record's time step, zone and warnings, where the
    neutral temperatures came from, and the files written."""
    from trackplan.cli.common import console

    print_records([(a.section.climate_path.name, a.climate.time_step, a.climate.tz, a.climate.warnings)
                   for a in results])
    if register is not None:
        console.print(f"Neutral temperatures and events from the register {register} (entry ids with --json).",
                      highlight=False)
    if written:
        console.print(f"Wrote {len(written)} files to {written[0].parent}/ (summary: {summary})", highlight=False)


def network_name(path: Path) -> str | None:
    """The ``[network] name`` of a section file, or None (the file was read before)."""
    import tomllib

    try:
        name = tomllib.loads(Path(path).read_text(encoding="utf-8")).get("network", {}).get("name")
    except (OSError, UnicodeDecodeError, tomllib.TOMLDecodeError, AttributeError):
        return None
    return name if isinstance(name, str) and name.strip() else None


def print_data_warnings(assessments, s: str) -> None:
    """Data warnings once per station, naming it and its sections, figures in ``s``."""
    from trackplan.cli.common import console
    from trackplan.reports import grouped_warnings
    from trackplan.units import text_in

    from trackplan import notices

    # the record-quality warnings are said once per record by print_records
    items = ((a.climate.station, a.section.id, w) for a in assessments for w in a.climate.warnings
             if notices.as_notice(w).code not in RECORD_CODES)
    for station, ids, w in grouped_warnings(items):
        console.print(f"Data warning ({station}; {', '.join(ids)}): {text_in(w, s)}", highlight=False, markup=False)


def read_records(assessor, sections, bar) -> None:
    """Read each distinct climate record once, with its own progress line (the first
    phase of a network run; a record that cannot be read is reported with its section later)."""
    first = {}
    for sec in sections:  # one section per distinct read (file, column mapping, zone)
        try:
            first.setdefault(assessor.record_key(sec.climate_path, sec), sec)
        except InputError:
            pass
    task = bar.add_task("reading climate records", total=len(first))
    bar.refresh()
    for sec in first.values():
        try:
            assessor.record(sec.climate_path, f"{sec.file.name} [sections.{sec.id}] climate {sec.climate_path.name}", sec)
        except InputError:
            pass  # reported with its section
        bar.advance(task)
        bar.refresh()


def refuse_if_strict(strict: bool, problems: list[InputError]) -> None:
    """With --strict, any problem refuses the run: every problem is reported, exit 2."""
    if strict and problems:
        report_problems(problems, None)
        err_console.print("--strict: nothing computed; correct the problems above.", highlight=False)
        raise typer.Exit(2)


def report_problems(problems: list[InputError], n_ok: int | None = None) -> None:
    """Print the bad sections on stderr: identical messages once, with how many sections
    share them (a wrong --from/--to would otherwise repeat for every section).
    ``n_ok`` is the number of sections that were assessed (reported above)."""
    from collections import Counter

    counts = Counter(str(p) for p in problems)
    for text, n in counts.items():
        print_error(InputError(text + (f" ({n} sections)" if n > 1 else "")))
    if problems and n_ok is not None:
        err_console.print("No section could be assessed." if n_ok == 0 else
                          f"{len(problems)} section(s) could not be assessed; the others are above.", highlight=False)
