"""Files of ``target --out``: a CSV row per section and a one-page HTML summary.

They read the assessments (:class:`trackplan.assess.SectionAssessment`); they
compute nothing.
"""

from __future__ import annotations

import html

from trackplan import CAUTION, units
from trackplan.reports import PRINT_CSS, SCREEN_CSS, warnings_html


def target_rows(assessments) -> list[dict]:
    """One flat row per section: the target JSON flattened (:func:`trackplan.assessment_tables.target_rows`)."""
    from trackplan.assessment_tables import target_rows as rows

    return rows(assessments)


def target_html(assessments, system: str = "si", network: str | None = None, settings: str = "",
                generated: str = "") -> str:
    """The HTML summary: a row per section, the reasoning, what would open an empty window."""
    e = html.escape
    T = lambda v: units.number(v, "temperature", system)
    tu = e(units.label(units.display_unit("temperature", system)))
    du = e(units.label(units.display_unit("temperature_difference", system)))
    rows = []
    for a in assessments:
        t = a.target
        win = f"{T(t.heat_floor_C)} to {T(t.cold_ceiling_C)}" if t.feasible else (
            f"<b style='color:#c0392b'>empty</b> ({e(units.fmt(t.shortfall_K, 'temperature_difference', system))} short)")
        rng = f"{T(t.laying_range_C[0])} to {T(t.laying_range_C[1])}" if t.laying_range_C else "–"
        why = "<br>".join(e(x.text(system)) for x in t.explanation)
        if t.openers:
            why += "<br><b>Would open the window:</b> " + "; ".join(e(x.text(system)) for x in t.openers)
        rows.append(f"<tr><td><b>{e(a.section.id)}</b><br><small>{e(a.section.name)}</small></td>"
                    f"<td class='num'>{T(a.climate.design_max_C)}</td><td class='num'>{T(a.climate.design_min_C)}</td>"
                    f"<td class='num'>{units.number(a.allowable_rise_K, 'temperature_difference', system)}</td>"
                    f"<td class='num'>{win}</td><td class='num'><b>{T(t.target_neutral_temperature_C)}</b></td>"
                    f"<td class='num'>{rng}</td><td>{e(t.governing_cold)}</td><td><small>{why}</small></td></tr>")
    heading = "Recommended neutral temperature" + (f": {e(network)}" if network else "")
    table = "<p><b>No section could be assessed.</b></p>" if not assessments else f"""<table><thead><tr>
<th>section</th><th>design max ({tu})</th><th>design min ({tu})</th><th>allowable rise ({du})</th>
<th>feasible window ({tu})</th><th>target ({tu})</th><th>laying range ({tu})</th><th>cold limit</th>
<th>reasoning</th></tr></thead><tbody>{''.join(rows)}</tbody></table>"""
    warn = warnings_html(((a.climate.station, a.section.id, w) for a in assessments for w in a.climate.warnings),
                         system)
    return f"""<!DOCTYPE html>
<html lang="en"><head><meta charset="utf-8"><title>{heading}</title>
<style>{SCREEN_CSS}{PRINT_CSS}</style></head><body>
<h1>{heading}</h1>
<p class="settings">{e(generated)} {e(settings)}</p>
<div class="caution"><b>Caution.</b> {e(CAUTION)}</div>
{table}
{warn}
<div class="caution"><b>Caution.</b> {e(CAUTION)}</div>
</body></html>
"""
