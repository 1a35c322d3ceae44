"""Shared pieces of the command line: the app, error handling, JSON, units.

* :func:`command` registers a subcommand behind the command boundary: a
  :class:`~trackplan.errors.TrackplanError` (bad input, an unusable file, or a
  model that cannot give a number for the input) becomes a one-line message on
  stderr and exit code 2; anything unforeseen a plain "internal error" line, the details
  in a file to report, and exit code 3. Never a traceback.
* :func:`emit_json` prints one JSON object on stdout (SI, units in key names).
* :func:`print_caution` prints the caution under a result a person may act on.
"""

from __future__ import annotations

import functools
import json
import math
import sys
from enum import Enum
from pathlib import Path

import typer
from rich.console import Console
from typer.core import TyperGroup

from trackplan import CAUTION, units
from trackplan.errors import InputError, TrackplanError

class _OneLineErrors(TyperGroup):
    """The command group, printing click's usage errors (unknown option, bad choice,
    missing argument) as the tool's own one-line ``error:`` messages, exit code 2."""

    def main(self, args=None, prog_name=None, complete_var=None, standalone_mode=True, **extra):
        if not standalone_mode:
            return super().main(args=args, prog_name=prog_name, complete_var=complete_var,
                                standalone_mode=False, **extra)
        import click

        try:
            rv = super().main(args=args, prog_name=prog_name, complete_var=complete_var,
                              standalone_mode=False, **extra)
        except click.exceptions.NoArgsIsHelpError as exc:
            sys.exit(exc.exit_code)  # the help was printed when the error was made
        except click.exceptions.UsageError as exc:
            ctx = getattr(exc, "ctx", None)
            path = ctx.command_path if ctx is not None else "trackplan"
            print_error(InputError(f"{exc.format_message().rstrip('.')} (see `{path} --help`)"))
            sys.exit(2)
        except click.ClickException as exc:
            print_error(InputError(exc.format_message()))
            sys.exit(exc.exit_code)
        except click.Abort:
            err_console.print("Aborted.", highlight=False)
            sys.exit(1)
        sys.exit(rv if isinstance(rv, int) else 0)


app = typer.Typer(
    name="trackplan",
    cls=_OneLineErrors,
    help=(
        "Thermal stress planning for continuous welded rail: rail forces at the temperature "
        "extremes, the neutral temperature to install, risk days in a temperature history, "
        "and the destressing adjustment for the crew.\n\n"
        "Quantities carry units ('27 degC', '480 m', '8 kN/m'); a bare number on the command "
        "line is read in the --units system and echoed back. --json prints SI figures with the "
        "unit in every key."
    ),
    no_args_is_help=True,
    add_completion=False,
    pretty_exceptions_enable=False,
    context_settings={"help_option_names": ["-h", "--help"]},
)

def _print_version(value: bool) -> None:
    if value:
        from trackplan import __version__

        typer.echo(f"trackplan {__version__}")
        raise typer.Exit(0)


@app.callback()
def _group(
    version: bool = typer.Option(False, "--version", is_eager=True, callback=_print_version,
                                 help="Print the version of trackplan and exit."),
) -> None:
    """Thermal stress planning for continuous welded rail (see the commands below)."""


#: Width of piped output (files, scripts) when COLUMNS is not set; the tables are
#: designed to fit it.
PIPED_WIDTH = 100

#: Width of the --wide tables (wider than the terminal if need be: they are asked for).
WIDE_WIDTH = 150


def _width(stream) -> int | None:
    """None (the terminal's width, or COLUMNS when set: rich reads it) or the piped width."""
    import os

    return None if stream.isatty() or os.environ.get("COLUMNS", "").strip().isdigit() else PIPED_WIDTH


class _Console(Console):
    """A rich console that never stops a run on text from a file: if a line's markup cannot be
    read (a station or section name with ``[/...]`` in it), the line is printed as plain text."""

    def print(self, *objects, **kwargs):
        from rich.errors import MarkupError

        try:
            return super().print(*objects, **kwargs)
        except MarkupError:
            kwargs["markup"] = False
            return super().print(*objects, **kwargs)


console = _Console(width=_width(sys.stdout))


def wide_console() -> Console:
    """A console for the --wide tables: at least :data:`WIDE_WIDTH` columns (they are asked for)."""
    return _Console(width=max(console.width, WIDE_WIDTH))


err_console = _Console(stderr=True, width=_width(sys.stderr))


class UnitSystem(str, Enum):
    """Unit system for display and for bare numbers typed on the command line."""

    si = "si"
    us = "us"


UNITS_OPTION = typer.Option(
    UnitSystem.si, "--units", case_sensitive=False, help="Units for printing and for bare numbers: si (degC, m, kN, MPa) or us (degF, ft, kip, ksi)."
)
JSON_OPTION = typer.Option(False, "--json", help="Print one JSON object (SI units, unit in every key) and nothing else.")
COLUMN_OPTION = typer.Option(
    None, "--column", help="Map a column of a CSV record, repeatable: QUANTITY=\"COLUMN [UNIT]\", e.g. "
    "--column \"tmax=temp_max [degC]\" --column \"tmin=temp_min [degC]\" (quantities: time, air_temperature, "
    "tmax, tmin, ghi, dni, dhi, wind_speed, relative_humidity, cloud_fraction, sunshine_fraction).")
