"""``trackplan profiles``: the rail profile catalogue."""

from __future__ import annotations

from pathlib import Path
from typing import Optional

import typer
from rich.table import Table

from trackplan import rails, units
from trackplan.cli.common import JSON_OPTION, UNITS_OPTION, UnitSystem, command, console, emit_json


@command("profiles")
def profiles_cmd(
    profiles_file: Optional[Path] = typer.Option(
        None, "--profiles-file", help="TOML file with [profiles.NAME] tables of your own profiles (values with units)."
    ),
    system: UnitSystem = UNITS_OPTION,
    as_json: bool = JSON_OPTION,
) -> None:
    """List the rail profiles trackplan knows, with their section properties and sources.

    Rows marked 'no' in the confirmed column were written from memory and await a
    check against the profile standard.

    Example: trackplan profiles --units us
    """
    extra = rails.load_user_profiles(profiles_file) if profiles_file is not None else None
    rows = rails.profile_rows(extra)
    if as_json:
        from trackplan.command_json import profiles_json

        emit_json(profiles_json(rows))
        return
    s = system.value
    table = Table(title="Rail profiles", show_lines=False)
    short = "short_length"
    for col in ("profile", "standard", units.header_lines("area", "area", s), units.header_lines("mass", "mass_per_length", s),
                units.header_lines("I vert.", "second_moment", s), units.header_lines("I lat.", "second_moment", s),
                units.header_lines("height", short, s), units.header_lines("foot", short, s), units.header_lines("head", short, s),
                "checked"):
        table.add_column(col, justify="left" if col in ("profile", "standard", "checked") else "right")
    for p in rows:
        table.add_row(
            p.name,
            p.standard,
            units.number(p.area_m2, "area", s, 2),
            units.number(p.mass_kg_per_m, "mass_per_length", s, 1),
            units.number(p.vertical_inertia_m4, "second_moment", s, 0 if s == "si" else 1),
            units.number(p.lateral_inertia_m4, "second_moment", s, 0 if s == "si" else 1),
            units.number(p.height_m, "short_length", s, 1 if s == "si" else 3),
            units.number(p.foot_width_m, "short_length", s, 1 if s == "si" else 3),
            units.number(p.head_width_m, "short_length", s, 1 if s == "si" else 3),
            "yes" if p.confirmed else "no",
        )
    console.print(table)
    console.print("'checked': the row was checked against its standard ('no': written from memory). "
                  "Sources: see `trackplan profiles --json` (field 'source') or trackplan/data/rails.csv.")
