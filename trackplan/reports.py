"""Writing results to files: atomically, never over an input.

Every file trackplan writes goes first to a temporary name in the target folder
and is then renamed into place (``os.replace``), so a crash never leaves half a
file. :func:`prepare_out_dir` creates the output folder and refuses a folder
that would put an output over one of the run's input files.
"""

from __future__ import annotations

import os
import tempfile
from pathlib import Path
from typing import Callable, Iterable

from trackplan.errors import InputError


def prepare_out_dir(out: str | Path, inputs: Iterable[str | Path] = (), planned: Iterable[str] = ()) -> Path:
    """Create ``out`` (and parents) and return it as a Path.

    ``inputs`` are the run's input files: a folder that *is* an input is refused,
    and so is any of the ``planned`` file names that would land on an input (checked
    before anything is written, so no run stops half-way through its outputs);
    :func:`write_atomic` guards each file again.

    Raises
    ------
    InputError
        ``out`` exists and is not a folder, or cannot be created.
    """
    out = Path(out)
    if out.resolve() in {Path(p).resolve() for p in inputs}:
        raise InputError("is an input file; give a folder for the output files", f"--out {out}")
    if out.exists() and not out.is_dir():
        raise InputError("exists and is not a folder; give a folder for the output files", f"--out {out}")
    ins = {Path(p).resolve() for p in inputs}
    for name in planned:
        if (out / name).resolve() in ins:
            raise InputError(f"the output {name} would overwrite an input file; choose another --out folder",
                             f"--out {out}")
    try:
        out.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise InputError(f"cannot create the folder ({exc.strerror})", f"--out {out}") from None
    return out


def _guard(path: Path, inputs: Iterable[Path]) -> None:
    rp = path.resolve()
    if rp in set(inputs):
        raise InputError("would overwrite an input file; choose another --out folder", str(path))


def write_atomic(path: str | Path, writer: Callable[[Path], None], inputs: Iterable[str | Path] = ()) -> Path:
    """Write a file by calling ``writer(tmp_path)`` then renaming into place.

    Parameters
    ----------
    path : path
        Final file name.
    writer : callable
        Function that writes the whole file at the temporary path it is given.
    inputs : iterable of paths
        Input files of the run, never overwritten.
    """
    path = Path(path)
    _guard(path, [Path(p).resolve() for p in inputs])
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".part", dir=path.parent)
    os.close(fd)
    tmp_path = Path(tmp)
    try:
        writer(tmp_path)
        # mkstemp makes the file private (0600); give it the usual mode for new files
        umask = os.umask(0)
        os.umask(umask)
        os.chmod(tmp_path, 0o666 & ~umask)
        os.replace(tmp_path, path)
    except BaseException:
        tmp_path.unlink(missing_ok=True)
        raise
    return path


def write_text(path: str | Path, text: str, inputs: Iterable[str | Path] = ()) -> Path:
    """Write a text file atomically (UTF-8)."""
    return write_atomic(path, lambda p: p.write_text(text, encoding="utf-8"), inputs)


#: Decimals kept in CSV files by the unit at the end of a column name: the
#: precision the quantity is known to (a rail temperature to 0.01 degC, a force to
#: 0.01 kN, ...); other float columns keep 6 significant digits.
CSV_DECIMALS = {"_C": 2, "_K": 2, "_mm": 1, "_kN": 2, "_MPa": 1, "_m": 3, "_kN_per_m": 3, "_years": 1,
                "_per_year": 2, "_per_decade": 2, "_deg": 2, "_per_K": None}


def rounded(frame):
    """A copy of ``frame`` with float columns rounded as :data:`CSV_DECIMALS` says."""
    out = frame.copy()
    for col in out.columns:
        if out[col].dtype.kind != "f":
            continue
        digits = next((d for suf, d in sorted(CSV_DECIMALS.items(), key=lambda kv: -len(kv[0]))
                       if str(col).endswith(suf)), None)
        if digits is not None:
            out[col] = out[col].round(digits)
        else:  # no unit suffix known, or a small coefficient (alpha_per_K): significant digits
            out[col] = out[col].map(lambda v: float(f"{v:.6g}") if v == v else v)
    return out


def csv_text(frame, settings: Iterable[tuple[str, str]] = ()) -> str:
    """CSV text: ``# key: value`` lines recording how the file was made, then the
    rounded table (the layout trackplan's own CSV reader accepts)."""
    head = "".join(f"# {k}: {' '.join(str(v).split())}\n" for k, v in settings if v not in (None, ""))
    return head + rounded(frame).to_csv(index=False)


