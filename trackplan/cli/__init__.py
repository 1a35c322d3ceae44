"""The ``trackplan`` command line: a thin layer over the computation modules.

Each subcommand lives in its own module under this package and registers itself
on :data:`app` with :func:`trackplan.cli.common.command`. Command modules import
only light modules at top level; heavy libraries (matplotlib, pvlib, scipy,
pandas) are imported inside the command functions that need them, so that
``trackplan force`` and ``trackplan profiles`` start fast.
"""

from __future__ import annotations

import importlib
import sys

#: Command modules, in the order their commands appear in ``--help``; each module
#: registers the subcommand of the same name.
COMMAND_MODULES = [
    "profiles",
    "force",
    "railtemp",
    "stability",
    "destress",
    "target",
    "check",
    "screen",
    "risk",
    "register",
    "outlook",
    "demo",
]


def load_commands(names=None):
    """Import the command modules (all, or only ``names``) and return the typer app."""
    from trackplan.cli.common import app

    for name in names or COMMAND_MODULES:
        importlib.import_module(f"trackplan.cli.{name}")
    return app


def __getattr__(name: str):
    # ``from trackplan.cli import app`` (tests, embedding) gets the app with every command
    if name == "app":
        return load_commands()
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")


def main() -> None:
    """Console-script entry point.

    Only the module of the subcommand being run is imported, so that light commands
    (``force``, ``profiles``, ``destress``) do not pay for the imports of the others;
    ``trackplan --help`` (or no subcommand) loads them all to list them.
    """
    args = sys.argv[1:]
    if args == ["--version"]:  # no command module needed
        from trackplan import __version__

        print(f"trackplan {__version__}")
        return
    first = next((a for a in args if not a.startswith("-")), None)
    app = load_commands([first] if first in COMMAND_MODULES else None)
    app(prog_name="trackplan")
