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
    extra = rails.load_user_profiles(profiles_file) if profiles_file else None
    rows = rails.profile_rows(extra)
    if as_json:
        emit_json({"profiles": [p.as_json() for p in rows]})
        return
    s = system.value
    table = Table(title="Rail profiles", show_lines=False)
    for col in ("profile", "standard", "area", "mass", "I vertical", "I lateral", "height", "foot", "head", "confirmed"):
        table.add_column(col, justify="left" if col in ("profile", "standard", "confirmed") else "right")
    for p in rows:
        table.add_row(
            p.name,
            p.standard,
            units.fmt(p.area_m2, "area", s, 2),
            units.fmt(p.mass_kg_per_m, "mass_per_length", s, 1),
            units.fmt(p.vertical_inertia_m4, "second_moment", s, 1),
            units.fmt(p.lateral_inertia_m4, "second_moment", s, 1),
            units.fmt(p.height_m, "short_length", s, 1 if s == "si" else 3),
            units.fmt(p.foot_width_m, "short_length", s, 1 if s == "si" else 3),
            units.fmt(p.head_width_m, "short_length", s, 1 if s == "si" else 3),
            "yes" if p.confirmed else "no",
        )
    console.print(table)
    console.print("Sources: see `trackplan profiles --json` (field 'source') or trackplan/data/rails.csv.")
