"""Rendering of ``trackplan outlook`` results: JSON, CSV rows, fan charts, HTML summary.

Reads :class:`trackplan.outlook_run.OutlookResult`; computes nothing new.
"""

from __future__ import annotations

from trackplan import notices
from trackplan import outlook as core

SCENARIO_COLOURS = ["#2e86c1", "#c0392b", "#8e44ad", "#d68910", "#16a085", "#7f8c8d"]
STAT_LABELS = {
    "restrict_days_per_year": "restrict days / year",
    "critical_days_per_year": "critical days / year",
    "cold_days_per_year": "cold days / year",
    "design_max_rail_temperature_C": "design max rail temperature",
}


def _row_json(r: dict) -> dict:
    out = {"period": r["period"], "scenario": r["scenario"], "baseline": r["baseline"], "models": r["models"],
           "model_names": r["model_names"]}
    for s in core.STATS:
        out[s] = r[s]
    out["change_from_baseline"] = r["change_from_baseline"]
    return out


def result_json(res, caution: str, files=()) -> dict:
    """The JSON object of the issue's interface (SI, units in keys)."""
    o = res.options
    return {
        "engine": res.engine,
        "settings": {"baseline": o.baseline.label, "periods": [w.label for w in o.periods],
                     "scenarios": list(o.scenarios) or None, "neutral_override_C": o.neutral_override_C,
                     "watch_fraction": o.watch_fraction,
                     "bias_adjustment": {"method": "quantile delta mapping (Cannon et al. 2015)",
                                         "implementation": "xsdba.QuantileDeltaMapping", "kind": "additive",
                                         "group": "calendar month", "quantiles": core.QDM_QUANTILES},
                     "ensemble_statistics": "median and 10th/90th percentiles over the models (linear)"},
        "runs": res.runs,
        "sections": [{
            "id": s.id, "name": s.name, "station": s.station, "neutral_temperature_C": s.neutral_C,
            "heat_neutral_temperature_C": s.heat_neutral_C, "allowable_rise_K": s.allowable_rise_K,
            "critical_rise_K": s.critical_rise_K, "cells": s.cells,
            "periods": [_row_json(r) for r in s.periods],
            "chart": {scen: [{"period": r["period"], "models": r["models"],
                              **{k: r[k] for k in core.STATS}} for r in rows] for scen, rows in s.chart.items()},
            "notes": s.notes,
        } for s in res.sections],
        "warnings": notices.to_json(res.warnings),
        "problems": [str(p) for p in res.problems],
        "bias_adjustment_note": core.BIAS_ADJUSTMENT_NOTE,
        "files": [str(f) for f in files],
        "caution": caution,
    }


#: How ``outlook.csv`` names what a period's JSON nests (see :mod:`trackplan.tables`): each statistic's
#: median, p10 and p90 as ``<statistic>_<quantile>``, its change as ``change_<statistic>_<quantile>``.
CSV_NAMES = {**{st: st + "_{}" for st in core.STATS}, "change_from_baseline": "change_{}"}


def csv_frame(res):
    """``outlook.csv``: one row per section, scenario and period, the ``periods`` of the JSON flattened."""
    from trackplan import tables

    data = result_json(res, "")
    return tables.frame(tables.table_rows(data["sections"], "periods", CSV_NAMES, carry=("name", "station")))


def fan_figure(section, system: str = "si"):
    """Risk days per year over time (30-year windows), one band (p10-p90) and median line per scenario;
    and the design maximum rail temperature below."""
    import matplotlib.pyplot as plt

    from trackplan import units

    fig, axes = plt.subplots(2, 1, figsize=(8, 6.4), sharex=True, gridspec_kw={"height_ratios": [3, 2]})
    ax, ax2 = axes
    for k, (scen, rows) in enumerate(sorted(section.chart.items())):
        c = SCENARIO_COLOURS[k % len(SCENARIO_COLOURS)]
        rows = [r for r in rows if r["restrict_days_per_year"]]
        if not rows:
            continue
        x = [(r["first_year"] + r["last_year"]) / 2 for r in rows]
        for st, ls, lab in (("restrict_days_per_year", "-", "restrict + critical"),):
            med = [r["restrict_days_per_year"]["median"] + r["critical_days_per_year"]["median"] for r in rows]
            lo = [r["restrict_days_per_year"]["p10"] + r["critical_days_per_year"]["p10"] for r in rows]
            hi = [r["restrict_days_per_year"]["p90"] + r["critical_days_per_year"]["p90"] for r in rows]
            ax.fill_between(x, lo, hi, color=c, alpha=0.2, lw=0)
            ax.plot(x, med, ls, color=c, lw=2, label=f"{scen}: {lab} (median, band p10-p90)")
        cold = [r["cold_days_per_year"]["median"] for r in rows]
        if any(v > 0 for v in cold):
            ax.plot(x, cold, ":", color=c, lw=1.5, label=f"{scen}: cold days (median)")
        dm = [units.convert_for_display(r["design_max_rail_temperature_C"]["median"], "temperature", system)[0]
              for r in rows]
        dlo = [units.convert_for_display(r["design_max_rail_temperature_C"]["p10"], "temperature", system)[0]
               for r in rows]
        dhi = [units.convert_for_display(r["design_max_rail_temperature_C"]["p90"], "temperature", system)[0]
               for r in rows]
        ax2.fill_between(x, dlo, dhi, color=c, alpha=0.2, lw=0)
        ax2.plot(x, dm, "-", color=c, lw=2, label=scen)
    ax.set_ylabel("days per year")
    ax.set_ylim(bottom=0)
    ax.grid(alpha=0.3)
    ax.legend(fontsize=8, loc="upper left")
    ax.set_title(f"{section.id} {section.name}: risk days per year, 30-year windows (centre year)", fontsize=10)
    unit = units.label(units.display_unit("temperature", system))
    ax2.set_ylabel(f"design max rail [{unit}]")
    ax2.set_xlabel("centre year of the 30-year window")
    ax2.grid(alpha=0.3)
    ax2.legend(fontsize=8, loc="upper left")
    fig.text(0.01, 0.005, "Bias-adjusted climate-model ensemble; spread between models shown as the band. "
             "Planning aid only.", fontsize=7, color="#555")
    fig.tight_layout(rect=(0, 0.02, 1, 1))
    return fig


