"""Writing results to files: whole sets atomically, never over an input.

Every file trackplan writes goes first to a temporary name and is then renamed
into place (``os.replace``), so a crash never leaves half a file.

**Output sets.** A command's ``--out`` folder receives its files as a set: while
the command runs (inside :func:`output_session`, which the command line opens
around every command), :func:`prepare_out_dir` makes a hidden staging folder
inside the output folder (``.trackplan-staging-PID-...``) and every file goes
there. Only when the command has finished without error are the files moved into
place, one ``os.replace`` each, after removing the previous set's manifest; the
manifest :data:`MANIFEST_NAME` (names, sizes and SHA-256 of the files, the
command line, the time) is written last. A set without a manifest (a run killed
while moving files) is incomplete; a run that fails or is stopped earlier leaves
the previous set as it was. Staging folders of processes that no longer run are
removed by the next run, and no ``.part`` file is left behind.

**Safe names.** File names made from section ids go through :func:`safe_name`.

**CSV cells.** Text cells that begin with ``=``, ``+``, ``-``, ``@``, a tab or a
carriage return would be read as formulas by spreadsheet programs: they are
written with a leading apostrophe (``'=cmd``), the usual neutralising of
formula injection (numbers are written as numbers).

**Writability.** :func:`check_writable` is called before any computation: a
folder that cannot be written is named at once, not after the work.
"""

from __future__ import annotations

import contextlib
import hashlib
import json
import os
import re
import shutil
import tempfile
import time
from pathlib import Path
from typing import Callable, Iterable

from trackplan import notices
from trackplan.errors import InputError, excerpt

#: Name of the manifest written last into an output folder.
MANIFEST_NAME = "trackplan-files.json"
_STAGING_PREFIX = ".trackplan-staging-"
#: Longest file name made from an id [characters], before its extension.
MAX_NAME_CHARS = 80

_SESSION: dict | None = None  # out folder (resolved) -> OutputSet, while a command runs


def safe_name(text: str) -> str:
    """A file-name part made from an id: letters, digits, ``.``, ``_`` and ``-`` kept, anything
    else (``/``, spaces, control characters) as ``_``; at most :data:`MAX_NAME_CHARS`; a short
    hash of the id is appended when anything was changed, so distinct ids keep distinct names.

    Examples
    --------
    >>> safe_name("NV-101")
    'NV-101'
    >>> safe_name("a/b")
    'a_b-3ec69c85'
    """
    text = str(text)
    clean = re.sub(r"[^A-Za-z0-9._-]", "_", text).lstrip(".") or "_"
    if clean == text and len(clean) <= MAX_NAME_CHARS:
        return clean
    digest = hashlib.sha1(text.encode("utf-8", "surrogateescape")).hexdigest()[:8]
    return f"{clean[:MAX_NAME_CHARS]}-{digest}"


def _out_label(out) -> str:
    return f"--out {excerpt(str(out), 120)}" if len(str(out)) > 120 else f"--out {out}"


def check_writable(out: str | Path, inputs: Iterable[str | Path] = ()) -> None:
    """Refuse, before any work, an output folder that is an input or cannot be made or written.

    Raises
    ------
    InputError
        Naming the folder: not a folder, not writable, or a parent that cannot hold it.
    """
    from trackplan import safeio

    where = _out_label(out)
    p = safeio.check_path(out, where)
    if p.exists() and p.resolve() in {Path(i).resolve() for i in inputs}:
        raise InputError("is an input file; give a folder for the output files", where)
    probe = p
    while not probe.exists():
        if probe.is_symlink():
            raise InputError("is a broken symbolic link; give a folder for the output files", where)
        parent = probe.parent
        if parent == probe:
            break
        probe = parent
    if probe.exists() and not probe.is_dir():
        what = "exists and is not a folder" if probe == p else f"{excerpt(str(probe), 80)} is not a folder"
        raise InputError(f"{what}; give a folder for the output files", where)
    which = "the folder" if probe == p else f"the folder {excerpt(str(probe), 80)} that would hold it"
    if not os.access(probe, os.W_OK | os.X_OK):
        raise InputError(f"{which} is not writable; choose another --out folder", where)
    try:  # the permission bits do not tell everything (read-only file systems, special folders)
        fd, tmp = tempfile.mkstemp(prefix=".trackplan-probe-", dir=probe)
        os.close(fd)
        os.unlink(tmp)
    except OSError as exc:
        raise InputError(f"{which} is not writable ({exc.strerror}); choose another --out folder", where) from None