def write_csv(path: str | Path, frame, inputs: Iterable[str | Path] = (),
              settings: Iterable[tuple[str, str]] = ()) -> Path:
    """Write a pandas DataFrame as CSV atomically (index not written), with the
    settings it was made with as ``# key: value`` lines above the header."""
    text = csv_text(frame, settings)
    return write_atomic(path, lambda p: p.write_text(text, encoding="utf-8"), inputs)


def save_figure(path: str | Path, fig, inputs: Iterable[str | Path] = (), dpi: int = 120) -> Path:
    """Save a matplotlib figure atomically and close it."""
    import matplotlib.pyplot as plt

    fmt = Path(path).suffix.lstrip(".") or "png"
    try:
        return write_atomic(path, lambda p: fig.savefig(p, dpi=dpi, format=fmt, bbox_inches="tight"), inputs)
    finally:
        plt.close(fig)


def matplotlib_backend() -> None:
    """Select the non-interactive Agg backend (no screen on CI or servers)."""
    import matplotlib

    matplotlib.use("Agg")


# --------------------------------------------------------------------------
# Pre-summer check outputs (CSV frame, force envelope plot, HTML summary)
# --------------------------------------------------------------------------


def check_rows(assessments) -> list[dict]:
    """One flat row of figures per assessed section (SI, units in column names)."""
    from trackplan.actions import section_action

    rows = []
    for a in assessments:
        s, c, t = a.section, a.check, a.target
        action = section_action(a)
        rows.append({
            "section": s.id,
            "name": s.name,
            "location": s.location,
            "verdict": c.verdict,
            "reasons": " | ".join(c.reasons),
            "action": "" if action is None else str(action),
            "rail": s.profile.name,
            "sleeper": s.sleeper,
            "ballast": s.ballast,
            "curve": s.curve_label,
            "station": a.climate.station,
            "rail_temperature_method": a.climate.method,
            "design_basis": a.climate.design.design_basis,
            "return_period_years": a.climate.design.return_period_years,
            "design_max_rail_temperature_C": c.design_max_rail_temperature_C,
            "design_min_rail_temperature_C": c.design_min_rail_temperature_C,
            "recorded_neutral_temperature_C": s.latest_neutral_temperature_C,
            "drift_allowance_K": s.drift_allowance_K,
            "current_neutral_temperature_C": c.current_neutral_temperature_C,
            "heat_rise_K": c.heat_rise_K,
            "upper_critical_rise_K": a.stability.upper_critical_rise_K,
            "lower_critical_rise_K": a.stability.lower_critical_rise_K,
            "allowable_rise_K": c.allowable_rise_K,
            "heat_margin_K": c.heat_margin_K,
            "max_compression_force_per_rail_kN": c.max_compression_force_per_rail_N / 1e3,
            "max_tension_force_per_rail_kN": c.max_tension_force_per_rail_N / 1e3,
            "max_tension_stress_MPa": c.max_tension_stress_Pa / 1e6,
            "pull_apart_gap_mm": c.pull_apart_gap_m * 1e3,
            "gap_limit_mm": c.gap_limit_m * 1e3,
            "longitudinal_resistance_kN_per_m": a.longitudinal_resistance_N_per_m / 1e3,
            "target_neutral_temperature_C": t.target_neutral_temperature_C,
            "laying_range_low_C": t.laying_range_C[0] if t.laying_range_C else None,
            "laying_range_high_C": t.laying_range_C[1] if t.laying_range_C else None,
            "feasible": t.feasible,
        })
    return rows


