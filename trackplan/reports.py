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


def write_csv(path: str | Path, frame, inputs: Iterable[str | Path] = ()) -> Path:
    """Write a pandas DataFrame as CSV atomically (index not written)."""
    return write_atomic(path, lambda p: frame.to_csv(p, index=False), inputs)


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
    rows = []
    for a in assessments:
        s, c, t = a.section, a.check, a.target
        rows.append({
            "section": s.id,
            "name": s.name,
            "location": s.location,
            "verdict": c.verdict,
            "reasons": " | ".join(c.reasons),
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
    if a.target.target_neutral_temperature_C is not None:
        P = thermal.thermal_force(T - (a.target.target_neutral_temperature_C - s.drift_allowance_K), E, A, al)
        ax.plot(conv_T(T), conv_F(P), ":", color="tab:green",
                label=f"after destressing to target, drifted {units.fmt(a.target.target_neutral_temperature_C, 'temperature', system)}")
    p_allow = thermal.thermal_force(c.allowable_rise_K, E, A, al)
    ax.axhline(conv_F(p_allow)[0], color="tab:red", lw=1, label="allowable compression (allowable rise)")
    g_force = -np.sqrt(c.gap_limit_m * E * A * a.longitudinal_resistance_N_per_m)
    ax.axhline(conv_F(g_force)[0], color="tab:purple", lw=1, label=f"tension at {c.gap_limit_m * 1e3:.0f} mm break gap")
    for tv in (c.design_min_rail_temperature_C, c.design_max_rail_temperature_C):
        ax.axvline(conv_T(tv), color="0.5", lw=0.8, ls="--")
    ax.axhline(0, color="k", lw=0.6)
    ax.set_xlabel(f"rail temperature [{units.label(units.display_unit('temperature', system))}]")
    ax.set_ylabel(f"force per rail [{units.display_unit('force', system)}] (compression +)")
    ax.set_title(f"{s.id} {s.name}: force envelope ({c.verdict})", fontsize=10)
    ax.legend(fontsize=7, loc="upper left")
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


def check_html(assessments, pngs: dict[str, bytes], caution: str, title: str = "Pre-summer CWR check",
               system: str = "si", generated: str = "") -> str:
    """One self-contained HTML summary (tables, embedded plots, cautions) to send round."""
    import base64
    import html

    from trackplan import units

    e = html.escape
    T = lambda v: units.fmt(v, "temperature", system) if v is not None else "–"
    dT = lambda v: units.fmt(v, "temperature_difference", system) if v is not None else "–"
    F = lambda v: units.fmt(v, "force", system, 0 if system == "si" else 1)
    L = lambda v: units.fmt(v, "short_length", system, 0 if system == "si" else 2)
    colour = {"act": "#c0392b", "watch": "#d68910", "ok": "#1e8449"}
    counts = {v: sum(a.check.verdict == v for a in assessments) for v in ("act", "watch", "ok")}
    rows = []
    for a in assessments:
        c, t, s = a.check, a.target, a.section
        rows.append(
            f"<tr><td><b>{e(s.id)}</b><br><small>{e(s.name)}</small></td>"
            f"<td style='color:{colour[c.verdict]};font-weight:bold'>{c.verdict}</td>"
            f"<td>{T(c.current_neutral_temperature_C)}</td><td>{T(c.design_max_rail_temperature_C)}</td>"
            f"<td>{dT(c.heat_rise_K)} / {dT(c.allowable_rise_K)}</td><td>{dT(c.heat_margin_K)}</td>"
            f"<td>{F(c.max_compression_force_per_rail_N)}</td><td>{T(c.design_min_rail_temperature_C)}</td>"
            f"<td>{F(c.max_tension_force_per_rail_N)}</td><td>{L(c.pull_apart_gap_m)}</td>"
            f"<td>{T(t.target_neutral_temperature_C)}</td>"
            f"<td><small>{'<br>'.join(e(r) for r in c.reasons_in(system))}</small></td></tr>"
        )
    figs = "".join(
        f"<figure><img alt='force envelope {e(sid)}' src='data:image/png;base64,{base64.b64encode(b).decode()}'>"
        f"</figure>" for sid, b in pngs.items()
    )
    warn = sorted({w for a in assessments for w in a.climate.warnings})
    warn_html = ("<h2>Data warnings</h2><ul>" + "".join(f"<li>{e(w)}</li>" for w in warn) + "</ul>") if warn else ""
    return f"""<!DOCTYPE html>
<html lang="en"><head><meta charset="utf-8"><title>{e(title)}</title>
<style>
body{{font-family:system-ui,Arial,sans-serif;margin:2em;color:#222}} table{{border-collapse:collapse;font-size:13px}}
td,th{{border:1px solid #ccc;padding:4px 6px;vertical-align:top}} th{{background:#f2f2f2}}
.caution{{border:2px solid #d68910;background:#fef5e7;padding:0.6em 1em;margin:1em 0}}
figure{{display:inline-block;margin:0.5em}} img{{max-width:640px}}
@media print{{figure{{page-break-inside:avoid}}}}
</style></head><body>
<h1>{e(title)}</h1>
<p>{e(generated)}</p>
<div class="caution"><b>Caution.</b> {e(caution)}</div>
<p><b>{counts['act']}</b> section(s) to act on, <b>{counts['watch']}</b> to watch, <b>{counts['ok']}</b> ok
(worst first). Current neutral = latest recorded neutral temperature less the drift allowance; the cold side
uses the recorded value without drift.</p>
<table><tr><th>section</th><th>verdict</th><th>current neutral</th><th>design max</th><th>rise / allowable</th>
<th>heat margin</th><th>compression / rail</th><th>design min</th><th>tension / rail</th><th>break gap</th>
<th>target neutral</th><th>reasons</th></tr>
{''.join(rows)}</table>
{warn_html}
<h2>Force envelopes</h2>{figs}
<div class="caution"><b>Caution.</b> {e(caution)}</div>
</body></html>
"""
