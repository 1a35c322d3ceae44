"""``trackplan destress``: the crew sheet for destressing, adjustment, repair or heating.

The figures come from :func:`trackplan.destressing.plan_destressing`; this
module only reads the options (or a job file), prints the crew sheet and
writes it as a one-page printable HTML file.
"""

from __future__ import annotations

import html
import tomllib
from datetime import date
from pathlib import Path
from typing import Optional

import typer
from rich.table import Table
from rich.text import Text

from trackplan import CAUTION, destressing, rails, units
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
from trackplan.cli.force import ALPHA_OPTION, E_OPTION, PROFILES_FILE_OPTION, STEEL_OPTION, resolve_steel
from trackplan.errors import InputError

#: Job-file fields: field -> (option name, kind of quantity or None for text).
JOB_FIELDS = {
    "rail": ("--rail", None),
    "length": ("--length", "length"),
    "rail_temp": ("--rail-temp", "temperature"),
    "target": ("--target", "temperature"),
    "current_neutral": ("--current-neutral", "temperature"),
    "mode": ("--mode", None),
    "pull": ("--pull", None),
    "weld": ("--weld", None),
    "marks": ("--marks", "length"),
    "tensor_capacity": ("--tensor-capacity", "force"),
    "max_pull": ("--max-pull", "length"),
    "removed": ("--removed", "length"),
    "opening": ("--opening", "length"),
    "observed_movement": ("--observed-movement", "length"),
    "at_mark": ("--at-mark", "length"),
    "steel": ("--steel", None),
    "youngs_modulus": ("--youngs-modulus", None),
    "alpha": ("--alpha", None),
    "site": ("--site", None),
}

MODE_LABEL = {
    "free": "free rail, stretched by tensor",
    "restrained": "restrained adjustment from the current neutral",
    "repair": "repair with a closure rail",
    "heating": "heating to the target (no tensor)",
}
PULL_LABEL = {"end": "from one end", "centre": "both halves towards a central cut"}

#: Defaults with --units us, as North American practice writes them (not converted
#: SI values). All from memory of common practice: confirm them in your railway's
#: CWR procedure and the weld kit's instructions.
US_DEFAULTS = {
    # standard-gap thermite (aluminothermic) kits: a 1 in gap between the rail ends
    "weld": destressing.WeldAllowance(
        "aluminothermic", 1.0 * 0.0254, "aluminothermic (thermite) weld, standard 1 in gap",
        "(from memory) North American practice: standard-gap thermite kits 1 in; confirm with the kit instructions"),
    # longest length one tensor set pulls: a quarter mile, as commonly written
    "max_pull_m": 1320.0 * 0.3048,
    # reference marks every 100 ft
    "marks_m": 100.0 * 0.3048,
}


def read_job(path: Path) -> dict:
    """Read a destressing job file: a TOML ``[destress]`` table, quantities with units.

    Example::

        [destress]
        rail = "60E1"
        length = "400 m"
        rail_temp = "15 degC"
        target = "27 degC"
        weld = "aluminothermic"
        marks = "50 m"
        tensor_capacity = "600 kN"

    Returns
    -------
    dict
        field -> (SI value or text, where) for the fields present.
    """
    from trackplan import safeio

    where = f"--job {path}"
    text = safeio.read_text(safeio.check_path(path, where), where)
    try:
        data = tomllib.loads(text)
    except RecursionError:
        raise InputError("not valid TOML for trackplan (values nested too deeply)", where) from None
    except tomllib.TOMLDecodeError as exc:
        raise InputError(f"not valid TOML ({exc})", where) from None
    table = data.get("destress")
    if not isinstance(table, dict):
        raise InputError("no [destress] table found (see `trackplan destress --help`)", str(path))
    unknown = sorted(set(table) - set(JOB_FIELDS))
    if unknown:
        raise InputError(f"unknown field(s) {unknown}; accepted: {', '.join(JOB_FIELDS)}", f"{path} [destress]")
    out = {}
    for key, value in table.items():
        where = f"{path} [destress] {key}"
        kind = JOB_FIELDS[key][1]
        if kind is None:
            if not isinstance(value, str):
                raise InputError(f"expected text, got {value!r}", where)
            out[key] = (value, where)
        else:
            # A file value must carry its unit: no default unit here.
            p = units.parse_with_unit(value, kind, where)
            out[key] = (p.value, f"{p.echo}")
    return out