class OutputSet:
    """The files of one output folder of one run, staged and then moved into place together."""

    def __init__(self, out: Path):
        self.out = out
        _remove_stale_staging(out)
        self.staging = Path(tempfile.mkdtemp(prefix=f"{_STAGING_PREFIX}{os.getpid()}-", dir=out))
        self.files: list[str] = []

    def stage(self, name: str) -> Path:
        if name not in self.files:
            self.files.append(name)
        return self.staging / name

    def commit(self) -> None:
        """Move the staged files into place, then write the manifest last."""
        manifest = self.out / MANIFEST_NAME
        manifest.unlink(missing_ok=True)
        entries = []
        for name in self.files:
            src = self.staging / name
            if not src.exists():
                continue
            data = src.read_bytes()
            entries.append({"name": name, "bytes": len(data), "sha256": hashlib.sha256(data).hexdigest()})
            os.replace(src, self.out / name)
        doc = {"written_by": "trackplan", "command": _command_line(),
               "time_utc": time.strftime("%Y-%m-%dT%H:%M:%SZ", time.gmtime()), "files": entries}
        text = json.dumps(doc, indent=2) + "\n"
        fd, tmp = tempfile.mkstemp(prefix=".manifest.", dir=self.staging)
        with os.fdopen(fd, "w", encoding="utf-8") as fh:
            fh.write(text)
        _usual_mode(Path(tmp))
        os.replace(tmp, manifest)
        self.discard()

    def discard(self) -> None:
        shutil.rmtree(self.staging, ignore_errors=True)


def _command_line() -> list[str]:
    import sys

    return ["trackplan", *sys.argv[1:]] if sys.argv and "trackplan" in Path(sys.argv[0]).name else []


def _remove_stale_staging(out: Path) -> None:
    """Remove staging folders left by runs that were killed (their process no longer exists)."""
    try:
        entries = list(out.iterdir())
    except OSError:
        return
    for e in entries:
        if not e.name.startswith(_STAGING_PREFIX) or not e.is_dir():
            continue
        try:
            pid = int(e.name[len(_STAGING_PREFIX):].split("-", 1)[0])
        except ValueError:
            continue
        alive = True
        try:
            os.kill(pid, 0)
        except ProcessLookupError:
            alive = False
        except OSError:
            pass
        if not alive or pid == os.getpid():
            shutil.rmtree(e, ignore_errors=True)


@contextlib.contextmanager
def output_session():
    """Collect every output folder prepared inside the block as a set; move each set into place when
    the block ends normally, discard the staged files when it raises (see the module docstring)."""
    global _SESSION
    if _SESSION is not None:  # nested: the outer session commits
        yield
        return
    _SESSION = {}
    try:
        yield
    except BaseException as exc:
        if not _finished(exc):
            sets, _SESSION = _SESSION, None
            for st in sets.values():
                st.discard()
            raise
        _commit_session()  # the command ended with its exit code (e.g. 1: a section to act on)
        raise
    _commit_session()


def _finished(exc: BaseException) -> bool:
    """Whether ``exc`` is a command ending normally with an exit code, not a failure."""
    if isinstance(exc, SystemExit):
        return True
    try:
        import click
    except ImportError:  # pragma: no cover
        return False
    return isinstance(exc, click.exceptions.Exit)


def _commit_session() -> None:
    global _SESSION
    sets, _SESSION = _SESSION, None
    try:
        for st in sets.values():
            st.commit()
    except OSError as exc:
        for st in sets.values():
            st.discard()
        raise InputError(f"cannot move the output files into place ({exc.strerror})",
                         _out_label(next(iter(sets.values())).out)) from None
    except BaseException:
        for st in sets.values():
            st.discard()
        raise


def prepare_out_dir(out: str | Path, inputs: Iterable[str | Path] = (), planned: Iterable[str] = ()) -> Path:
    """Create ``out`` (and parents) and return it as a Path.

    ``inputs`` are the run's input files: a folder that *is* an input is refused,
    and so is any of the ``planned`` file names that would land on an input (checked
    before anything is written, so no run stops half-way through its outputs);
    :func:`write_atomic` guards each file again. Inside :func:`output_session` the
    folder's files are staged and moved into place as a set.

    Raises
    ------
    InputError
        ``out`` exists and is not a folder, or cannot be created.
    """
    check_writable(out, inputs)
    out = Path(out)
    where = _out_label(out)
    if out.resolve() in {Path(p).resolve() for p in inputs}:
        raise InputError("is an input file; give a folder for the output files", where)
    if out.exists() and not out.is_dir():
        raise InputError("exists and is not a folder; give a folder for the output files", where)
    ins = {Path(p).resolve() for p in inputs}
    for name in planned:
        if (out / name).resolve() in ins:
            raise InputError(f"the output {name} would overwrite an input file; choose another --out folder", where)
    try:
        out.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise InputError(f"cannot create the folder ({exc.strerror})", where) from None
    if _SESSION is not None:
        key = out.resolve()
        if key not in _SESSION:
            try:
                _SESSION[key] = OutputSet(out)
            except OSError as exc:
                raise InputError(f"cannot write in the folder ({exc.strerror})", where) from None
    return out


