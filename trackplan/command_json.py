"""The JSON of the commands about one rail, one track, one record or one register: ``force``,
``profiles``, ``railtemp``, ``stability``, ``destress`` and ``register``.

Rendering only: each builder reads the command's result objects and computes
nothing new; key names are those of docs/glossary.md (SI, the unit in the key),
warnings go through :func:`trackplan.notices.to_json`, and a CSV of a command is
its JSON flattened (:mod:`trackplan.tables`). The command line adds the files it
wrote and prints the object (``trackplan.cli.common.emit_json``).
"""

from __future__ import annotations

from trackplan import CAUTION, notices


def force_row(f) -> dict:
    """One result of ``force`` (a :class:`trackplan.thermal.RestrainedRail`) in the JSON's units."""
    row = {
        "rail_temperature_C": f.rail_temperature_C,
        "rise_K": f.rise_K,
        "stress_MPa": f.stress_Pa / 1e6,
        "force_per_rail_kN": f.force_per_rail_N / 1e3,
        "force_per_track_kN": 2 * f.force_per_rail_N / 1e3,
        "state": f.state,
    }
    if f.breathing_length_m is not None:
        row["breathing_length_m"] = f.breathing_length_m
        row["end_movement_mm"] = f.end_movement_m * 1e3
    if f.pull_apart_gap_m is not None:
        row["pull_apart_gap_mm"] = f.pull_apart_gap_m * 1e3
    return row


def force_json(profile, steel, neutral_C: float, results, resistance_N_per_m: float | None) -> dict:
    """``force --json``: the rail, its steel, the neutral and one result per rail temperature
    (``results``: :class:`trackplan.thermal.RestrainedRail`)."""
    out = {
        "rail": profile.name,
        "E_GPa": steel.E_Pa / 1e9,
        "alpha_per_K": steel.alpha_per_K,
        "area_cm2": profile.area_m2 * 1e4,
        "neutral_temperature_C": neutral_C,
        "results": [force_row(f) for f in results],
        "caution": CAUTION,
    }
    if resistance_N_per_m is not None:
        out["longitudinal_resistance_kN_per_m"] = resistance_N_per_m / 1e3
    return out


def profiles_json(profiles) -> dict:
    """``profiles --json``: the catalogue, one object per profile."""
    return {"profiles": [p.as_json() for p in profiles]}


def railtemp_json(design, station, *, profile, method: str, site, distribution: str, meta: dict,
                  allow_short: bool, warnings) -> dict:
    """``railtemp --json``: the design values with their intervals, the annual extremes, the inputs."""
    obj = design.as_json(station)
    obj["design_max_rail_temperature_ci_C"] = list(design.max_ci_C) if design.max_ci_C else None
    obj["design_min_rail_temperature_ci_C"] = list(design.min_ci_C) if design.min_ci_C else None
    obj["ci_level"] = design.ci_level
    obj["inputs"] = {"rail": profile.name, "method": method, "latitude_deg": site.latitude_deg,
                     "longitude_deg": site.longitude_deg, "track_azimuth_deg": site.track_azimuth_deg,
                     "shade_factor": site.shade_factor, "distribution": distribution,
                     "tz": meta.get("tz"), "time_step": meta.get("time_step"),
                     "time_step_s": meta.get("time_step_s"), "allow_short": allow_short}
    obj["warnings"] = notices.to_json(warnings)
    obj["caution"] = CAUTION
    return obj


def stability_json(result, *, rail: str, sleeper: str, ballast: str, shoulder: str) -> dict:
    """``stability --json``: the track, then the result (:meth:`trackplan.stability.StabilityResult.as_json`)."""
    return {"rail": rail, "sleeper": sleeper, "ballast": ballast, "shoulder": shoulder, **result.as_json(),
            "caution": CAUTION}


def destress_json(plan, *, rail: str, steel: str, site) -> dict:
    """``destress --json``: the rail, then the crew's plan (:meth:`trackplan.destressing.DestressPlan.as_json`)."""
    return {"rail": rail, "steel": steel, "site": site, **plan.as_json(), "caution": CAUTION}


# --------------------------------------------------------------------------
# register
# --------------------------------------------------------------------------


def register_import_json(path, counts: dict) -> dict:
    return {"db": str(path), **counts}


def register_log_json(new_id: int, entry, written, achieved=None, plan=None) -> dict:
    """``register log --json``: the entry as stored and, from a job, the neutral achieved."""
    out = {"id": new_id, "section": entry.section_id, "entry": written.as_json()}
    if achieved is not None:
        out["achieved"] = {
            "neutral_temperature_C": achieved.neutral_temperature_C, "uncertainty_K": achieved.uncertainty_K,
            "base_temperature_C": achieved.base_temperature_C, "target_neutral_temperature_C": plan.target_neutral_C,
            "lowest_segment_neutral_temperature_C": achieved.lowest_segment_C,
            "per_mark_neutral_temperature_C": achieved.per_mark_C,
            "uncertainty_components_K": achieved.components_K,
        }
    out["caution"] = CAUTION
    return out


def register_history_json(section: str, history) -> dict:
    """``register history --json``: every entry and the latest neutral; ``history_<id>.csv`` is its entries."""
    latest = history.latest_neutral
    return {"section": section, "entries": [e.as_json() for e in history.entries],
            "latest_neutral_entry_id": latest.id if latest else None,
            "latest_neutral_temperature_C": latest.neutral_temperature_C if latest else None,
            "last_verified": history.last_verified, "caution": CAUTION}


def register_due_json(rows: list[dict], days: float) -> dict:
    return {"sections": rows, "older_than_days": days, "caution": CAUTION}


def register_verify_json(path, problems: list, entries: int, sections: int) -> dict:
    return {"db": str(path), "ok": not problems, "entries": entries, "sections": sections, "problems": problems}
