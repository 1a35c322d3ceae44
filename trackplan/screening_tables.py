"""Screening results as tables and JSON: the flagged days, the annual counts, one section's JSON.

Rendering only: these read the result objects of :mod:`trackplan.screening`
(the same objects the terminal and the HTML read) and compute nothing new.
"""

from __future__ import annotations

import math
from typing import TYPE_CHECKING

import numpy as np

from trackplan import notices
from trackplan.screening_core import COLD_LEVEL, FLAG_NAMES, LEVELS

if TYPE_CHECKING:  # the result objects, for the annotations only
    from trackplan.screening import Day, ScreenOptions, ScreenResult, SectionScreen


# --------------------------------------------------------------------------
# Tables for files and JSON (read the same objects as the terminal)
# --------------------------------------------------------------------------

FLAGGED_COLUMNS = ("section", "date", "level", "rail_temperature_C", "neutral_temperature_C", "rise_K",
                   "allowable_rise_K")


def flagged_frame(result: ScreenResult):
    """Every flagged day of every section (columns :data:`FLAGGED_COLUMNS`)."""
    import pandas as pd

    secs = result.sections
    if not secs:
        return pd.DataFrame(columns=list(FLAGGED_COLUMNS))
    n = [len(s.flagged) for s in secs]
    cat = lambda name: np.concatenate([getattr(s.flagged, name) for s in secs])
    ids = pd.Categorical.from_codes(np.repeat(np.arange(len(secs)), n), [s.id for s in secs])
    return pd.DataFrame({
        "section": ids,
        # datetime64 at midnight: written as YYYY-MM-DD
        "date": cat("date").astype("datetime64[s]"),
        "level": pd.Categorical.from_codes(cat("level_code"), list(FLAG_NAMES)),
        "rail_temperature_C": np.round(cat("rail_temperature_C"), 2),
        "neutral_temperature_C": np.round(cat("neutral_temperature_C"), 2),
        "rise_K": np.round(cat("rise_K"), 2),
        "allowable_rise_K": np.round(cat("allowable_rise_K"), 2),
    })


def annual_frame(result: ScreenResult):
    """Per-section, per-year counts (one row per section and year): the ``annual`` entries of the JSON."""
    from trackplan import tables

    return tables.frame(annual_rows(result_json(result)), ANNUAL_COLUMNS)


def _day_json(d: Day | None) -> dict | None:
    if d is None:
        return None
    # on the cold side the limit is a (negative) rise at which tension or the break gap reaches its limit
    limit_key = "cold_limit_rise_K" if d.side == "cold" else "allowable_rise_K"
    return {"date": d.date.isoformat(), "side": d.side, "level": d.level, "rail_temperature_C": d.rail_temperature_C,
            "neutral_temperature_C": d.neutral_temperature_C, "rise_K": d.rise_K,
            limit_key: d.allowable_rise_K, "margin_K": d.margin_K}


def section_json(s: SectionScreen) -> dict:
    """JSON object of one section (SI, units in key names)."""
    t = s.trend
    return {
        "id": s.id,
        "name": s.name,
        "station": s.station,
        "months": list(s.months),
        "first_date": s.first_date.isoformat(),
        "last_date": s.last_date.isoformat(),
        "screened_days": s.screened_days,
        "missing_days": s.missing_days,
        "complete_years": s.complete_years,
        "heat_days_by_level": dict(s.heat_days_by_level),
        "cold_days": s.cold_days,
        "days_per_year": {lev: s.days_per_year(lev) for lev in LEVELS + (COLD_LEVEL,)},
        "worst_day": _day_json(s.worst_day),
        "worst_cold_day": _day_json(s.worst_cold_day),
        "trend": {
            "heat_days_per_decade": t.heat_days_per_decade,
            "heat_days_per_decade_se": t.heat_days_per_decade_se,
            "restrict_days_per_decade": t.restrict_days_per_decade,
            "cold_days_per_decade": t.cold_days_per_decade,
            "years_used": t.years_used,
            "note": t.note,
        },
        "allowable_rise_K": s.allowable_rise_K,
        "critical_rise_K": s.critical_rise_K if math.isfinite(s.critical_rise_K) else None,
        "critical_basis": s.critical_basis,
        "response": s.response,
        "heat_neutral_temperature_C": s.heat_neutral_temperature_C,
        "cold_neutral_temperature_C": s.cold_neutral_temperature_C,
        "drift_allowance_K": s.drift_allowance_K,
        "cold_limit_rise_K": s.cold_limit_rise_K,
        "disturbed_days": s.disturbed_days,
        "annual": [
            {"year": int(s.annual.year[i]), "season_days": int(s.annual.season_days[i]),
             "screened_days": int(s.annual.screened_days[i]), "missing_days": int(s.annual.missing_days[i]),
             "watch_days": int(s.annual.watch_days[i]), "restrict_days": int(s.annual.restrict_days[i]),
             "critical_days": int(s.annual.critical_days[i]), "cold_days": int(s.annual.cold_days[i]),
             "complete": bool(s.annual.complete[i])}
            for i in range(s.annual.year.size)
        ],
        "notes": list(s.notes),
        "inputs": dict(s.inputs),
        "warnings": notices.to_json(s.warnings),
    }


def options_json(o: ScreenOptions) -> dict:
    return {
        "from_date": o.start.isoformat() if o.start else None,
        "to_date": o.end.isoformat() if o.end else None,
        "months": list(o.months) if o.months else None,
        "season": o.season,
        "warming_K": o.warming_K,
        "neutral_override_C": o.neutral_override_C,
        "watch_fraction": o.watch_fraction,
    }


def result_json(result: ScreenResult) -> dict:
    """JSON of a ``screen`` run (the command adds the files written and the caution)."""
    entries = getattr(result, "neutral_entries", {}) or {}
    return {
        "sections": [{**section_json(r), "neutral_entry_id": entries.get(r.id)} for r in result.sections],
        "settings": options_json(result.options),
        "levels": list(LEVELS) + [COLD_LEVEL],
        "problems": [str(p) for p in result.problems],
    }


#: How the nested objects of a section's JSON are named in ``screen_summary.csv`` (see trackplan.tables).
SUMMARY_NAMES = {"heat_days_by_level": "{}_days", "days_per_year": "{}_days_per_year",
                 "worst_day": "worst_day_{}", "worst_cold_day": "worst_cold_day_{}"}

#: Columns of ``annual_counts.csv`` (the ``annual`` entries of a section's JSON), for an empty file.
ANNUAL_COLUMNS = ("section", "year", "season_days", "screened_days", "missing_days", "watch_days",
                  "restrict_days", "critical_days", "cold_days", "complete")


def summary_rows(data: dict) -> list[dict]:
    """``screen_summary.csv``: one row per section, the section's JSON flattened (:mod:`trackplan.tables`)."""
    from trackplan import tables

    return tables.csv_rows(data["sections"], SUMMARY_NAMES, tables.LEAVE_OUT + ("annual",))


def annual_rows(data: dict) -> list[dict]:
    """``annual_counts.csv``: the ``annual`` entries of every section's JSON, one row per section and year."""
    from trackplan import tables

    return tables.table_rows(data["sections"], "annual")


def rank_key(s: SectionScreen) -> tuple:
    """Worst first: most critical, then restrict, then watch days; then the smallest worst-day margin."""
    h = s.heat_days_by_level
    m = s.worst_day.margin_K if s.worst_day is not None else math.inf
    return (-h["critical"], -h["restrict"], -h["watch"], -s.cold_days, m)