def _opt(cli_text, key: str, kind: str | None, job: dict, system, required: bool = False):
    """A value from the command line (bare numbers in --units) or else from the job file.

    Returns ``(value, echo)``; ``(None, None)`` when absent and not required.
    """
    option = JOB_FIELDS[key][0]
    if cli_text is not None:
        if kind is None:
            return cli_text, cli_text
        return parse_option(cli_text, kind, option, system)
    if key in job:
        value, echo = job[key]
        return value, (value if kind is None else echo)
    if required:
        example = units._example(kind) if kind else "60E1"
        raise InputError(f"a value is required, e.g. {option} '{example}' (or the field '{key}' in --job)", option)
    return None, None


@command("destress")
def destress_cmd(
    rail: Optional[str] = typer.Option(None, "--rail", help="Rail profile, e.g. 60E1 or 136RE (see `trackplan profiles`)."),
    length: Optional[str] = typer.Option(
        None, "--length", help="String length between the fixed points, e.g. '400 m' or '1320 ft' (repair: between the clips left on, across the opening)."
    ),
    rail_temp: Optional[str] = typer.Option(None, "--rail-temp", help="Rail temperature measured on site, e.g. '15 degC'."),
    target: Optional[str] = typer.Option(
        None, "--target", help="Target neutral temperature, e.g. '27 degC' (-10..60 degC). Repair: default the --current-neutral."
    ),
    current_neutral: Optional[str] = typer.Option(
        None, "--current-neutral", help="Known current neutral temperature (restrained adjustment), or the neutral before the break (repair)."
    ),
    mode: Optional[str] = typer.Option(
        None, "--mode", help="free | restrained | repair | heating. Default: repair with --removed/--opening, restrained with --current-neutral, else free."
    ),
    removed: Optional[str] = typer.Option(
        None, "--removed", help="Repair: distance between the two cuts, measured with the rail still clipped (cut-out rail plus any break gap), e.g. '4.5 m'."
    ),
    opening: Optional[str] = typer.Option(
        None, "--opening", help="Repair, instead of --removed: opening measured between the freed rail ends at the rail temperature."
    ),
    weld: Optional[str] = typer.Option(
        None, "--weld", help=", ".join(
            f"{w.name} ({abs(w.allowance_m) * 1e3:g} mm {'gap' if w.allowance_m >= 0 else 'consumed'})"
            for w in destressing.weld_presets().values()
        ) + " (values from memory: confirm them), or a value per weld with its unit: '30 mm' gap, '-35 mm' consumed. "
        "Default aluminothermic."
    ),
    marks: Optional[str] = typer.Option(None, "--marks", help="Reference mark spacing, e.g. '50 m' (default 50 m, or 100 ft with --units us)."),
    pull: Optional[str] = typer.Option(None, "--pull", help="end (from one end) or centre (both halves towards a central cut). Default end; centre for repair."),
    tensor_capacity: Optional[str] = typer.Option(None, "--tensor-capacity", help="Tensor capacity per rail, e.g. '600 kN' or '130 kip'."),
    max_pull: Optional[str] = typer.Option(
        None, "--max-pull", help="Longest length one tensor set pulls (default 400 m, or 1320 ft with --units us; from memory of common practice: set your railway's figure)."
    ),
    observed_movement: Optional[str] = typer.Option(
        None, "--observed-movement", help="What-if: movement observed at a mark, e.g. '40 mm' (with --at-mark)."
    ),
    at_mark: Optional[str] = typer.Option(None, "--at-mark", help="Distance of that mark from the fixed end of its pulled length, e.g. '400 m'."),
    site: Optional[str] = typer.Option(None, "--site", help="Site name or location printed on the crew sheet."),
    job: Optional[Path] = typer.Option(None, "--job", help="TOML job file with a [destress] table of the same fields (values with units); options override it."),
    steel: Optional[str] = STEEL_OPTION,
    youngs_modulus: Optional[str] = E_OPTION,
    alpha: Optional[str] = ALPHA_OPTION,
    profiles_file: Optional[Path] = PROFILES_FILE_OPTION,
    out: Optional[Path] = typer.Option(None, "--out", help="Folder for the one-page printable crew sheet (destress_crew_sheet.html)."),
    system: UnitSystem = UNITS_OPTION,
    as_json: bool = JSON_OPTION,
) -> None:
    """Crew sheet for destressing: how much rail comes out, how hard to pull, where to mark, whether it can be done now.

    Free rail on rollers at the rail temperature T_r is stretched to the target
    T_t: extension alpha L (T_t - T_r), cut out the extension plus the weld
    allowance, pull E A alpha (T_t - T_r) per rail; a mark x from the fixed end
    moves alpha x (T_t - T_r). With --current-neutral the adjustment is
    alpha L (T_t - T_N current). Repair (--removed or --opening) gives the
    closure rail length; --mode heating the temperature to heat to instead. With
    --observed-movement and --at-mark: the neutral temperature a pull that
    stopped short actually reached.

    Example: trackplan destress --rail 60E1 --length "400 m" --rail-temp "15 degC" --target "27 degC" --marks "50 m" --tensor-capacity "600 kN" --out crew
    """
    job_data = read_job(job) if job is not None else {}
    s = system.value
    rail_name, _ = _opt(rail, "rail", None, job_data, system, required=True)
    extra = rails.load_user_profiles(profiles_file) if profiles_file is not None else None
    profile = rails.get_profile(rail_name, extra)
    st = resolve_steel(
        profile,
        _opt(steel, "steel", None, job_data, system)[0],
        _opt(youngs_modulus, "youngs_modulus", None, job_data, system)[0],
        _opt(alpha, "alpha", None, job_data, system)[0],
    )
    L, echo_L = _opt(length, "length", "length", job_data, system, required=True)
    t_r, echo_tr = _opt(rail_temp, "rail_temp", "temperature", job_data, system, required=True)
    t_t, echo_tt = _opt(target, "target", "temperature", job_data, system)
    t_nc, echo_nc = _opt(current_neutral, "current_neutral", "temperature", job_data, system)
    rem, echo_rem = _opt(removed, "removed", "length", job_data, system)
    opn, echo_opn = _opt(opening, "opening", "length", job_data, system)
    spacing, echo_sp = _opt(marks, "marks", "length", job_data, system)
    cap, echo_cap = _opt(tensor_capacity, "tensor_capacity", "force", job_data, system)
    mpl, echo_mpl = _opt(max_pull, "max_pull", "length", job_data, system)
    obs, echo_obs = _opt(observed_movement, "observed_movement", "short_length", job_data, system)
    at, echo_at = _opt(at_mark, "at_mark", "length", job_data, system)
    site_name = _opt(site, "site", None, job_data, system)[0]
    weld_text = _opt(weld, "weld", None, job_data, system)[0]
    w = destressing.weld_allowance(weld_text, "--weld") if weld_text is not None else None
    if s == "us":  # US practice values as defaults, not converted SI ones
        w = US_DEFAULTS["weld"] if w is None else w
        mpl = US_DEFAULTS["max_pull_m"] if mpl is None else mpl

    mode_name = _opt(mode, "mode", None, job_data, system)[0]
    if mode_name is None:
        mode_name = "repair" if (rem is not None or opn is not None) else ("restrained" if t_nc is not None else "free")
    mode_name = mode_name.strip().lower()
    pull_name = _opt(pull, "pull", None, job_data, system)[0]
    pull_name = (pull_name or ("centre" if mode_name == "repair" else "end")).strip().lower()
    pull_name = {"center": "centre", "both": "centre", "one-end": "end"}.get(pull_name, pull_name)
    if mode_name != "repair" and (rem is not None or opn is not None):
        raise InputError(f"--removed/--opening belong to repair mode, not {mode_name}", "--mode")
    if s == "us" and spacing is None and mode_name != "repair" and \
            US_DEFAULTS["marks_m"] <= L / (2 if pull_name == "centre" else 1):
        spacing = US_DEFAULTS["marks_m"]

    plan = destressing.plan_destressing(
        length_m=L,
        rail_temperature_C=t_r,
        target_neutral_C=t_t,
        area_m2=profile.area_m2,
        E_Pa=st.E_Pa,
        alpha_per_K=st.alpha_per_K,
        mode=mode_name,
        pull=pull_name,
        weld=w,
        current_neutral_C=t_nc,
        removed_length_m=rem,
        opening_m=opn,
        mark_spacing_m=spacing,
        tensor_capacity_N=cap,
        max_pull_length_m=destressing.MAX_PULL_LENGTH_M if mpl is None else mpl,
        observed_movement_m=obs,
        at_mark_m=at,
        system="si" if as_json else s,
    )

    inputs = [
        ("Site", site_name or ""),
        ("Rail", f"{profile.name} (A = {units.fmt(profile.area_m2, 'area', s, 2)})"),
        ("Steel", f"{st.name}: E = {units.fmt(st.E_Pa, 'modulus', s, 1 if s == 'si' else 0)}, "
                  f"alpha = {units.fmt(st.alpha_per_K, 'expansion', s, 8)}"),
        ("Mode", MODE_LABEL[plan.mode]),
        ("Pull", PULL_LABEL[plan.pull] + (f", {len(plan.pulled_lengths_m)} × {units.fmt(plan.pulled_lengths_m[0], 'length', s, 1)}"
                                          if plan.pull == "centre" else "")
         + (f" (freed rail {units.fmt(plan.freed_length_m / len(plan.pulled_lengths_m), 'length', s, 2)} and "
            f"{'half ' if plan.pull == 'centre' else ''}the closure rail, stretched together)"
            if plan.freed_length_m is not None else "")),
        ("String length between fixed points", _given(echo_L, plan.length_m, "length", s, 1)),
        ("Rail temperature (measured)", _given(echo_tr, plan.rail_temperature_C, "temperature", s)),
        ("Target neutral temperature", _given(echo_tt, plan.target_neutral_C, "temperature", s) if echo_tt else "original, " + units.fmt(plan.target_neutral_C, "temperature", s)),
    ]
    if plan.current_neutral_C is not None:
        lab = "Current neutral temperature" if plan.mode == "restrained" else "Neutral before the break"
        inputs.append((lab, _given(echo_nc, plan.current_neutral_C, "temperature", s)))
    if plan.mode == "repair":
        if plan.removed_length_m is not None:
            inputs.append(("Removed (between cuts, rail clipped)", _given(echo_rem, plan.removed_length_m, "length", s, 3)))
        else:
            inputs.append(("Opening (freed ends, measured)", _given(echo_opn, plan.opening_m, "length", s, 3)))
    inputs += [
        ("Weld", f"{plan.weld_name}, {_mm(plan.weld_allowance_m, s)} per weld "
                 f"({'gap filled' if plan.weld_allowance_m >= 0 else 'rail consumed'}), {plan.n_welds} weld(s)"),
        ("Mark spacing", units.fmt(plan.mark_spacing_m, "length", s, 1)),
        ("Tensor capacity per rail", units.fmt(plan.tensor_capacity_N, "force", s, 0) if plan.tensor_capacity_N else "not given"),
    ]

    if as_json:
        from trackplan.command_json import destress_json

        emit_json(destress_json(plan, rail=profile.name, steel=st.name, site=site_name))
        return

    figures = _figures(plan, s)
    console.print(f"[bold]Destressing crew sheet[/]: {MODE_LABEL[plan.mode]}, {profile.name}", highlight=False)
    t_in = Table(title="Inputs", show_header=False)
    t_in.add_column("item")
    t_in.add_column("value")
    for k, v in inputs:
        if v:
            t_in.add_row(k, v)
    console.print(t_in)
    t_fig = Table(title="Figures", show_header=False)
    t_fig.add_column("figure")
    t_fig.add_column("value", justify="right")
    for k, v in figures:
        style = "bold red" if v.startswith("NO") else ("bold" if _is_key(k) else "")
        t_fig.add_row(Text(k, style=style), Text(v, style=style))
    console.print(t_fig)
    if plan.stretch_possible or plan.mode == "repair":
        console.print(_marks_table(plan, s))
    if plan.achieved_neutral_C is not None:
        console.print(
            f"What-if: {_mm(plan.observed_movement_m, s)} observed at {units.fmt(plan.at_mark_m, 'length', s, 1)} "
            f"(planned {_mm(plan.expected_movement_at_mark_m, s)}) means a neutral temperature of "
            f"[bold]{units.fmt(plan.achieved_neutral_C, 'temperature', s)}[/] "
            f"(target {units.fmt(plan.target_neutral_C, 'temperature', s)}).",
            highlight=False,
        )
    for text in plan.warnings:
        console.print(f"[bold red]Warning:[/] {text}", highlight=False)
    if out is not None:
        from trackplan import reports

        folder = _out_dir(reports, out, [p for p in (job, profiles_file) if p])
        path = reports.write_text(
            folder / "destress_crew_sheet.html",
            crew_sheet_html(plan, inputs, figures, s),
            [p for p in (job, profiles_file) if p],
        )
        console.print(f"Crew sheet written: {path}", highlight=False)
    print_caution()


