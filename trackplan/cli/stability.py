"""``trackplan stability``: equilibrium curve, critical rises and allowable rise of a track."""

from __future__ import annotations

from pathlib import Path
from typing import Optional

import typer
from rich.table import Table

from trackplan import names, rails, thermal, track, units
from trackplan.cli.common import (
    JSON_OPTION,
    UNITS_OPTION,
    UnitSystem,
    command,
    console,
    emit_json,
    parse_option,
    print_caution,
    progress_enabled,
)
from trackplan.errors import InputError

# Preset and registry names for --help, from the data files and trackplan.names (no numpy at
# start-up). The command checks the values given against the presets and registries.
_SLEEPERS = ", ".join(track.sleeper_types())
_BALLAST = ", ".join(track.ballast_states())
_SHOULDER = ", ".join(track.shoulder_types())
_LOADING = names.listing(names.loading_names(), names.DEFAULT_LOADING)
_CRITERIA = names.listing(names.CRITERIA, names.DEFAULT_CRITERION)


def _positive_option(text, kind, option, system, allow_zero=False):
    value, echo = parse_option(text, kind, option, system, required=False)
    if value is not None and (value < 0 or (value == 0 and not allow_zero)):
        raise InputError(f"must be {'zero or ' if allow_zero else ''}positive, got {text!r}", option)
    return value, echo


def _case(profile_name: str, sleeper: str, ballast: str, shoulder: str, inp, s: str) -> str:
    """The track a result is for, in words (table and plot titles)."""
    return (f"{profile_name}, {sleeper} sleepers, {ballast} ballast, {shoulder} shoulder, "
            + ("tangent" if inp.radius_m is None else f"radius {units.fmt(inp.radius_m, 'length', s, 0)}")
            + f", misalignment {units.fmt(inp.misalignment_m, 'short_length', s, 0 if s == 'si' else 1)} over "
            f"{units.fmt(inp.misalignment_length_m, 'length', s, 0)}")


def _plot(result, out: Path, system: str, inputs=(), case: str = ""):
    """PNG of the equilibrium curve with the critical points and the allowable rise."""
    from trackplan import reports

    reports.matplotlib_backend()
    import matplotlib.pyplot as plt

    d_unit = units.display_unit("short_length", system)
    t_unit = units.display_unit("temperature_difference", system)
    dx = [units.from_si(v, d_unit, "length") for v in result.curve_displacement_m]
    ty = [units.from_si(v, t_unit, "temperature_difference") for v in result.curve_rise_K]
    fig, ax = plt.subplots(figsize=(7, 4.5))
    ax.plot(dx, ty, "-", color="tab:blue", lw=1.8, label="equilibrium curve")

    def pt(d, t, label, style):
        if t is None:
            return
        ax.plot([units.from_si(d or 0.0, d_unit, "length")], [units.from_si(t, t_unit, "temperature_difference")],
                style, ms=8, label=label)

    pt(result.upper_critical_displacement_m, result.upper_critical_rise_K,
       f"upper critical {units.fmt(result.upper_critical_rise_K, 'temperature_difference', system)}", "v")
    pt(result.lower_critical_displacement_m, result.lower_critical_rise_K,
       None if result.lower_critical_rise_K is None else
       f"lower critical {units.fmt(result.lower_critical_rise_K, 'temperature_difference', system)}", "^")
    ax.axhline(units.from_si(result.allowable_rise_K, t_unit, "temperature_difference"), color="tab:green", ls="--",
               label=f"allowable {units.fmt(result.allowable_rise_K, 'temperature_difference', system)}")
    ax.set_xlabel(f"largest lateral displacement [{units.label(d_unit)}]")
    ax.set_ylabel(f"rail temperature rise above neutral [{units.label(t_unit)}]")
    ax.set_title(f"Track lateral stability ({result.response})\n{case}", fontsize=9)
    ax.grid(alpha=0.3)
    ax.set_xlim(left=0)
    ax.set_ylim(bottom=0)
    ax.legend(loc="best", fontsize=8)
    return reports.save_figure(out / "stability_curve.png", fig, inputs)


