"""What to do about a section the pre-summer check puts on ``watch`` or ``act``.

The action is worked out from the figures of the check, the target and the
section (never written per section): each limit that is reached or close
gives one step, with the temperatures and figures that step needs.

* heat side over the allowable rise: destress to the recommended neutral
  temperature before the hot season begins; with no feasible target, a
  stronger track or a heat speed restriction under local rules; until then,
  hot-weather patrols from the rail temperature at which the rise reaches the
  allowable rise, ``T = T_N,cur + dT_allow``;
* heat side on watch: hot-weather patrols from ``T_N,cur + f dT_allow``;
* ballast not consolidated or a reduced shoulder: restore and consolidate it;
* cold side (pull-apart gap or tension stress): inspect welds and fastenings
  and patrol for broken rails in cold weather from the rail temperature at
  which the governing limit is reached. The force is linear in the
  temperature, ``P = k (T - T_N)``, so the gap ``P^2 / (E A r)`` reaches its
  limit ``g`` at ``T = T_N + (T_min - T_N) sqrt(g / gap)`` and the stress
  reaches its limit ``s`` at ``T = T_N + (T_min - T_N) s / |sigma|``. A gap
  beyond its limit also names the longitudinal resistance that would hold it,
  ``r_needed = r gap / g``;
* a neutral temperature that is unknown or estimated: measure it.

References
----------
Kerr, A. D. (2003). *Fundamentals of Railway Track Engineering*,
Simmons-Boardman, chapter on thermal stresses in CWR (pull-apart gap
``P^2 / (E A r)``; hot- and cold-weather inspection of CWR).
"""

from __future__ import annotations

import math

from trackplan.check import DEFAULT_WATCH_FRACTION
from trackplan.units import Phrase

_NOT_CONSOLIDATED = ("disturbed", "partial")


def section_action(a, watch_fraction: float = DEFAULT_WATCH_FRACTION) -> Phrase | None:
    """The action for one assessed section in words (None when its verdict is ``ok``).

    Parameters
    ----------
    a : trackplan.assess.SectionAssessment
        The section with its check, target and climate results.
    watch_fraction : float
        Fraction of a limit at which the check puts a section on watch.

    Returns
    -------
    trackplan.units.Phrase or None
        Steps joined by '; ', figures in SI (``.text("us")`` for US units).
    """
    c, sec, tgt = a.check, a.section, a.target
    if c.verdict == "ok":
        return None
    month = getattr(a.climate, "hot_month", None)
    before_hot = f" before {month}" if month else " before the hot season"
    steps: list[str] = []
    vals: list[tuple] = []

    def step(text: str, *values) -> None:
        steps.append(text)
        vals.extend(values)

    target = tgt.target_neutral_temperature_C
    heat_act = c.heat_margin_K < 0
    heat_watch = not heat_act and c.heat_rise_K >= watch_fraction * c.allowable_rise_K
    weak_ballast = sec.ballast in _NOT_CONSOLIDATED or sec.shoulder != "full"
    feasible = getattr(tgt, "feasible", True)
    floor = getattr(tgt, "heat_floor_C", None)
    # a target below the heat floor (an empty window with the cold side first) does not cure the heat side
    heat_target = target is not None and (feasible or floor is None or target >= floor - 1e-9)
    if heat_act:
        if heat_target:
            lo, hi = tgt.laying_range_C or (target, target)
            step("destress to a neutral temperature of {a_t} (laying range {a_lo} to {a_hi})" + before_hot
                 + ("" if feasible else " (the window is empty: this keeps the heat limit, and the cold side is "
                                        "then beyond its limit)"),
                 ("a_t", target, "temperature", 0), ("a_lo", lo, "temperature", 0), ("a_hi", hi, "temperature", 0))
        else:
            step("no neutral temperature meets both the heat and cold limits: strengthen the track "
                 "(consolidated ballast, full shoulders) or plan a heat speed restriction under local rules"
                 + before_hot)
    if weak_ballast and (heat_act or heat_watch):
        what = f"ballast {sec.ballast}" + ("" if sec.shoulder == "full" else f", shoulder {sec.shoulder}")
        step(f"restore and consolidate the ballast and its shoulder ({what}){before_hot}")
    if heat_act or heat_watch:
        f = 1.0 if heat_act else watch_fraction
        step(("until then, " if heat_act else "") + "patrol in hot weather when the rail is above {a_hot}",
             ("a_hot", c.current_neutral_temperature_C + f * c.allowable_rise_K, "temperature", 0))

    tn, tmin = c.cold_neutral_temperature_C, c.design_min_rail_temperature_C
    gap, glim = c.pull_apart_gap_m, c.gap_limit_m
    stress, slim = -c.max_tension_stress_Pa, c.tension_stress_limit_Pa
    cold = []  # (rail temperature at which the limit, or its watch fraction, is reached)
    if gap >= watch_fraction * glim and gap > 0:
        f = 1.0 if gap > glim else watch_fraction
        cold.append(tn + (tmin - tn) * math.sqrt(f * glim / gap))
    if stress >= watch_fraction * slim and stress > 0:
        f = 1.0 if stress > slim else watch_fraction
        cold.append(tn + (tmin - tn) * f * slim / stress)
    if cold:
        after = " (with the present neutral temperature: run the check again after destressing)" \
            if heat_act and heat_target else ""
        step("inspect welds, joints and fastenings before winter and patrol for broken rails and pull-aparts "
             "when the rail is below {a_cold}" + after, ("a_cold", max(cold), "temperature", 0))
    if gap > glim:
        r = a.longitudinal_resistance_N_per_m
        step("raise the longitudinal resistance to at least {a_r} per rail (now {a_rn}: anchors, fastenings, "
             "full cribs) or fit breather arrangements",
             ("a_r", r * gap / glim, "force_per_length", 1), ("a_rn", r, "force_per_length", 1))
    if sec.neutral_basis in ("unknown", "estimated"):
        step("measure the neutral temperature" + before_hot)
    if not steps:  # a verdict with none of the above: say so rather than nothing
        step("review the reasons with a track engineer")
    return Phrase("; ".join(steps), tuple(vals))