def force_envelope_figure(a, system: str = "si"):
    """Force per rail against rail temperature for one section: the band the section
    will see (design min to max) with its current neutral estimate, the allowable
    compression (allowable rise) and the cold-side force at the gap limit."""
    import numpy as np
    import matplotlib.pyplot as plt

    from trackplan import thermal, units

    s, c = a.section, a.check
    E, A, al = s.steel.E_Pa, s.profile.area_m2, s.steel.alpha_per_K
    T = np.linspace(c.design_min_rail_temperature_C - 5, c.design_max_rail_temperature_C + 5, 200)
    conv_T = lambda v: units.convert_for_display(v, "temperature", system)[0]
    conv_F = lambda v: np.asarray([units.convert_for_display(x, "force", system)[0] for x in np.atleast_1d(v)])
    fig, ax = plt.subplots(figsize=(7, 4.2))
    for tn, style, lab in ((c.current_neutral_temperature_C, "-", "current neutral estimate"),
                           (c.cold_neutral_temperature_C, "--", "recorded neutral (cold side)")):
        P = thermal.thermal_force(T - tn, E, A, al)
        ax.plot(conv_T(T), conv_F(P), style, color="tab:blue", label=f"{lab} {units.fmt(tn, 'temperature', system)}")
    tgt = a.target.target_neutral_temperature_C
    if tgt is not None:
        drifted = tgt - s.drift_allowance_K
        P = thermal.thermal_force(T - drifted, E, A, al)
        ax.plot(conv_T(T), conv_F(P), ":", color="tab:green",
                label=f"after destressing to the target {units.fmt(tgt, 'temperature', system)}, "
                      f"less drift: {units.fmt(drifted, 'temperature', system)}")
    p_allow = thermal.thermal_force(c.allowable_rise_K, E, A, al)
    ax.axhline(conv_F(p_allow)[0], color="tab:red", lw=1,
               label=f"allowable compression (allowable rise {units.fmt(c.allowable_rise_K, 'temperature_difference', system)})")
    g_force = -np.sqrt(c.gap_limit_m * E * A * a.longitudinal_resistance_N_per_m)
    ax.axhline(conv_F(g_force)[0], color="tab:purple", lw=1,
               label=f"tension at the {units.fmt(c.gap_limit_m, 'short_length', system, 0 if system == 'si' else 1)} break-gap limit")
    for k, tv in enumerate((c.design_min_rail_temperature_C, c.design_max_rail_temperature_C)):
        ax.axvline(conv_T(tv), color="0.5", lw=0.8, ls="--",
                   label="design min and max rail temperature" if k == 0 else None)
    ax.axhline(0, color="k", lw=0.6)
    ax.set_xlabel(f"rail temperature [{units.label(units.display_unit('temperature', system))}]")
    ax.set_ylabel(f"force per rail [{units.display_unit('force', system)}] (compression +)")
    d = a.climate.design
    basis = "observed extremes" if d.design_basis == "observed" else f"{d.return_period_years:g}-year {d.design_basis}"
    ax.set_title(f"{s.id} {s.name}: force per rail ({c.verdict})\ndesign temperatures {basis}, "
                 f"drift allowance {units.fmt(s.drift_allowance_K, 'temperature_difference', system)}", fontsize=9)
    ax.legend(fontsize=7, loc="upper left", framealpha=0.9)
    ax.grid(alpha=0.3)
    return fig


def figure_png_bytes(fig) -> bytes:
    """Render a figure to PNG bytes (for embedding) and close it."""
    import io

    import matplotlib.pyplot as plt

    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=100, bbox_inches="tight")
    plt.close(fig)
    return buf.getvalue()


#: Print styles shared by the HTML reports: landscape pages, rows never split across
#: pages, plots two or three to a page.
PRINT_CSS = """
@page { size: A4 landscape; margin: 7mm; }
@media print {
  body { margin: 0; font-size: 8pt; }
  h1 { font-size: 13pt; margin: 0 0 1mm 0; } p { margin: 0.8mm 0; font-size: 7.5pt; }
  .caution { padding: 0.8mm 2mm; margin: 1mm 0; font-size: 7.5pt; }
  table { font-size: 7pt; width: 100%; } td, th { padding: 0.5px 2px; }
  td small { font-size: 6pt; line-height: 1.12; } td.why { width: 54%; }
  th { font-size: 6.5pt; }
  tr, figure, .caution, li { break-inside: avoid; page-break-inside: avoid; }
  thead { display: table-header-group; }
  h2 { break-after: avoid; page-break-after: avoid; }
  .plots { break-before: page; page-break-before: always; }
  .plots figure { width: 31%; margin: 0 0.5% 1mm 0.5%; }
  .plots img { width: 100%; max-width: none; }
}
"""

#: Screen styles shared by the HTML reports.
SCREEN_CSS = """
body{font-family:system-ui,Arial,sans-serif;margin:1.5em;color:#222}
table{border-collapse:collapse;font-size:13px}
td,th{border:1px solid #ccc;padding:3px 5px;vertical-align:top;text-align:left}
th{background:#f2f2f2} td.num{text-align:right;white-space:nowrap}
.caution{border:2px solid #d68910;background:#fef5e7;padding:0.4em 0.8em;margin:0.6em 0}
.settings{color:#444;font-size:90%}
figure{display:inline-block;margin:0.4em;vertical-align:top} img{max-width:560px}
"""


def grouped_warnings(items) -> list[tuple[str, list[str], str]]:
    """Data warnings once per station: ``(station, [section ids], warning)`` from
    ``(station, section id, warning)`` triples, in first-seen order."""
    seen: dict[tuple[str, str], list[str]] = {}
    for station, sid, w in items:
        if "no latitude/longitude" in w:
            continue  # a section that was assessed had its coordinates (from the section file)
        ids = seen.setdefault((station, w), [])
        if sid not in ids:
            ids.append(sid)
    return [(st, ids, w) for (st, w), ids in seen.items()]