def _stat_text(d, kind: str | None, system: str, digits: int = 1) -> str:
    from trackplan import units

    if not d:
        return "–"
    if kind is None:
        return f"{d['median']:.{digits}f} ({d['p10']:.{digits}f}–{d['p90']:.{digits}f})"
    if kind == "temperature_difference":
        f = lambda v: "{:+.1f}".format(units.convert_for_display(v, kind, system)[0])
    else:
        f = lambda v: units.number(v, kind, system, 0)
    return f"{f(d['median'])} ({f(d['p10'])} to {f(d['p90'])})"


def html_summary(res, pngs: dict, caution: str, system: str = "si", generated: str = "") -> str:
    """One self-contained HTML page: settings, the table per section, fan charts, notes, cautions."""
    import base64
    import html

    from trackplan import units

    e = html.escape
    tu = units.label(units.display_unit("temperature", system))
    du = units.label(units.display_unit("temperature_difference", system))
    rows = []
    for s in res.sections:
        for r in s.periods:
            ch = r["change_from_baseline"]
            dchange = ch.get("design_max_rail_temperature_K")
            rows.append(
                f"<tr><td><b>{e(s.id)}</b></td><td>{e(r['scenario'])}</td>"
                f"<td>{e(r['period'])}{' (baseline)' if r['baseline'] else ''}</td><td>{r['models']}</td>"
                f"<td>{_stat_text(r['restrict_days_per_year'], None, system)}</td>"
                f"<td>{_stat_text(r['critical_days_per_year'], None, system)}</td>"
                f"<td>{_stat_text(r['cold_days_per_year'], None, system)}</td>"
                f"<td>{_stat_text(r['design_max_rail_temperature_C'], 'temperature', system)}</td>"
                f"<td>{'' if r['baseline'] or not dchange else _stat_text(dchange, 'temperature_difference', system)}</td>"
                "</tr>")
    figs = "".join(
        f"<figure><img alt='fan chart {e(sid)}' src='data:image/png;base64,{base64.b64encode(b).decode()}'></figure>"
        for sid, b in pngs.items())
    runs = "".join(f"<li>{e(r['model'])} {e(r['scenario'])} ({e(r['calendar'])}, {r['first_year']}-{r['last_year']})"
                   "</li>" for r in res.runs)
    warn = "".join(f"<li><code>{e(w['code'])}</code> {e(w['message'])}</li>" for w in res.warnings)
    probs = "".join(f"<li>{e(str(p))}</li>" for p in res.problems)
    notes = "".join(f"<li><b>{e(s.id)}</b>: {e(n)}</li>" for s in res.sections for n in s.notes)
    o = res.options
    return f"""<!DOCTYPE html>
<html lang="en"><head><meta charset="utf-8"><title>Climate outlook of CWR risk days</title>
<style>
body{{font-family:system-ui,Arial,sans-serif;margin:2em;color:#222;max-width:1150px}}
table{{border-collapse:collapse;font-size:13px}} td,th{{border:1px solid #ccc;padding:3px 6px}}
th{{background:#f2f2f2}} .caution{{border:2px solid #d68910;background:#fef5e7;padding:0.6em 1em;margin:1em 0}}
.note{{border-left:4px solid #2e86c1;background:#eef6fb;padding:0.5em 1em}} figure{{display:inline-block;margin:0.4em}}
img{{max-width:540px}}
</style></head><body>
<h1>Climate outlook: risk days of welded track in future climates</h1>
<p>{e(generated)}</p>
<div class="caution"><b>Caution.</b> {e(caution)}</div>
<p>Baseline {e(o.baseline.label)}; periods {e(', '.join(w.label for w in o.periods))}. Each figure is the ensemble
<b>median (10th–90th percentile)</b> over the models of a scenario; change from each model's own baseline.
Restrict days count days at restrict but below critical, as in <code>trackplan screen</code>; days per year are
scaled to a 365.25-day year. Temperatures in {e(tu)}, changes in {e(du)}. Engine: Dask,
scheduler {e(str(res.engine['scheduler']))}, {res.engine['workers']} worker(s).</p>
<div class="note"><b>What bias adjustment can and cannot do.</b> {e(core.BIAS_ADJUSTMENT_NOTE)}</div>
<h2>Sections</h2>
<table><tr><th>section</th><th>scenario</th><th>period</th><th>models</th><th>restrict d/yr</th>
<th>critical d/yr</th><th>cold d/yr</th><th>design max rail</th><th>change of design max</th></tr>
{''.join(rows)}</table>
<h2>Fan charts</h2>{figs}
<h2>Ensemble</h2><ul>{runs}</ul>
{('<h2>Warnings</h2><ul>' + warn + '</ul>') if warn else ''}
{('<h2>Problems (not computed)</h2><ul>' + probs + '</ul>') if probs else ''}
{('<h2>Notes</h2><ul>' + notes + '</ul>') if notes else ''}
<div class="caution"><b>Caution.</b> {e(caution)}</div>
</body></html>
"""