_given = given_text


def _out_dir(reports, out: Path, inputs) -> Path:
    """The output folder, created by :func:`trackplan.reports.prepare_out_dir`."""
    return reports.prepare_out_dir(out, inputs)


def _mm(v_m: float | None, s: str) -> str:
    return units.fmt(v_m, "short_length", s, 1 if s == "si" else 2)


def _figures(p: destressing.DestressPlan, s: str) -> list[tuple[str, str]]:
    """The crew's figures as (label, text) pairs, from the plan only."""
    T = lambda v: units.fmt(v, "temperature", s)  # noqa: E731
    rows = []
    if p.mode == "restrained":
        rows.append(("Adjustment (target − current neutral)", units.fmt(p.adjustment_K, "temperature_difference", s)))
    rows.append(("Rise to target (target − rail temperature)", units.fmt(p.rise_K, "temperature_difference", s)))
    if p.mode == "heating":
        rows.append(("Heat the rail to (uniformly, whole length)", T(p.heating_temperature_C)))
        rows.append(("Free expansion to allow", _mm(p.extension_m, s)))
    else:
        each = f" ({len(p.pulled_lengths_m)} × {_mm(p.extension_m / len(p.pulled_lengths_m), s)})" if len(p.pulled_lengths_m) > 1 else ""
        what = "closing of the last weld gap" if p.mode == "repair" else "closing of the rail ends"
        rows.append((f"Extension ({what})", _mm(p.extension_m, s) + each))
    rows.append((f"Weld allowance ({p.n_welds} × {_mm(p.weld_allowance_m, s)})", _mm(p.n_welds * p.weld_allowance_m, s)))
    if p.mode == "repair":
        rows.append(("Opening between the freed rail ends", _mm(p.opening_m, s)))
        rows.append(("Closure rail length to cut", units.fmt(p.closure_length_m, "short_length", s, 0 if s == "si" else 2)))
        rows.append(("Opening minus closure", _mm(p.cut_length_m, s)))
    elif not p.stretch_possible:
        rows.append(("Length to cut out", "n/a: rail hotter than target (see the warnings)"))
    else:
        rows.append(("Length to cut out" if p.cut_length_m >= 0 else "Rail to add", _mm(abs(p.cut_length_m), s)))
    if p.mode != "heating" and not p.stretch_possible and p.mode != "repair":
        rows.append(("Tensor pull per rail", "n/a"))
    elif p.mode != "heating":
        cap = ""
        if p.tensor_capacity_N:
            cap = f" of {units.fmt(p.tensor_capacity_N, 'force', s, 0)} " + ("(within capacity)" if p.within_capacity else "(BEYOND CAPACITY)")
        rows.append(("Tensor pull per rail", units.fmt(p.tensor_force_per_rail_N, "force", s, 1) + cap))
    rows.append(("Can be done now", verdict_text(p)))
    if p.achieved_neutral_C is not None:
        rows.append(("Neutral reached (what-if)", T(p.achieved_neutral_C)))
    return rows