TZ_OPTION = typer.Option(
    None, "--tz", help="Zone of the record's timestamps without offset: UTC, UTC-08:00 or an IANA name "
    "(default: the file's, else the nominal zone of the site's longitude).")
ALLOW_SHORT_OPTION = typer.Option(
    False, "--allow-short", help="Fit the return level even when the record is shorter than the minimum for the "
    "return period (default there: the observed extreme plus an allowance).")


def print_error(exc: Exception) -> None:
    """Print an input error on stderr (the message is plain text, never rich markup:
    units such as ``[degC]`` must survive)."""
    from rich.text import Text

    err_console.print(Text("error: ", style="bold red") + Text(str(exc)), highlight=False, soft_wrap=True)


def fail(exc: TrackplanError) -> None:
    """Print an input or model error and exit with code 2."""
    print_error(exc)
    raise typer.Exit(2)


#: Exit code of an unforeseen failure inside trackplan (a fault to report, not bad input).
EXIT_INTERNAL = 3

#: Field names of computation modules -> the option name of the same value, where they differ.
FIELD_OPTIONS = {
    "rail_temperature_method": "method",
    "latitude": "lat",
    "longitude": "lon",
    "track_azimuth": "azimuth",
    "rail_temperature": "rail_temp",
}


def _option_for(field: str | None) -> str | None:
    """The option of the running command that carries ``field`` (``None`` if none does)."""
    import click

    ctx = click.get_current_context(silent=True)
    if field is None or ctx is None:
        return None
    names = {}
    for p in ctx.command.params:
        opts = [o for o in getattr(p, "opts", []) if o.startswith("--")]
        if opts:
            names[p.name] = opts[0]
            names[opts[0][2:].replace("-", "_")] = opts[0]
    parts = [names.get(f) or names.get(FIELD_OPTIONS.get(f, "")) for f in field.split("/")]
    return "/".join(parts) if all(parts) else None


def _locate(exc: TrackplanError) -> TrackplanError:
    """An error raised by a computation module names a field: put the command's option there, and
    write its references to values the user gives as the command's options."""
    where = exc.where
    if exc.field is not None and exc.where == exc.field:
        where = _option_for(exc.field) or exc.where
    located = exc.relocated(where, _option_for)
    return exc if str(located) == str(exc) else located


def place_fields(obj):
    """A command's JSON with the ``where`` of its warnings placed at the running command's options:
    a computation module names a field (``tensor_capacity``, ``months``); the command line shows the
    option that carries it (``--tensor-capacity``). A ``where`` no option carries is left as it is."""
    if isinstance(obj, dict):
        out = {k: place_fields(v) for k, v in obj.items()}
        if set(out) == {"code", "message", "where"} and isinstance(out["where"], str):
            out["where"] = _option_for(out["where"]) or out["where"]
        return out
    if isinstance(obj, list):
        return [place_fields(v) for v in obj]
    return obj


def _os_error(exc: OSError) -> InputError:
    from trackplan.errors import excerpt

    name = f" {excerpt(exc.filename, 80)}" if exc.filename is not None else ""
    return InputError(f"cannot use the file{name}: {exc.strerror or type(exc).__name__}")


def internal_error(exc: BaseException) -> None:
    """Report an unforeseen failure plainly (no traceback on the terminal), keep the details in a
    file for the report, and exit with :data:`EXIT_INTERNAL`."""
    import os
    import tempfile
    import traceback

    from rich.text import Text

    from trackplan.errors import excerpt

    detail = ""
    try:
        fd, path = tempfile.mkstemp(prefix="trackplan-error-", suffix=".txt")
        with os.fdopen(fd, "w", encoding="utf-8") as fh:
            fh.write("trackplan " + " ".join(sys.argv[1:]) + "\n\n")
            fh.write("".join(traceback.format_exception(exc)))
        detail = f" Details: {path}."
    except OSError:
        pass
    err_console.print(
        Text("internal error: ", style="bold red")
        + Text(f"{type(exc).__name__}: {excerpt(exc, 120)}. This is a fault in trackplan, not in your input; "
               f"please report it to the trackplan maintainers with the command line and its input files."
               f"{detail}"),
        highlight=False, soft_wrap=True,
    )
    raise typer.Exit(EXIT_INTERNAL)


