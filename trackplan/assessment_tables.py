"""A network assessment's results as JSON and CSV rows: one builder of each figure's key and value.

Rendering only: these read the result objects of :mod:`trackplan.assess` (a
``SectionAssessment``: the section, its climate, stability, target and check)
and compute nothing new. Every figure is built once, by :func:`check_figures`
and the JSON builders, with the names of docs/glossary.md (SI, the unit in the
key); the CSV rows are the JSON flattened (:mod:`trackplan.tables`).
"""

from __future__ import annotations

from trackplan import notices


def check_figures(a) -> dict:
    """The figures of one section's check, by glossary name (SI, unit in the key)."""
    c = a.check
    return {
        "design_max_rail_temperature_C": c.design_max_rail_temperature_C,
        "design_min_rail_temperature_C": c.design_min_rail_temperature_C,
        "recorded_neutral_temperature_C": c.cold_neutral_temperature_C,
        "current_neutral_temperature_C": c.current_neutral_temperature_C,
        "heat_rise_K": c.heat_rise_K,
        "allowable_rise_K": c.allowable_rise_K,
        "heat_margin_K": c.heat_margin_K,
        "max_compression_force_per_rail_kN": c.max_compression_force_per_rail_N / 1e3,
        "max_tension_force_per_rail_kN": c.max_tension_force_per_rail_N / 1e3,
        "max_tension_stress_MPa": c.max_tension_stress_Pa / 1e6,
        "pull_apart_gap_mm": c.pull_apart_gap_m * 1e3,
        "gap_limit_mm": c.gap_limit_m * 1e3,
        "target_neutral_temperature_C": a.target.target_neutral_temperature_C,
    }


def check_json(a) -> dict:
    """JSON object of one section's check (``trackplan check --json``); ``check.csv`` is its rows."""
    from trackplan.actions import section_action

    s, c, t, f = a.section, a.check, a.target, check_figures(a)
    action = section_action(a)
    return {
        "id": s.id,
        "name": s.name,
        "location": s.location,
        "verdict": c.verdict,
        "reasons": c.reasons,
        "action": None if action is None else str(action),
        "rail": s.profile.name,
        "sleeper": s.sleeper,
        "ballast": s.ballast,
        "curve": s.curve_label,
        "station": a.climate.station,
        "rail_temperature_method": a.climate.method,
        "design_basis": a.climate.design.design_basis,
        "return_period_years": a.climate.design.return_period_years,
        **{k: f[k] for k in ("design_max_rail_temperature_C", "design_min_rail_temperature_C",
                             "recorded_neutral_temperature_C")},
        "neutral_entry_id": s.neutral_entry_id,
        "drift_allowance_K": s.drift_allowance_K,
        **{k: f[k] for k in ("current_neutral_temperature_C", "heat_rise_K")},
        "upper_critical_rise_K": a.stability.upper_critical_rise_K,
        "lower_critical_rise_K": a.stability.lower_critical_rise_K,
        "response": a.stability.response,
        **{k: f[k] for k in ("allowable_rise_K", "heat_margin_K", "max_compression_force_per_rail_kN",
                             "max_tension_force_per_rail_kN", "max_tension_stress_MPa", "pull_apart_gap_mm",
                             "gap_limit_mm")},
        "longitudinal_resistance_kN_per_m": a.longitudinal_resistance_N_per_m / 1e3,
        "target_neutral_temperature_C": f["target_neutral_temperature_C"],
        "laying_range_C": list(t.laying_range_C) if t.laying_range_C else None,
        "feasible": t.feasible,
        "inputs": {"tz": a.climate.tz, "time_step": a.climate.time_step},
        "warnings": notices.to_json(a.climate.warnings),
    }


def target_json(a) -> dict:
    """JSON object of one section's target (``trackplan target --json``; SI, units in keys);
    ``target.csv`` is its rows."""
    t = a.target
    return {
        "id": a.section.id,
        "name": a.section.name,
        "station": a.climate.station,
        "target_neutral_temperature_C": t.target_neutral_temperature_C,
        "laying_range_C": list(t.laying_range_C) if t.laying_range_C else None,
        "feasible_window_C": list(t.feasible_window_C) if t.feasible_window_C else None,
        "feasible": t.feasible,
        "narrow_window": t.narrow,
        "heat_floor_C": t.heat_floor_C,
        "cold_ceiling_C": t.cold_ceiling_C,
        "governing_cold_limit": t.governing_cold,
        "shortfall_K": t.shortfall_K,
        "priority": t.priority,
        "accepted_risk": None if t.risk is None else str(t.risk),
        "design_max_rail_temperature_C": a.climate.design_max_C,
        "design_min_rail_temperature_C": a.climate.design_min_C,
        "design_basis": a.climate.design.design_basis,
        "return_period_years": a.climate.design.return_period_years,
        "allowable_rise_K": a.allowable_rise_K,
        "drift_allowance_K": a.section.drift_allowance_K,
        "recorded_neutral_temperature_C": a.section.latest_neutral_temperature_C,
        "neutral_entry_id": a.section.neutral_entry_id,
        "explanation": [str(x) for x in t.explanation],
        "would_open_window": [str(x) for x in t.openers],
        "regional_practice": [
            {"name": r.name, "neutral_C": list(r.neutral_C) if r.neutral_C else None, "note": r.note, "source": r.source}
            for r in a.practice
        ],
        "inputs": {"tz": a.climate.tz, "time_step": a.climate.time_step},
        "warnings": notices.to_json(a.climate.warnings),
    }


def network_json(kind: str, assessments, problems, files=()) -> dict:
    """JSON of ``check`` (``kind="check"``) or ``target`` over a section file: the sections, the
    problems, the files written and the caution."""
    from trackplan import CAUTION

    one = check_json if kind == "check" else target_json
    return {"sections": [one(a) for a in assessments], "problems": [str(p) for p in problems],
            "files": [str(p) for p in files], "caution": CAUTION}


def check_rows(assessments) -> list[dict]:
    """``check.csv``: one row per assessed section, its check JSON flattened (:mod:`trackplan.tables`)."""
    from trackplan import tables

    return tables.csv_rows(check_json(a) for a in assessments)


def target_rows(assessments) -> list[dict]:
    """``target.csv``: one row per section, its target JSON flattened (:mod:`trackplan.tables`)."""
    from trackplan import tables

    return tables.csv_rows(target_json(a) for a in assessments)  # regional practice: a list, JSON and HTML only