def _staged(path: Path) -> Path | None:
    """The staging path of ``path`` when its folder is an output set of the running command."""
    if _SESSION is None:
        return None
    st = _SESSION.get(path.parent.resolve())
    return None if st is None else st.stage(path.name)


def _usual_mode(p: Path) -> None:
    # mkstemp makes the file private (0600); give it the usual mode for new files
    umask = os.umask(0)
    os.umask(umask)
    os.chmod(p, 0o666 & ~umask)


def _guard(path: Path, inputs: Iterable[Path]) -> None:
    rp = path.resolve()
    if rp in set(inputs):
        raise InputError("would overwrite an input file; choose another --out folder", str(path))


def write_atomic(path: str | Path, writer: Callable[[Path], None], inputs: Iterable[str | Path] = ()) -> Path:
    """Write a file by calling ``writer(tmp_path)`` then renaming into place.

    Inside :func:`output_session`, a file of a prepared output folder is written to the
    folder's staging area and moved into place with the rest of its set.

    Parameters
    ----------
    path : path
        Final file name.
    writer : callable
        Function that writes the whole file at the temporary path it is given.
    inputs : iterable of paths
        Input files of the run, never overwritten.

    Returns
    -------
    Path
        The final path of the file.
    """
    path = Path(path)
    _guard(path, [Path(p).resolve() for p in inputs])
    staged = _staged(path)
    if staged is not None:
        try:
            writer(staged)
            _usual_mode(staged)
        except BaseException:
            staged.unlink(missing_ok=True)
            raise
        return path
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".part", dir=path.parent)
    os.close(fd)
    tmp_path = Path(tmp)
    try:
        writer(tmp_path)
        _usual_mode(tmp_path)
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
        if digits is not None:  # a small value (a probability per year) keeps 3 significant digits
            small = (out[col] != 0) & (out[col].abs() < 10.0 ** (1 - digits))
            out[col] = out[col].round(digits).where(~small, out[col].map(lambda v: float(f"{v:.3g}")))
        else:  # no unit suffix known, or a small coefficient (alpha_per_K): significant digits
            out[col] = out[col].map(lambda v: float(f"{v:.6g}") if v == v else v)
    return out


#: First characters that make a spreadsheet read a cell as a formula.
FORMULA_STARTS = ("=", "+", "-", "@", "\t", "\r")


def neutralise_cell(value):
    """A text cell that a spreadsheet would read as a formula, with a leading apostrophe
    (``'=1+2``); anything else unchanged."""
    if isinstance(value, str) and value.startswith(FORMULA_STARTS):
        return "'" + value
    return value


def neutralise_frame(frame):
    """A copy of ``frame`` with every text cell (and column name) neutralised (see :func:`neutralise_cell`)."""
    out = frame.copy()
    for col in out.columns:
        if out[col].dtype == object or str(out[col].dtype) in ("string", "str"):
            out[col] = out[col].map(neutralise_cell)
    out.columns = [neutralise_cell(c) for c in out.columns]
    return out


def csv_text(frame, settings: Iterable[tuple[str, str]] = ()) -> str:
    """CSV text: ``# key: value`` lines recording how the file was made, then the
    rounded table (the layout trackplan's own CSV reader accepts), formula-like text
    cells neutralised (see the module docstring)."""
    head = "".join(f"# {k}: {' '.join(str(v).split())}\n" for k, v in settings if v not in (None, ""))
    return head + rounded(neutralise_frame(frame)).to_csv(index=False)


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
    """Select the non-interactive Agg backend (no screen on CI or servers), and read every text as
    plain text: names and ids from users' files go into titles and legends, and a ``$`` in them must
    not start matplotlib's math notation (an unbalanced one would stop the run)."""
    import matplotlib

    matplotlib.use("Agg")
    matplotlib.rcParams["text.parse_math"] = False


# --------------------------------------------------------------------------
# Pre-summer check outputs (CSV frame, force envelope plot, HTML summary)
# --------------------------------------------------------------------------


def check_rows(assessments) -> list[dict]:
    """One flat CSV row of figures per assessed section (see :func:`trackplan.assessment_tables.check_rows`)."""
    from trackplan.assessment_tables import check_rows as rows

    return rows(assessments)


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
    g_force = -thermal.gap_force_N(c.gap_limit_m, E, A, a.longitudinal_resistance_N_per_m)
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
        if notices.as_notice(w).code == "no_coordinates":
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
