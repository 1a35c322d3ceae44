"""Rendering of the buckling probability: JSON, CSV rows and the network plot (reads RiskResult)."""

from __future__ import annotations

from trackplan import notices, risk, risk_network
from trackplan.notices import Notice


#: What the probability covers and leaves out (terminal, JSON and docs/methods/risk.md say the same).
COVERAGE = (
    "The probability is that of at least one buckle in a season at one misalignment of the section, from "
    "quasi-static loads: the standing train's vertical load on the lateral resistance, the thermal rise above an "
    "uncertain, drifting neutral temperature, and the scatter of resistances, misalignment and rail temperature. "
    "It leaves out dynamic wheel forces and vehicle hunting, asymmetric buckle shapes, several misalignments along "
    "a long section, the reduced resistance after tamping or ballast work, and the error of the stability model "
    "itself; read it as a ranking aid, not as a frequency to plan on alone."
)


def _estimate_json(e: risk.Estimate) -> dict:
    return {"value": e.probability, "standard_error": e.standard_error, "upper_95": e.upper_95}


def section_json(s) -> dict:
    """One section of the ``risk`` JSON (SI, units in the keys)."""
    action, gain = s.first_action
    u = s.uncertainty
    return {
        "id": s.id,
        "name": s.name,
        "probability_per_season": _estimate_json(s.estimate),
        "expected_buckles_per_year": s.probability,
        "drivers": {k: {"probability_drop": v} for k, v in s.drivers.items()},
        "measure_first_gain": s.measure_gain,
        "consolidate_gain": s.consolidate_gain if s.consolidated is not None else None,
        "first_action": action,
        "first_action_gain": gain,
        "what_if": {
            "neutral_measured": _estimate_json(s.measured),
            "consolidated": None if s.consolidated is None else _estimate_json(s.consolidated),
        },
        "season_probabilities": [{"season": y, "probability": float(p)}
                                 for y, p in zip(s.seasons, s.estimate.season_probability)],
        "months": None if s.months is None else list(s.months),
        "station": s.station,
        "buckling_rise_at_median_K": s.buckling_rise_K,
        "inputs": {
            "neutral_temperature": {"distribution": "normal", "recorded_C": s.neutral_temperature_C,
                                    "standard_deviation_K": u.neutral_sd_K},
            "drift": {"distribution": "normal, per year times years", "per_year_K": u.drift_per_year_K,
                      "per_year_standard_deviation_K": u.drift_per_year_sd_K, "years": u.years_since_neutral},
            "peak_lateral_resistance": {"distribution": "lognormal, median the section's",
                                        "coefficient_of_variation": u.peak_resistance_cov},
            "longitudinal_resistance": {"distribution": "lognormal, median the section's",
                                        "coefficient_of_variation": u.longitudinal_resistance_cov},
            "misalignment": {"distribution": "lognormal", "median_mm": s.misalignment_m * 1e3,
                             "log_standard_deviation": u.misalignment_spread},
            "rail_temperature": {"distribution": "normal error on the record's daily maxima",
                                 "season_standard_deviation_K": u.rail_temperature_bias_sd_K,
                                 "daily_standard_deviation_K": u.rail_temperature_daily_sd_K},
        },
        "notes": s.notes,
    }


def result_json(result, problems_where=None) -> dict:
    from trackplan import CAUTION

    o = result.options
    return {
        "sections": [section_json(s) for s in result.sections],
        "network_expected_buckles_per_year": result.network_expected_buckles_per_year,
        "network_expected_buckles_standard_error": result.network_standard_error,
        "samples": o.samples,
        "seed": o.seed,
        "season": o.season,
        "surrogate_max_error_pct": result.surrogate_max_error_pct,
        "surrogate_max_overstatement_pct": result.surrogate_max_overstatement_pct,
        "surrogate_test_points_per_family": risk_network.BUILD_TEST_POINTS,
        "surrogate_families": result.surrogate_families,
        "measure_first": [{"id": s.id, "action": s.first_action[0], "probability_drop": s.first_action[1]}
                          for s in ranked_actions(result)],
        "coverage": COVERAGE,
        "warnings": notices.to_json(Notice(getattr(p, "bare_message", str(p)), "bad_section", getattr(p, "where", None))
                                    for p in result.problems),
        "caution": CAUTION,
    }