#: Short reasons for the verdict line, one per blocking warning code.
_BLOCKING_SHORT = {
    "rail_hotter_than_target": "rail hotter than target",
    "force_beyond_capacity": "pull beyond tensor capacity",
    "string_too_long": "pulled length too long for one tensor set",
    "rail_to_add": "rail must be added (re-plan as a repair)",
}


#: Figures the crew acts on, printed in bold.
_KEY_FIGURES = ("Length to cut out", "Rail to add", "Closure rail length to cut", "Tensor pull per rail",
                "Heat the rail to", "Can be done now")


def _is_key(label: str) -> bool:
    return label.startswith(_KEY_FIGURES)


def verdict_text(p: destressing.DestressPlan) -> str:
    """'yes', or 'NO: ...' naming every blocking warning (the warnings below say what to do)."""
    if p.can_be_done_now:
        return "yes"
    return "NO: " + "; ".join(_BLOCKING_SHORT.get(c, c) for c, _ in p.blocking) + " (see the warnings)"


def _observed_columns(p: destressing.DestressPlan) -> list[str]:
    """Blank columns for the readings: one per pulled length."""
    return ["observed"] if p.pull == "end" else ["observed half A", "observed half B"]


def _marks_table(p: destressing.DestressPlan, s: str) -> Table:
    halves = " (each half)" if p.pull == "centre" else ""
    t = Table(title=f"Reference marks{halves}: distance from the fixed end towards the cut")
    t.add_column("mark", justify="right")
    t.add_column(units.header("distance", "length", s), justify="right")
    t.add_column(units.header("movement", "short_length", s), justify="right")
    obs = _observed_columns(p)
    for name in obs:
        t.add_column(name, justify="left")
    for i, (d, m) in enumerate(p.marks):
        t.add_row(str(i), units.number(d, "length", s, 1), units.number(m, "short_length", s, 1 if s == "si" else 2),
                  *["________"] * len(obs))
    return t


