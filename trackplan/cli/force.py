"""``trackplan force``: force and stress in restrained rail at chosen rail temperatures."""

from __future__ import annotations

from pathlib import Path
from typing import List, Optional

import typer
from rich.table import Table

from trackplan import command_json, rails, thermal, units
from trackplan.cli.common import (
    JSON_OPTION,
    UNITS_OPTION,
    UnitSystem,
    command,
    console,
    emit_json,
    given_text,
    parse_option,
    print_caution,
)
from trackplan.errors import InputError

#: Plausible neutral temperatures [degC] (as section files) and rail temperatures [degC].
NEUTRAL_RANGE_C = (-10.0, 60.0)
RAIL_RANGE_C = (-60.0, 90.0)


def resolve_steel(profile: rails.RailProfile, steel: Optional[str], E: Optional[str], alpha: Optional[str]) -> thermal.Steel:
    """Steel constants for a run: the preset of the profile family, a named preset, then overrides."""
    base = thermal.steel_preset(steel) if steel else thermal.default_steel(profile.is_north_american)
    E_Pa = units.parse(E, "stress", "--youngs-modulus") if E is not None else base.E_Pa
    a = units.parse(alpha, "expansion", "--alpha") if alpha is not None else base.alpha_per_K
    thermal.check_steel(E_Pa, a, "--youngs-modulus/--alpha")
    if E is not None or alpha is not None:
        return thermal.Steel(E_Pa, a, "custom", f"{base.name} with overrides")
    return base


STEEL_OPTION = typer.Option(
    None, "--steel", help="Steel constants preset: european (E 210 GPa, alpha 1.15e-5 /K), north-american "
    "(E 30e6 psi, alpha 6.5e-6 /degF), en1993. Default: by profile family."
)
E_OPTION = typer.Option(None, "--youngs-modulus", help="Override Young's modulus, e.g. '207 GPa' or '30e6 psi'.")
ALPHA_OPTION = typer.Option(None, "--alpha", help="Override the expansion coefficient, e.g. '1.2e-5 1/K' or '6.5e-6 1/delta_degF'.")
PROFILES_FILE_OPTION = typer.Option(None, "--profiles-file", help="TOML file with profiles of your own.")


