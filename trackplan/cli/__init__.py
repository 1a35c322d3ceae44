"""The ``trackplan`` command line: a thin layer over the computation modules.

Each subcommand lives in its own module under this package and registers itself
on :data:`app` with :func:`trackplan.cli.common.command`. Command modules import
only light modules at top level; heavy libraries (matplotlib, pvlib, scipy,
pandas) are imported inside the command functions that need them, so that
``trackplan force`` and ``trackplan profiles`` start fast.
"""

from __future__ import annotations

import importlib

from trackplan.cli.common import app

#: Command modules, in the order their commands appear in ``--help``.
COMMAND_MODULES = [
    "profiles",
    "force",
    "railtemp",
    "stability",
    "destress",
    "target",
    "check",
    "screen",
    "demo",
]

for _name in COMMAND_MODULES:
    importlib.import_module(f"trackplan.cli.{_name}")


def main() -> None:
    """Console-script entry point."""
    app(prog_name="trackplan")