# --------------------------------------------------------------------------
# The printable crew sheet (one A4 or Letter page)
# --------------------------------------------------------------------------

_CSS = """
@page { size: auto; margin: 10mm; }
* { box-sizing: border-box; }
body { font-family: Arial, Helvetica, sans-serif; font-size: 9pt; color: #000; margin: 0 auto;
       max-width: 190mm; }
h1 { font-size: 14pt; margin: 0 0 2mm 0; }
h2 { font-size: 10.5pt; margin: 3mm 0 1mm 0; border-bottom: 0.4mm solid #000; }
table { border-collapse: collapse; width: 100%; }
td, th { border: 0.2mm solid #555; padding: 0.6mm 1.5mm; vertical-align: top; }
th { background: #e8e8e8; text-align: left; }
td.num { text-align: right; white-space: nowrap; }
.cols { display: flex; gap: 3mm; }
.cols > div { flex: 1; }
.warn { border: 0.5mm solid #000; padding: 1mm 1.5mm; margin: 1mm 0; font-size: 8.5pt; }
.caution { font-size: 8pt; margin-top: 2mm; }
.blank { height: 6.5mm; }
.small { font-size: 8pt; }
tr.key th, tr.key td { font-weight: bold; font-size: 10.5pt; }
table.fig th { width: 50%; } table.fig td.num { white-space: normal; } tr.no td { color: #b00000; }
@media print { body { max-width: none; } .warn { -webkit-print-color-adjust: exact; } }
"""