def warnings_html(items, system: str = "si") -> str:
    """A 'Data warnings' list naming the station and the sections of each warning
    (figures in ``system``)."""
    import html

    e = html.escape
    groups = grouped_warnings(items)
    if not groups:
        return ""
    from trackplan.units import text_in

    lis = "".join(f"<li><b>{e(st)}</b> (section{'s' if len(ids) > 1 else ''} {e(', '.join(ids))}): "
                  f"{e(text_in(w, system))}</li>" for st, ids, w in groups)
    return f"<h2>Data warnings</h2><ul>{lis}</ul>"


def check_html(assessments, pngs: dict[str, bytes], caution: str, title: str = "Pre-summer CWR check",
               system: str = "si", generated: str = "", network: str | None = None,
               settings: str = "") -> str:
    """One self-contained HTML summary (tables, embedded plots, cautions) to send round.

    Printed, it is landscape with one summary page for up to a dozen sections and
    the force envelopes three to a row; no table row is split across pages.
    """
    import base64
    import html

    from trackplan import units
    from trackplan.actions import section_action

    e = html.escape
    T = lambda v: units.number(v, "temperature", system)
    dT = lambda v: units.number(v, "temperature_difference", system)
    F = lambda v: units.number(v, "force", system, 0 if system == "si" else 1)
    L = lambda v: units.number(v, "short_length", system, 0 if system == "si" else 2)
    colour = {"act": "#c0392b", "watch": "#b9770e", "ok": "#1e8449"}
    counts = {v: sum(a.check.verdict == v for a in assessments) for v in ("act", "watch", "ok")}
    rows = []
    for a in assessments:
        c, t, s = a.check, a.target, a.section
        action = section_action(a)
        what = "; ".join(e(r) for r in c.reasons_in(system))
        if action is not None:
            what += f"<br><b>Action:</b> {e(action.text(system))}"
        rows.append(
            f"<tr><td><b>{e(s.id)}</b><br><small>{e(s.name)}</small></td>"
            f"<td style='color:{colour[c.verdict]};font-weight:bold'>{c.verdict}</td>"
            f"<td class='num'>{T(c.current_neutral_temperature_C)}</td>"
            f"<td class='num'>{T(c.design_max_rail_temperature_C)}</td>"
            f"<td class='num'>{dT(c.heat_rise_K)} / {dT(c.allowable_rise_K)}</td>"
            f"<td class='num'>{dT(c.heat_margin_K)}</td>"
            f"<td class='num'>{F(c.max_compression_force_per_rail_N)}</td>"
            f"<td class='num'>{T(c.design_min_rail_temperature_C)}</td>"
            f"<td class='num'>{F(-c.max_tension_force_per_rail_N)}</td><td class='num'>{L(c.pull_apart_gap_m)}</td>"
            f"<td class='num'>{T(t.target_neutral_temperature_C)}</td>"
            f"<td class='why' style='min-width:26em'><small>{what}</small></td></tr>"
        )
    figs = "".join(
        f"<figure><img alt='force envelope {e(sid)}' src='data:image/png;base64,{base64.b64encode(b).decode()}'>"
        f"</figure>" for sid, b in pngs.items()
    )
    warn_html = warnings_html(((a.climate.station, a.section.id, w) for a in assessments for w in a.climate.warnings),
                              system)
    u = lambda kind: e(units.label(units.display_unit(kind, system)))
    heading = e(title) + (f": {e(network)}" if network else "")
    empty = "" if assessments else "<p><b>No section could be checked.</b></p>"
    table = "" if not assessments else f"""<table><thead><tr><th>section</th><th>verdict</th>
<th>neutral now ({u('temperature')})</th><th>design max ({u('temperature')})</th>
<th>rise / allowable ({u('temperature_difference')})</th><th>heat margin ({u('temperature_difference')})</th>
<th>compression per rail ({u('force')})</th><th>design min ({u('temperature')})</th>
<th>tension per rail ({u('force')})</th><th>break gap ({u('short_length')})</th>
<th>target neutral ({u('temperature')})</th><th>reasons and action</th></tr></thead>
<tbody>{''.join(rows)}</tbody></table>"""
    return f"""<!DOCTYPE html>
<html lang="en"><head><meta charset="utf-8"><title>{heading}</title>
<style>{SCREEN_CSS}{PRINT_CSS}</style></head><body>
<h1>{heading}</h1>
<p class="settings">{e(generated)}{(' ' + e(settings)) if settings else ''}</p>
<div class="caution"><b>Caution.</b> {e(caution)}</div>
<p><b>{counts['act']}</b> section(s) to act on, <b>{counts['watch']}</b> to watch, <b>{counts['ok']}</b> ok
(worst first). Neutral now = latest recorded neutral temperature less the drift allowance; the cold side
uses the recorded value without drift.</p>
{empty}{table}
{warn_html}
<div class="plots"><h2>Force envelopes</h2>{figs}</div>
<div class="caution"><b>Caution.</b> {e(caution)}</div>
</body></html>
"""