@command("force")
def force_cmd(
    rail: str = typer.Option(..., "--rail", help="Rail profile, e.g. 60E1 or 136RE (see `trackplan profiles`)."),
    neutral: str = typer.Option(..., "--neutral", help="Neutral (stress-free) temperature, e.g. '27 degC' or '95 degF'."),
    at: List[str] = typer.Option(..., "--at", help="Rail temperature to evaluate; repeat for several, e.g. --at '60 degC' --at '-20 degC'."),
    resistance: Optional[str] = typer.Option(
        None, "--resistance", help="Longitudinal resistance per rail, e.g. '8 kN/m' or '40 lbf/in': adds breathing length, end movement and pull-apart gap."
    ),
    steel: Optional[str] = STEEL_OPTION,
    youngs_modulus: Optional[str] = E_OPTION,
    alpha: Optional[str] = ALPHA_OPTION,
    profiles_file: Optional[Path] = PROFILES_FILE_OPTION,
    system: UnitSystem = UNITS_OPTION,
    as_json: bool = JSON_OPTION,
) -> None:
    """Longitudinal force and stress in fully restrained welded rail at each --at temperature.

    P = E A alpha (T_rail - T_neutral): compression when the rail is hotter than
    neutral, tension when colder; it does not depend on the string length. With
    --resistance, also the breathing length at a free end, the end movement and,
    in tension, the gap a rail break would open.

    Example: trackplan force --rail 60E1 --neutral "27 degC" --at "60 degC" --at "-20 degC" --resistance "8 kN/m"
    """
    extra = rails.load_user_profiles(profiles_file) if profiles_file is not None else None
    profile = rails.get_profile(rail, extra)
    st = resolve_steel(profile, steel, youngs_modulus, alpha)
    t_n, echo_n = parse_option(neutral, "temperature", "--neutral", system)
    if not NEUTRAL_RANGE_C[0] <= t_n <= NEUTRAL_RANGE_C[1]:
        raise InputError(f"{echo_n} is outside -10..60 degC, the range of neutral temperatures in practice "
                         "(a unit slip? e.g. '27 degC' or '95 degF')", "--neutral")
    r = None
    if resistance is not None:
        r, _ = parse_option(resistance, "force_per_length", "--resistance", system)
        if not r > 0:
            raise InputError(f"must be positive, got {resistance!r} (e.g. '8 kN/m' per rail)", "--resistance")
    results = []
    echoes = []
    for i, text in enumerate(at):
        t, echo = parse_option(text, "temperature", f"--at (#{i + 1})", system)
        if not RAIL_RANGE_C[0] <= t <= RAIL_RANGE_C[1]:
            raise InputError(f"{echo} is outside -60..90 degC, the range rail temperatures reach "
                             "(a unit slip? e.g. '60 degC' or '140 degF')", f"--at (#{i + 1})")
        echoes.append(echo)
        results.append(thermal.restrained_rail(t, neutral_C=t_n, E_Pa=st.E_Pa, area_m2=profile.area_m2,
                                               alpha_per_K=st.alpha_per_K, resistance_N_per_m=r))

    data = command_json.force_json(profile, st, t_n, results, r)
    if as_json:
        emit_json(data)
        return

    s = system.value
    console.print(
        f"[bold]{profile.name}[/]  A = {units.fmt(profile.area_m2, 'area', s, 2)}, "
        f"E = {units.fmt(st.E_Pa, 'modulus', s, 1 if s == 'si' else 0)}, alpha = {units.fmt(st.alpha_per_K, 'expansion', s, 8)} "
        f"({st.name}), neutral {given_text(echo_n, t_n, 'temperature', s)}",
        highlight=False,
    )
    table = Table(title="Force in restrained rail (compression +, tension −)")
    us = s == "us"
    cols = [
        (units.header_lines("rail", "temperature", s), "temperature", "rail_temperature_C", 1, 1),
        (units.header_lines("rise", "temperature_difference", s), "temperature_difference", "rise_K", 1, 1),
        (units.header_lines("stress", "stress", s), "stress", "stress_MPa", 1e6, 2 if us else 1),
        (units.header_lines("per rail", "force", s), "force", "force_per_rail_kN", 1e3, 1 if us else 0),
        (units.header_lines("per track", "force", s), "force", "force_per_track_kN", 1e3, 1 if us else 0),
    ]
    if r is not None:
        cols += [
            (units.header_lines("breathing length", "length", s), "length", "breathing_length_m", 1, 0),
            (units.header_lines("end movement", "short_length", s), "short_length", "end_movement_mm", 1e-3, 2 if us else 1),
            (units.header_lines("break gap", "short_length", s), "short_length", "pull_apart_gap_mm", 1e-3, 2 if us else 1),
        ]
    for head, *_ in cols:
        table.add_column(head, justify="right")
    table.add_column("state", no_wrap=True)
    for row in data["results"]:
        cells = [units.number(row[key] * scale, kind, s, d) if key in row else "–" for _, kind, key, scale, d in cols]
        table.add_row(*cells, row["state"])
    console.print(table)
    if r is not None:
        gaps = [row["pull_apart_gap_mm"] for row in data["results"] if "pull_apart_gap_mm" in row]
        if gaps and max(gaps) > 50.0:
            console.print(
                f"[red]A break would open {units.fmt(max(gaps) / 1e3, 'short_length', s)}: more than the "
                f"{units.fmt(0.05, 'short_length', s, 0)} commonly treated as dangerous for traffic (common practice).[/]",
                highlight=False,
            )
    print_caution()
