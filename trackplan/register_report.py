"""Rendering of the neutral-temperature register: history rows, the history plot, CSV export.

Reads :class:`trackplan.register.SectionHistory` objects only; no computation
beyond laying out what the register holds. matplotlib is imported inside the
plotting function.
"""

from __future__ import annotations

import csv
import datetime as dt
import io

from trackplan import CAUTION, units

#: Marker and colour per entry kind in the history plot.
_KIND_STYLE = {
    "laid": ("s", "#1f4e79"), "renewed": ("s", "#1f4e79"), "destressed": ("D", "#2e7d32"),
    "adjusted": ("D", "#558b2f"), "repaired": ("P", "#6a1b9a"), "measured": ("o", "#c62828"),
}
_EVENT_COLOUR = {"tamped": "#e67e22", "repaired": "#6a1b9a", "note": "#7f8c8d"}


def history_rows(history, system: str = "si") -> list[dict]:
    """One printable row per entry (corrected entries included, marked), in date order."""
    rows = []
    for e in sorted(history.entries, key=lambda e: (e.date or dt.date.min, e.id)):
        t = "–" if e.neutral_temperature_C is None else units.number(e.neutral_temperature_C, "temperature", system)
        u = "–" if e.uncertainty_K is None else units.number(e.uncertainty_K, "temperature_difference", system)
        status = f"corrected by {e.corrected_by}" if e.corrected_by is not None else (
            f"corrects {e.corrects}" if e.corrects is not None else "")
        rows.append({"id": str(e.id), "date": e.date.isoformat() if e.date else "undated", "kind": e.kind,
                     "neutral": t, "uncertainty": u, "basis": e.basis or "", "method": e.method or "",
                     "by": e.entered_by, "source": e.source, "status": status, "note": e.note or "",
                     "details": "; ".join(x for x in (e.method, e.source, e.note) if x)})
    return rows


def history_figure(history, system: str = "si", today: dt.date | None = None):
    """Neutral temperature over time with its uncertainty band and the events marked.

    The effective neutral temperature is drawn as a step line from each
    entry's date to the next (and to today); the band is ± the entry's
    standard uncertainty where the register gives one. Entries without a
    neutral temperature (tamping, repairs without a value, notes) are vertical
    lines; corrected entries are shown as hollow grey markers.
    """
    import matplotlib.dates as mdates
    import matplotlib.pyplot as plt

    today = today or dt.date.today()
    conv = units.display_unit("temperature", system)
    T = lambda v: units.convert_for_display(v, "temperature", system)[0]  # noqa: E731
    dK = lambda v: units.convert_for_display(v, "temperature_difference", system)[0]  # noqa: E731
    fig, ax = plt.subplots(figsize=(9.0, 4.6))
    neutrals = [e for e in history.neutral_entries if e.date is not None]
    undated = [e for e in history.neutral_entries if e.date is None]
    for i, e in enumerate(neutrals):
        end = neutrals[i + 1].date if i + 1 < len(neutrals) else today
        t = T(e.neutral_temperature_C)
        ax.plot([e.date, end], [t, t], color="#34495e", lw=1.8, zorder=3,
                label="neutral temperature (register)" if i == 0 else None)
        if e.uncertainty_K is not None:
            u = dK(e.uncertainty_K)
            ax.fill_between([e.date, end], [t - u] * 2, [t + u] * 2, color="#5dade2", alpha=0.3, lw=0, zorder=1,
                            label="± standard uncertainty" if not any(
                                x.uncertainty_K is not None for x in neutrals[:i]) else None)
        if i + 1 < len(neutrals):
            ax.plot([end, end], [t, T(neutrals[i + 1].neutral_temperature_C)], color="#34495e", lw=0.8, ls=":")
    seen = set()
    for e in neutrals:
        marker, colour = _KIND_STYLE.get(e.kind, ("o", "#34495e"))
        ax.errorbar([e.date], [T(e.neutral_temperature_C)],
                    yerr=None if e.uncertainty_K is None else [dK(e.uncertainty_K)], marker=marker, color=colour,
                    ms=7, ls="none", capsize=4, zorder=4, label=e.kind if e.kind not in seen else None)
        seen.add(e.kind)
        ax.annotate(f"#{e.id}", (e.date, T(e.neutral_temperature_C)), textcoords="offset points", xytext=(4, 6),
                    fontsize=7, color="#555555")
    for e in history.entries:
        if e.corrected_by is not None and e.neutral_temperature_C is not None and e.date is not None:
            ax.plot([e.date], [T(e.neutral_temperature_C)], marker="o", mfc="none", color="#999999", ms=7,
                    ls="none", zorder=2, label="corrected entry" if "corr" not in seen else None)
            seen.add("corr")
    for e in history.effective:
        if e.neutral_temperature_C is None and e.date is not None:
            c = _EVENT_COLOUR.get(e.kind, "#7f8c8d")
            ax.axvline(e.date, color=c, lw=1.2, ls="--", zorder=2, label=e.kind if e.kind not in seen else None)
            seen.add(e.kind)
            ax.annotate(f"{e.kind} #{e.id}", (e.date, 1.0), xycoords=("data", "axes fraction"), rotation=90,
                        va="top", ha="right", fontsize=7, color=c, xytext=(-2, -4), textcoords="offset points")
    if undated and not neutrals:
        e = undated[-1]
        ax.axhline(T(e.neutral_temperature_C), color="#34495e", lw=1.8, label=f"neutral (undated entry #{e.id})")
    ax.set_ylabel(f"neutral temperature [{units.label(conv)}]")
    ax.set_title(f"Neutral temperature register: section {history.section_id}")
    ax.xaxis.set_major_formatter(mdates.ConciseDateFormatter(mdates.AutoDateLocator()))
    ax.grid(alpha=0.3)
    ax.legend(fontsize=8, loc="best", ncols=2)
    import textwrap

    fig.text(0.01, 0.005, "Caution: " + textwrap.fill(CAUTION, 150), fontsize=6.5, color="#555555", va="bottom")
    fig.tight_layout(rect=(0, 0.06, 1, 1))
    return fig


def csv_text(columns: list[str], rows: list[tuple]) -> str:
    """A table as CSV text (header row, then the rows as stored; text cells that a spreadsheet
    would run as a formula get a leading apostrophe, :func:`trackplan.reports.neutralise_cell`)."""
    from trackplan.reports import neutralise_cell

    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow([neutralise_cell(c) for c in columns])
    w.writerows(["" if v is None else neutralise_cell(v) for v in r] for r in rows)
    return buf.getvalue()