def run_guarded(fn, *args, **kw):
    """Run a command function: bad input -> message and exit 2; anything unforeseen -> a plain
    internal-error message and exit 3 (``TRACKPLAN_DEBUG=1`` lets the traceback through).
    A writable ``--out`` folder is checked before the work, and the files written into it are
    moved into place as a set when the command ends (:func:`trackplan.reports.output_session`).
    Numerical warnings (numpy, pandas) never reach the terminal: the figures they concern are
    checked and reported by the computation itself."""
    import os
    import warnings

    import click

    from trackplan import errors, reports

    previous = _catch_sigterm()
    errors.OPTION_OF = _option_for  # messages and warnings made during the command name its options
    try:
        out = kw.get("out")
        if out is not None:  # before any work, naming the folder
            reports.check_writable(out, [v for k, v in kw.items() if k != "out" and isinstance(v, Path)])
        with warnings.catch_warnings(), reports.output_session():
            warnings.simplefilter("ignore")
            return fn(*args, **kw)
    except Terminated:
        err_console.print("stopped (terminated); no output file was changed", highlight=False)
        raise typer.Exit(143)
    except TrackplanError as exc:  # bad input, or a model that cannot give a number for it
        fail(_locate(exc))
    except (typer.Exit, click.exceptions.Exit, click.exceptions.Abort, click.exceptions.ClickException):
        raise
    except KeyboardInterrupt:
        err_console.print("interrupted; no output file was changed", highlight=False)
        raise typer.Exit(130)
    except OSError as exc:
        # a file the user named could not be read or written: a usage problem, not a crash
        fail(_os_error(exc))
    except UnicodeDecodeError as exc:
        fail(InputError(f"cannot read the file as text ({exc.reason} at byte {exc.start}); save it as UTF-8"))
    except Exception as exc:  # the command boundary: nothing escapes as a traceback
        if os.environ.get("TRACKPLAN_DEBUG"):
            raise
        internal_error(exc)
    finally:
        errors.OPTION_OF = None
        _restore_sigterm(previous)


class Terminated(BaseException):
    """SIGTERM received while a command runs: unwinds like an interrupt, so that the files
    staged for ``--out`` are discarded and the previous output set stays as it was."""


def _on_sigterm(signum, frame):
    raise Terminated()


def _catch_sigterm():
    import signal
    import threading

    if threading.current_thread() is not threading.main_thread():
        return None
    try:
        return signal.signal(signal.SIGTERM, _on_sigterm)
    except (ValueError, OSError):  # pragma: no cover
        return None


def _restore_sigterm(previous) -> None:
    import signal

    if previous is not None:
        try:
            signal.signal(signal.SIGTERM, previous)
        except (ValueError, OSError):  # pragma: no cover
            pass


def command(name: str | None = None, on: typer.Typer | None = None, **kwargs):
    """Register a subcommand on :data:`app` (or on the command group ``on``) behind the command
    boundary (:func:`run_guarded`)."""

    def deco(fn):
        @functools.wraps(fn)
        def wrapper(*args, **kw):
            return run_guarded(fn, *args, **kw)

        (on or app).command(name, **kwargs)(wrapper)
        return fn

    return deco


def jsonable(obj):
    """Turn numpy scalars/arrays, NaN and paths into JSON-ready values (NaN -> null)."""
    if isinstance(obj, dict):
        return {str(k): jsonable(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [jsonable(v) for v in obj]
    if hasattr(obj, "tolist") and not isinstance(obj, (str, bytes)):
        return jsonable(obj.tolist())
    if isinstance(obj, float):
        return None if not math.isfinite(obj) else obj
    if isinstance(obj, Path):
        return str(obj)
    if isinstance(obj, Enum):
        return obj.value
    if hasattr(obj, "isoformat"):
        return obj.isoformat()
    return obj


def emit_json(obj: dict) -> None:
    """Write one JSON object to stdout (warnings' fields placed at the command's options)."""
    sys.stdout.write(json.dumps(jsonable(place_fields(obj)), indent=2, allow_nan=False) + "\n")


def print_caution() -> None:
    """The caution line under any result a person may act on."""
    console.print(f"[yellow]Caution:[/] {CAUTION}", highlight=False)


def parse_option(text: str | None, kind: str, option: str, system: UnitSystem | str, required: bool = True):
    """Parse a command-line quantity; a bare number is read in the unit system.

    Returns ``(si_value, echo)`` where ``echo`` is the text shown back to the
    user (``'27 degC'``), or ``(None, None)`` for an absent optional value.
    """
    if text is None:
        if required:
            raise InputError(f"a value is required, e.g. {option} '{units._example(kind)}'", option)
        return None, None
    sysname = system.value if isinstance(system, Enum) else system
    parsed = units.parse_with_unit(text, kind, option, default_unit=units.default_unit(kind, sysname))
    return parsed.value, parsed.echo


def phase(text: str) -> None:
    """Say on an interactive terminal which phase of a long command is running (stderr)."""
    if progress_enabled():
        err_console.print(f"[dim]… {text}[/]", highlight=False)


def given_text(echo: str, value_si: float, kind: str, system, digits: int = 1) -> str:
    """A value as printed, with the text it was given as when that was in another unit
    (``'1320 ft = 402.3 m'``; ``'400.0 m'``, not ``'400 m = 400.0 m'``)."""
    s = system.value if isinstance(system, Enum) else system
    shown = units.fmt(value_si, kind, s, digits)
    unit = echo.split(" ", 1)[1] if " " in echo else ""
    if units.label(unit) == units.label(units.display_unit(kind, s)):
        return shown
    return f"{echo} = {shown}"


def progress_enabled() -> bool:
    """Progress bars only on an interactive terminal, never when piped."""
    return sys.stderr.isatty()
