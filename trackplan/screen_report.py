"""The HTML summary of a screening (``screen --out``): one self-contained page.

It reads the :class:`trackplan.screening.ScreenResult` and the plots already
rendered; it computes nothing. Print styles are those of the check report
(:data:`trackplan.reports.PRINT_CSS`).
"""

from __future__ import annotations

import base64
import html

from trackplan import CAUTION, units
from trackplan.reports import PRINT_CSS, SCREEN_CSS, warnings_html

_LEVELS = ("watch", "restrict", "critical")


#: Fewest heat days over the record for a trend to be given (fewer: "few days").
MIN_TREND_DAYS = 5


def rate_text(v) -> str:
    """Days per year: one decimal, two below 0.1 so that a rare day does not read 0.0."""
    if v is None:
        return "–"
    return f"{v:.1f}" if v == 0 or v >= 0.1 else f"{v:.2f}"


_rate = rate_text


def signed(v: float) -> str:
    """A slope with its sign, one decimal (two below 0.1)."""
    return f"{v:+.1f}" if abs(v) >= 0.1 or v == 0 else f"{v:+.2f}"


def heat_total(r) -> int:
    """Heat days (watch or worse) of a section over the record."""
    return int(sum(r.heat_days_by_level.values()))


def trend_text(r) -> str:
    """The heat-day trend with its standard error, or why there is none."""
    t = r.trend
    if t.heat_days_per_decade is None:
        return "–"
    if heat_total(r) < MIN_TREND_DAYS:
        return "few days"
    se = f" ± {t.heat_days_per_decade_se:.1f}" if t.heat_days_per_decade_se is not None else ""
    return f"{signed(t.heat_days_per_decade)}{se}"


def _months(ms) -> str:
    ms = list(ms)
    if len(ms) == 12:
        return "all"
    return f"{ms[0]}-{ms[-1]}"


def screen_html(result, pngs: dict[str, bytes], settings, system: str = "si", network: str | None = None,
                trend_sentence: str | None = None, generated: str = "") -> str:
    """The page: settings, caution, a row per section (days in the record and per
    complete year, worst day, trend), data warnings by station, the plots."""
    from trackplan.screening import rank_key

    e = html.escape
    dT = lambda v: units.number(v, "temperature_difference", system)
    secs = sorted(result.sections, key=rank_key)
    rows = []
    for r in secs:
        w, t = r.worst_day, r.trend
        cells = "".join(
            f"<td class='num'>{n} ({_rate(r.days_per_year(lev))})</td>"
            for lev, n in [(lev, r.heat_days_by_level[lev]) for lev in _LEVELS] + [("cold", r.cold_days)])
        worst = "–" if w is None else (f"{w.date.isoformat()} {w.level or ''}<br><small>rise {dT(w.rise_K)} / "
                                       f"allowable {dT(w.allowable_rise_K)}</small>")
        trend = trend_text(r)
        rows.append(f"<tr><td><b>{e(r.id)}</b><br><small>{e(r.name)}</small></td><td>{e(r.station)}</td>"
                    f"<td>{_months(r.months)}</td><td class='num'>{r.complete_years}</td>{cells}"
                    f"<td>{worst}</td><td class='num'>{trend}</td></tr>")
    du = e(units.label(units.display_unit("temperature_difference", system)))
    table = "<p><b>No section could be screened.</b></p>" if not secs else f"""<table><thead><tr>
<th>section</th><th>station</th><th>months</th><th>complete years</th><th>watch</th><th>restrict</th>
<th>critical</th><th>cold</th><th>worst heat day ({du})</th><th>heat-day trend (days per decade)</th></tr></thead>
<tbody>{''.join(rows)}</tbody></table>"""
    figs = "".join(f"<figure><img alt='{e(name)}' src='data:image/png;base64,{base64.b64encode(b).decode()}'>"
                   f"</figure>" for name, b in pngs.items())
    heading = "Risk-day screening" + (f": {e(network)}" if network else "")
    settings_html = "; ".join(f"{e(k)}: {e(str(v))}" for k, v in settings if k not in ("command", "section file"))
    warn = warnings_html(((r.station, r.id, w) for r in secs for w in r.warnings), system)
    return f"""<!DOCTYPE html>
<html lang="en"><head><meta charset="utf-8"><title>{heading}</title>
<style>{SCREEN_CSS}{PRINT_CSS} .plots img{{max-width:100%}} @media print{{.plots figure{{width:100%}}}}</style>
</head><body>
<h1>{heading}</h1>
<p class="settings">{e(generated)} Settings: {settings_html}.</p>
<div class="caution"><b>Caution.</b> {e(CAUTION)}</div>
<p>Days in the record at each level (in brackets: days per complete year), worst first. Heat levels: watch from
{result.options.watch_fraction:.0%} of the allowable rise, restrict from the allowable rise, critical from the lower
critical rise; cold: tension or break gap beyond the section's limits. Screening counts the days of the record;
the pre-summer check judges the design (return-level) temperatures.</p>
{table}
<p>{e(trend_sentence or '')}</p>
{warn}
<div class="plots"><h2>Plots</h2>{figs}</div>
<div class="caution"><b>Caution.</b> {e(CAUTION)}</div>
</body></html>
"""