#: Marks per column of the printed sheet; up to three columns fit one page.
_MARK_ROWS = 14


def crew_sheet_html(p: destressing.DestressPlan, inputs, figures, s: str) -> str:
    """One-page printable crew sheet (HTML with print CSS) from the plan.

    The marks table is laid out in up to three side-by-side columns so that a
    long string still fits one A4 or Letter page.
    """
    e = html.escape
    rows_in = "".join(f"<tr><th>{e(k)}</th><td>{e(v)}</td></tr>" for k, v in inputs if v)
    rows_fig = "".join(
        f"<tr class='{'key' if _is_key(k) else ''}{' no' if v.startswith('NO') else ''}'><th>{e(k)}</th>"
        f"<td class='num'>{e(v)}</td></tr>" for k, v in figures)
    marks = list(enumerate(p.marks))
    ncol = min(3, -(-len(marks) // _MARK_ROWS))
    per = -(-len(marks) // ncol)
    overflow = ""
    if len(marks) > 3 * _MARK_ROWS:
        overflow = (f"<p class='small'>{len(marks)} marks: more than one page holds; all are listed, "
                    "choose a wider --marks spacing for a one-page sheet.</p>")
    head = (f"<tr><th>mark</th><th>{e(units.header('distance', 'length', s))}</th>"
            f"<th>{e(units.header('movement', 'short_length', s))}</th>"
            + "".join(f"<th>{e(c)}</th>" for c in _observed_columns(p)) + "</tr>")
    blanks = "<td></td>" * len(_observed_columns(p))
    blocks = []
    for c in range(ncol):
        chunk = marks[c * per:(c + 1) * per]
        if not chunk:
            continue
        body = "".join(
            f"<tr><td class='num'>{i}</td><td class='num'>{units.number(d, 'length', s, 1)}</td>"
            f"<td class='num'>{units.number(m, 'short_length', s, 1 if s == 'si' else 2)}</td>{blanks}</tr>"
            for i, (d, m) in chunk
        )
        blocks.append(f"<div><table>{head}{body}</table></div>")
    halves = " (each half)" if p.pull == "centre" else ""
    warn = "".join(f"<div class='warn'><b>Warning:</b> {e(w)}</div>" for w in p.warnings)
    whatif = ""
    if p.achieved_neutral_C is not None:
        whatif = (f"<p>What-if: {e(_mm(p.observed_movement_m, s))} observed at "
                  f"{e(units.fmt(p.at_mark_m, 'length', s, 1))} (planned {e(_mm(p.expected_movement_at_mark_m, s))}) "
                  f"means a neutral temperature of <b>{e(units.fmt(p.achieved_neutral_C, 'temperature', s))}</b>.</p>")
    readings = "".join(
        f"<tr><td class='blank'>{e(k)}</td><td></td><td></td></tr>"
        for k in ("Rail temperature before cutting", "Rail temperature at the pull", "Rail temperature at welding")
    )
    signs = "".join(f"<tr><td class='blank'>{e(k)}</td><td></td><td></td></tr>"
                    for k in ("Person in charge", "Welder", "Checked by"))
    return f"""<!DOCTYPE html>
<html lang="en"><head><meta charset="utf-8"><title>Destressing crew sheet</title>
<style>{_CSS}</style></head><body>
<h1>Destressing crew sheet: {e(MODE_LABEL[p.mode])}</h1>
<p class="small">Prepared {date.today().isoformat()} with trackplan. Figures in {'SI' if s == 'si' else 'US customary'} units.</p>
<div class="cols"><div><h2>Inputs</h2><table>{rows_in}</table></div>
<div><h2>Figures</h2><table class="fig">{rows_fig}</table></div></div>
{warn}
<h2>Reference marks{e(halves)}: distance from the fixed end towards the cut, expected movement</h2>
<div class="cols">{''.join(blocks)}</div>
{overflow}
{whatif}
<div class="cols"><div><h2>Readings</h2><table><tr><th>reading</th><th>value</th><th>time</th></tr>{readings}</table></div>
<div><h2>Signatures</h2><table><tr><th>role</th><th>name</th><th>signature</th></tr>{signs}</table></div></div>
<p class="caution"><b>Caution:</b> {e(CAUTION)}</p>
</body></html>
"""