def ranked_actions(result) -> list:
    """Sections by the drop in probability of their better what-if, largest first."""
    return sorted(result.sections, key=lambda s: (-s.first_action[1], s.id))


#: How ``risk_sections.csv`` names what a section's JSON nests (see :mod:`trackplan.tables`).
CSV_NAMES = {"drivers": "drop_{}", "what_if": "probability_{}", "inputs": "{}"}

#: An earlier name of a column, kept beside the JSON's name for scripts that read it.
CSV_ALIASES = {"expected_buckles_each_year": "expected_buckles_per_year"}


def rows(result) -> list[dict]:
    """``risk_sections.csv``: one row per section, its JSON flattened (inputs included; the probability of
    each season is in the JSON only)."""
    from trackplan import tables

    out = []
    for s in result.sections:
        row = tables.flat_row(section_json(s), CSV_NAMES, leave_out=("season_probabilities",))
        out.append({**row, **{old: row[new] for old, new in CSV_ALIASES.items()}})
    return out


def figure(result, max_sections: int = 30):
    """Probability by section with two-standard-error bars, and the measure-first ranking."""
    import matplotlib.pyplot as plt
    import numpy as np

    secs = result.sections[:max_sections]
    acts = ranked_actions(result)[:max_sections]
    h = max(3.5, 0.28 * max(len(secs), len(acts)) + 1.6)
    fig, (a1, a2) = plt.subplots(1, 2, figsize=(12, h))
    y = np.arange(len(secs))
    p = np.array([s.probability for s in secs])
    se = np.array([s.estimate.standard_error for s in secs])
    up = np.array([s.estimate.upper_95 for s in secs])
    floor = 0.3 / result.options.samples  # log axis: the left edge, below the smallest estimable value
    a1.barh(y, np.where(p > 0, p - floor, 0.0), left=floor, color="#c0392b", alpha=0.8,
            label="probability per season")
    lo_err = np.minimum(2 * se, p - floor)
    a1.errorbar(np.where(p > 0, p, np.nan), y, xerr=[np.maximum(lo_err, 0), 2 * se], fmt="none", ecolor="k",
                capsize=3, lw=1, label="± 2 standard errors")
    a1.set_xscale("log")
    a1.set_xlim(floor, 1.0)
    from matplotlib.ticker import FuncFormatter, NullFormatter

    a1.xaxis.set_major_formatter(FuncFormatter(lambda v, _: f"{v:g}"))  # plain text (no math text)
    a1.xaxis.set_minor_formatter(NullFormatter())
    none = p == 0
    if none.any():
        a1.plot(up[none], y[none], "<", color="0.4", label="none in the samples: 95 % bound 3/n")
    a1.set_yticks(y, [s.id for s in secs], fontsize=8)
    a1.invert_yaxis()
    a1.set_xlabel("probability of at least one buckle per season [-] (log scale)")
    a1.set_title(f"Buckling probability ({result.options.samples:,} samples, season {result.options.season})",
                 fontsize=10)
    a1.grid(axis="x", alpha=0.3)
    a1.legend(fontsize=7, loc="lower right")
    y2 = np.arange(len(acts))
    gm = np.array([s.measure_gain for s in acts])
    gc = np.array([s.consolidate_gain for s in acts])
    a2.barh(y2 - 0.2, gm, height=0.4, color="#2e86c1", label="measure the neutral temperature")
    a2.barh(y2 + 0.2, gc, height=0.4, color="#27ae60", label="consolidate the ballast")
    a2.set_yticks(y2, [s.id for s in acts], fontsize=8)
    a2.invert_yaxis()
    a2.axvline(0, color="k", lw=0.5)
    a2.set_xlabel("drop in probability per season [-]")
    a2.set_title("What to do first (largest drop at the top)", fontsize=10)
    a2.grid(axis="x", alpha=0.3)
    a2.legend(fontsize=7, loc="lower right")
    fig.suptitle(f"Network: {result.network_expected_buckles_per_year:.3g} expected buckles per year "
                 f"(± {result.network_standard_error:.2g}); planning aid only", fontsize=10)
    fig.tight_layout()
    return fig