@command("stability")
def stability_cmd(
    rail: str = typer.Option(..., "--rail", help="Rail profile, e.g. 60E1 or 136RE (see `trackplan profiles`)."),
    sleeper: str = typer.Option("concrete", "--sleeper", help=f"Sleeper type: {_SLEEPERS}."),
    ballast: str = typer.Option("consolidated", "--ballast",
                                help=f"Ballast state: {_BALLAST} (disturbed = after tamping or renewal)."),
    shoulder: str = typer.Option("full", "--shoulder", help=f"Ballast shoulder: {_SHOULDER}."),
    radius: Optional[str] = typer.Option(None, "--radius", help="Curve radius, e.g. '800 m' (100 m or more); omit for tangent track."),
    misalignment: Optional[str] = typer.Option(None, "--misalignment", help="Initial misalignment amplitude, e.g. '20 mm' (default 20 mm; 0 = perfect track)."),
    misalignment_length: Optional[str] = typer.Option(None, "--misalignment-length", help="Length of the misalignment, e.g. '10 m' (default 10 m)."),
    peak_resistance: Optional[str] = typer.Option(None, "--peak-resistance", help="Override the peak lateral resistance per metre of track, e.g. '15 kN/m'."),
    limit_resistance: Optional[str] = typer.Option(None, "--limit-resistance", help="Override the limit (residual) lateral resistance per metre of track, e.g. '10 kN/m'."),
    peak_displacement: Optional[str] = typer.Option(None, "--peak-displacement", help="Override the lateral displacement at the peak, e.g. '4 mm'."),
    longitudinal_resistance: Optional[str] = typer.Option(
        None, "--longitudinal-resistance", help="Override the longitudinal resistance per rail, e.g. '8 kN/m', or 'rigid' for full restraint."),
    limit_displacement: Optional[str] = typer.Option(None, "--limit-displacement", help="Override the lateral displacement at which the resistance has fallen to its limit, e.g. '100 mm'."),
    lateral_stiffness: Optional[str] = typer.Option(
        None, "--lateral-stiffness", help="Use a linear (Winkler) lateral foundation of this modulus instead of the peak/limit law, e.g. '2000 kN/m**2'."),
    sleeper_spacing: Optional[str] = typer.Option(None, "--sleeper-spacing", help="Sleeper spacing, e.g. '0.6 m' (default: the sleeper type's reference spacing); scales the preset resistances."),
    loading: str = typer.Option(names.DEFAULT_LOADING, "--loading", help=f"Train standing on the track (its axles press the track down, it lifts between bogies): {_LOADING}."),
    axle_load: Optional[str] = typer.Option(None, "--axle-load", help="Override the axle load of the train, e.g. '250 kN' (at most 50 t, 490 kN)."),
    support_modulus: Optional[str] = typer.Option(None, "--support-modulus", help="Override the track support modulus per rail, e.g. '30 MPa' (N/mm per mm of rail)."),
    criterion: str = typer.Option(names.DEFAULT_CRITERION, "--criterion", help=f"Allowable-rise criterion: {_CRITERIA}."),
    profiles_file: Optional[Path] = typer.Option(None, "--profiles-file", help="TOML file with profiles of your own."),
    out: Optional[Path] = typer.Option(None, "--out", help="Folder for the PNG of the curve (stability_curve.png) and the curve as CSV."),
    system: UnitSystem = UNITS_OPTION,
    as_json: bool = JSON_OPTION,
) -> None:
    """Lateral stability (buckling) of a track: equilibrium curve, critical rises, allowable rise.

    A coupled axial-lateral beam model of the track panel on nonlinear ballast resistance,
    with longitudinal resistance, curvature and an initial misalignment, traced through
    snap-through, with a train standing on the track (its axles press the track down, it lifts
    between bogies). Gives the upper and lower critical rise above neutral temperature of the
    loaded and of the empty track, the response (snap-through or progressive) and the allowable
    rise. The default criterion scales the loaded lower critical rise so that well-maintained
    concrete-sleeper track gets the 26 K rise UK practice takes as critical; see
    docs/methods/stability.md.

    Example: trackplan stability --rail 60E1 --sleeper concrete --ballast consolidated --radius "800 m" --misalignment "20 mm"
    """
    from trackplan import stability as st
    from trackplan.track import build_track

    extra = rails.load_user_profiles(profiles_file) if profiles_file is not None else None
    profile = rails.get_profile(rail, extra)
    steel = thermal.default_steel(profile.is_north_american)
    s = system.value
    geo: dict = {}
    over: dict = {}

    def take(text, kind, option, allow_zero=False):
        return _positive_option(text, kind, option, s, allow_zero)[0]

    geo["radius_m"] = take(radius, "length", "--radius") if radius is not None else None
    for text, key, kind, option, zero in ((misalignment, "misalignment_m", "short_length", "--misalignment", True),
                                          (misalignment_length, "misalignment_length_m", "length",
                                           "--misalignment-length", False),
                                          (sleeper_spacing, "sleeper_spacing_m", "length", "--sleeper-spacing", False)):
        v = take(text, kind, option, zero)
        if v is not None:
            geo[key] = v
    for text, name, option, zero in ((peak_resistance, "peak_resistance", "--peak-resistance", False),
                                     (limit_resistance, "limit_resistance", "--limit-resistance", True),
                                     (peak_displacement, "peak_displacement", "--peak-displacement", False),
                                     (limit_displacement, "limit_displacement", "--limit-displacement", False),
                                     (lateral_stiffness, "lateral_stiffness", "--lateral-stiffness", False),
                                     (support_modulus, "support_modulus", "--support-modulus", False),
                                     (axle_load, "axle_load", "--axle-load", False)):
        from trackplan.track import OVERRIDES

        v = take(text, OVERRIDES[name][0], option, zero)
        if v is not None:
            over[name] = v
    if longitudinal_resistance is not None:
        if longitudinal_resistance.strip().lower() == "rigid":
            over["longitudinal_resistance"] = None
        else:
            over["longitudinal_resistance"] = take(longitudinal_resistance, "force_per_length",
                                                   "--longitudinal-resistance")
    if criterion not in st.CRITERIA:
        raise InputError(f"unknown criterion {criterion!r}; accepted: {', '.join(st.CRITERIA)}", "--criterion")
    inp = build_track(profile, steel, sleeper=sleeper, ballast=ballast, shoulder=shoulder, loading=loading,
                      overrides=over, where="stability inputs", **geo)

    if progress_enabled() and not as_json:
        from rich.progress import Progress

        with Progress(transient=True, console=console) as prog:
            task = prog.add_task("tracing the equilibrium curve", total=1.0)
            result = st.solve_equilibrium_curve(inp, criterion=criterion,
                                                progress=lambda f: prog.update(task, completed=f))
    else:
        result = st.analyse_stability(inp, criterion)
    result = st.with_unloaded(result)

    files = []
    if out is not None:
        from trackplan import reports, tables

        inputs = [profiles_file] if profiles_file else []
        out_dir = reports.prepare_out_dir(out, inputs)
        files.append(_plot(result, out_dir, s, inputs, _case(profile.name, sleeper, ballast, shoulder, result.inputs, s)))
        frame = tables.frame(result.as_json()["curve"])  # the JSON's equilibrium curve, one row per point
        files.append(reports.write_csv(out_dir / "stability_curve.csv", frame, inputs, [
            ("command", "trackplan stability"),
            ("track", _case(profile.name, sleeper, ballast, shoulder, result.inputs, "si")),
            ("allowable rise criterion", result.criterion)]))

    if as_json:
        from trackplan.command_json import stability_json

        emit_json({**stability_json(result, rail=profile.name, sleeper=sleeper, ballast=ballast, shoulder=shoulder),
                   "files": [str(f) for f in files]})
        return

    inp = result.inputs
    tbl = Table(title=f"Lateral stability: {profile.name}, {sleeper} sleepers, {ballast} ballast, {shoulder} shoulder, "
                      + ("tangent" if inp.radius_m is None else f"radius {units.fmt(inp.radius_m, 'length', s, 0)}"))
    tbl.add_column("quantity")
    tbl.add_column("value", justify="right")
    td = "temperature_difference"
    tbl.add_row("upper critical rise" + (" (loaded)" if inp.loading is not None else ""),
                units.fmt(result.upper_critical_rise_K, td, s))
    tbl.add_row("lower critical rise" + (" (loaded)" if inp.loading is not None else ""),
                units.fmt(result.lower_critical_rise_K, td, s))
    tbl.add_row("[bold]allowable rise[/]", f"[bold]{units.fmt(result.allowable_rise_K, td, s)}[/]")
    tbl.add_row("response", result.response)
    tbl.add_row("loading", result.loading_name if inp.loading is None
                else f"{result.loading_name} ({inp.loading.position})")
    tbl.add_row("unloaded upper / lower critical", f"{units.fmt(result.unloaded_upper_critical_rise_K, td, s)} / "
                f"{units.fmt(result.unloaded_lower_critical_rise_K, td, s)}")
    tbl.add_row("lateral EI (two rails)", f"{inp.EI_lateral_Nm2 / 1e3:.0f} kN·m²" if s == "si"
                else f"{inp.EI_lateral_Nm2 / 4.4482216152605e3 / 0.3048**2:.0f} kip·ft²")
    tbl.add_row("axial EA (two rails)", units.fmt(inp.EA_N, "force", s, 0))
    if inp.lateral_stiffness_N_per_m2 is not None:
        tbl.add_row("lateral foundation (linear)", units.fmt(inp.lateral_stiffness_N_per_m2, "stiffness_per_area", s, 0))
    else:
        tbl.add_row("peak / limit lateral resistance",
                    f"{units.fmt(inp.peak_resistance_N_per_m, 'force_per_length', s)} / "
                    f"{units.fmt(inp.limit_resistance_N_per_m, 'force_per_length', s)} at "
                    f"{units.fmt(inp.peak_displacement_m, 'short_length', s)}")
    tbl.add_row("longitudinal resistance per rail",
                "rigid" if inp.longitudinal_resistance_N_per_m is None
                else units.fmt(inp.longitudinal_resistance_N_per_m, "force_per_length", s))
    tbl.add_row("misalignment", f"{units.fmt(inp.misalignment_m, 'short_length', s)} over "
                                f"{units.fmt(inp.misalignment_length_m, 'length', s)}")
    console.print(tbl)
    console.print(f"Allowable rise: {units.text_in(result.criterion, s)}.", highlight=False, markup=False)
    for n in result.notes:
        console.print(f"note: {units.text_in(n, s)}", highlight=False, markup=False, style="dim")
    for f in files:
        console.print(f"wrote {f}", highlight=False)
    print_caution()
