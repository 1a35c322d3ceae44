"""Recommended neutral temperature: feasible window, target and laying range.

Pure functions over SI floats. Too low a neutral temperature risks buckling in
summer, too high risks broken rails and pull-aparts in winter. With the design
hot and cold rail temperatures ``T_hot``, ``T_cold`` [degC], the allowable rise
above neutral ``dT_allow`` [K] from the stability analysis and a drift
allowance ``d`` [K] (the neutral temperature falls in service), a neutral
temperature ``T_N`` is acceptable when

* heat:         ``T_hot - (T_N - d) <= dT_allow``
  so ``T_N >= T_hot + d - dT_allow``;
* cold stress:  ``E alpha (T_N - T_cold) <= sigma_lim``
  so ``T_N <= T_cold + sigma_lim / (E alpha)``;
* cold gap:     ``E A (alpha (T_N - T_cold))**2 / r <= g_lim`` (gap at a break,
  :func:`trackplan.thermal.pull_apart_gap`)
  so ``T_N <= T_cold + sqrt(g_lim r / (E A)) / alpha``.

The cold side uses the neutral temperature as laid (no drift: a neutral that
does not fall is the worse case in winter).

Inside the window ``[low, high]`` the target is biased to the hot side, because
the neutral temperature tends to fall over the years: it sits at
``low + bias * (high - low)`` (``bias`` = 2/3 by default, a planning choice),
moved inward so that the laying range ``target +/- tolerance`` stays inside the
window. When the window is narrower than the laying range, the target is its
middle and the laying range is the window itself. An empty window is said
plainly, with what would open it.

References
----------
Esveld, C. (2001). *Modern Railway Track*, 2nd ed., ch. 7 (choice of the
neutral temperature between buckling and fracture).
Kish, A. and Samavedam, G. (2013). *Track Buckling Prevention: Theory, Safety
Concepts, and Applications*, US DOT/FRA/ORD-13/16 (allowable rise, neutral
temperature management).
"""

from __future__ import annotations

from dataclasses import dataclass, field

from trackplan import names, thermal, units
from trackplan.errors import InputError

#: Default position of the target in the feasible window (0 cold end, 1 hot end).
DEFAULT_BIAS = 2.0 / 3.0


@dataclass(frozen=True)
class TargetResult:
    """Recommended neutral temperature for one section (all SI; degC, K).

    Attributes
    ----------
    feasible : bool
        True when the window is not empty.
    heat_floor_C : float
        Lowest neutral temperature the heat constraint allows [degC].
    cold_ceiling_C : float
        Highest neutral temperature the cold constraints allow [degC].
    stress_ceiling_C, gap_ceiling_C : float
        The two cold ceilings [degC].
    governing_cold : str
        ``"tension stress"`` or ``"pull-apart gap"``.
    target_neutral_temperature_C : float or None
        Recommended target [degC] (None when infeasible).
    laying_range_C : tuple or None
        ``(low, high)`` [degC].
    shortfall_K : float
        By how much the window is empty (0 when feasible) [K].
    explanation : list of trackplan.units.Phrase
        The reasoning in words (``str()`` gives SI, ``.text("us")`` US units).
    openers : list of trackplan.units.Phrase
        When infeasible: what would open the window, with figures.
    """

    feasible: bool
    heat_floor_C: float
    cold_ceiling_C: float
    stress_ceiling_C: float
    gap_ceiling_C: float
    governing_cold: str
    target_neutral_temperature_C: float | None
    laying_range_C: tuple[float, float] | None
    shortfall_K: float
    narrow: bool = False
    explanation: list = field(default_factory=list)
    openers: list = field(default_factory=list)
    priority: str = "heat"
    risk: object = None  # trackplan.units.Phrase: the risk accepted when the window is empty

    @property
    def feasible_window_C(self) -> tuple[float, float] | None:
        return (self.heat_floor_C, self.cold_ceiling_C) if self.feasible else None


def heat_floor(design_max_C: float, allowable_rise_K: float, drift_allowance_K: float) -> float:
    """Lowest acceptable neutral temperature, ``T_hot + d - dT_allow`` [degC]."""
    return design_max_C + drift_allowance_K - allowable_rise_K


#: What an empty window gives way to: the first gets its constraint kept.
PRIORITIES = names.PRIORITIES


def stress_ceiling(design_min_C: float, tension_stress_limit_Pa: float, E_Pa: float, alpha_per_K: float) -> float:
    """Highest neutral temperature for the tension stress limit [degC]."""
    return design_min_C + tension_stress_limit_Pa / (E_Pa * alpha_per_K)


def gap_ceiling(design_min_C: float, gap_limit_m: float, E_Pa: float, area_m2: float, alpha_per_K: float,
                resistance_N_per_m: float) -> float:
    """Highest neutral temperature for the pull-apart gap limit [degC].

    Inverts ``g = E A (alpha dT)**2 / r`` for ``dT``.
    """
    return design_min_C + float(thermal.gap_drop_K(gap_limit_m, E_Pa, area_m2, alpha_per_K, resistance_N_per_m))


def recommend_neutral(
    *,
    design_max_C: float,
    design_min_C: float,
    allowable_rise_K: float,
    drift_allowance_K: float,
    E_Pa: float,
    area_m2: float,
    alpha_per_K: float,
    resistance_N_per_m: float,
    gap_limit_m: float,
    tension_stress_limit_Pa: float,
    laying_tolerance_K: float = 3.0,
    bias: float = DEFAULT_BIAS,
    priority: str = "heat",
) -> TargetResult:
    """Feasible window, target neutral temperature and laying range.

    Parameters
    ----------
    design_max_C, design_min_C : float
        Design hot and cold rail temperatures [degC].
    allowable_rise_K : float
        Allowable rise above neutral from the stability analysis [K].
    drift_allowance_K : float
        Expected fall of the neutral temperature in service [K].
    E_Pa, area_m2, alpha_per_K : float
        Steel modulus [Pa], rail area [m**2], expansion coefficient [1/K].
    resistance_N_per_m : float
        Longitudinal resistance per rail [N/m] (for the gap at a break).
    gap_limit_m : float
        Allowable pull-apart gap [m].
    tension_stress_limit_Pa : float
        Allowable thermal tension stress [Pa].
    laying_tolerance_K : float
        Half-width of the laying range [K].
    bias : float
        Position of the target in the window, 0 (cold end) to 1 (hot end).
    priority : str
        What an empty window gives way to (:data:`PRIORITIES`): ``heat`` (default) targets the
        heat floor plus the laying tolerance, so that the laying range never goes below the
        heat floor, and states the cold-side risk and its mitigation; ``cold`` targets the cold
        ceiling less the tolerance and states the buckling risk. Heat first because a buckle
        derails trains without warning, while tension breaks are found by inspection and track
        circuits (common practice).

    Returns
    -------
    TargetResult
    """
    if priority not in PRIORITIES:
        raise InputError(f"unknown priority {priority!r}; accepted: {', '.join(PRIORITIES)}", "priority")
    lo = heat_floor(design_max_C, allowable_rise_K, drift_allowance_K)
    s_ceil = stress_ceiling(design_min_C, tension_stress_limit_Pa, E_Pa, alpha_per_K)
    g_ceil = gap_ceiling(design_min_C, gap_limit_m, E_Pa, area_m2, alpha_per_K, resistance_N_per_m)
    hi = min(s_ceil, g_ceil)
    governing = "tension stress" if s_ceil <= g_ceil else "pull-apart gap"
    P = units.Phrase
    T = lambda n, v: (n, v, "temperature", 1)
    dT = lambda n, v: (n, v, "temperature_difference", 1)
    why = [
        P("heat: design rail maximum {tmax}, allowable rise {allow}, drift allowance {drift}, so the neutral "
          "temperature must be at least {lo}",
          (T("tmax", design_max_C), dT("allow", allowable_rise_K), dT("drift", drift_allowance_K), T("lo", lo))),
        P("cold: design rail minimum {tmin}; the tension stress limit {slim} allows at most {sc} and the pull-apart "
          "gap limit {glim} at most {gc} (" + governing + " governs)",
          (T("tmin", design_min_C), ("slim", tension_stress_limit_Pa, "stress", 0), T("sc", s_ceil),
           ("glim", gap_limit_m, "short_length", 0), T("gc", g_ceil))),
    ]
    if hi < lo:
        short = lo - hi
        r_need = float(thermal.gap_resistance_N_per_m(gap_limit_m, lo - design_min_C, E_Pa, area_m2, alpha_per_K))
        openers = [
            P("a stronger track: {short} more allowable rise (consolidated ballast, full shoulders, heavier "
              "sleepers, or a verified higher lateral resistance)", (dT("short", short),)),
            P("less drift: a drift allowance {short} smaller through neutral temperature monitoring", (dT("short", short),))
            if drift_allowance_K >= short else
            P("drift allowance cannot close it alone ({drift} in use)", (dT("drift", drift_allowance_K),)),
            P("a shorter return period for the design temperatures (accepting more risk), or shade"),
        ]
        if governing == "pull-apart gap":
            openers.append(P(
                "on the cold side: longitudinal resistance of at least {rneed} per rail (now {r}) so a break opens "
                "no more than {glim} at the heat floor, or expansion devices / shorter strings with breather "
                "arrangements",
                (("rneed", r_need, "force_per_length", 1), ("r", resistance_N_per_m, "force_per_length", 1),
                 ("glim", gap_limit_m, "short_length", 0))))
        why.append(P("the window is empty: the heat floor is {short} above the cold ceiling", (dT("short", short),)))
        tol = laying_tolerance_K
        if priority == "heat":
            target = lo + tol
            rng = (lo, lo + 2 * tol)
            cold = thermal.ColdSide(E_Pa=E_Pa, area_m2=area_m2, alpha_per_K=alpha_per_K,
                                    resistance_N_per_m=resistance_N_per_m, gap_limit_m=gap_limit_m,
                                    tension_stress_limit_Pa=tension_stress_limit_Pa)
            tension = cold.tension_stress_Pa(target - design_min_C)
            gap = cold.gap_m(target - design_min_C)
            risk = P("heat first: target {t}, laying range {a} to {b}, never below the heat floor; on the cold side at "
                     "{tmin} the thermal tension reaches {sig} (limit {slim}) and a break would open {gap} (limit "
                     "{glim}): inspect and patrol in cold weather, test for rail defects before winter, and plan "
                     "expansion devices or a stronger track to close the gap",
                     (T("t", target), T("a", rng[0]), T("b", rng[1]), T("tmin", design_min_C),
                      ("sig", tension, "stress", 0), ("slim", tension_stress_limit_Pa, "stress", 0),
                      ("gap", gap, "short_length", 0), ("glim", gap_limit_m, "short_length", 0)))
        else:
            target = hi - tol
            rng = (hi - 2 * tol, hi)
            over = design_max_C - (target - drift_allowance_K) - allowable_rise_K
            risk = P("cold first: target {t}, laying range {a} to {b}; at the design maximum {tmax} the rise above the "
                     "drifted neutral exceeds the allowable by {over}: hot-weather speed restrictions and patrols are "
                     "needed whenever the rail approaches {tcrit}",
                     (T("t", target), T("a", rng[0]), T("b", rng[1]), T("tmax", design_max_C), dT("over", over),
                      T("tcrit", target - drift_allowance_K + allowable_rise_K)))
        why.append(risk)
        return TargetResult(False, lo, hi, s_ceil, g_ceil, governing, target, rng, short, False, why, openers,
                            priority, risk)

    width = hi - lo
    tol = laying_tolerance_K
    if width >= 2 * tol:
        target = min(max(lo + bias * width, lo + tol), hi - tol)
        rng = (target - tol, target + tol)
        narrow = False
        why.append(P(
            "window {lo} to {hi} ({width}); target placed " + f"{bias:.0%}" + " of the way to the hot end (the neutral "
            "temperature tends to fall in service), laying range +/-{tol} inside the window",
            (T("lo", lo), T("hi", hi), dT("width", width), dT("tol", tol))))
    else:
        target = 0.5 * (lo + hi)
        rng = (lo, hi)
        narrow = True
        why.append(P(
            "window {lo} to {hi} is narrower than the laying range +/-{tol}: target its middle and lay within the "
            "window itself; consider a stronger track to widen it",
            (T("lo", lo), T("hi", hi), dT("tol", tol))))
    return TargetResult(True, lo, hi, s_ceil, g_ceil, governing, target, rng, 0.0, narrow, why, [], priority)


@dataclass(frozen=True)
class PracticeRule:
    """A regional rule of practice shown beside the recommendation, for context."""

    name: str
    neutral_C: tuple[float, float] | None
    note: str
    source: str


def regional_practice(record_max_rail_C: float | None, record_min_rail_C: float | None,
                      design_max_C: float, design_min_C: float, tunnel: bool = False) -> list[PracticeRule]:
    """Regional rules for the neutral temperature (docs/methods/neutral-target.md), evaluated where their inputs exist.

    * UK: stress-free temperature 27 degC (Network Rail track standards).
    * Australia: open track stressed to 38 degC, tunnels to 23 degC (an Australian code of practice).
    * North America: installation mostly at 90-110 degF (32.2-43.3 degC) (practice).
    * India: destress between ``t_m`` and ``t_m + 5 K``, ``t_m`` the mean of the highest and lowest
      rail temperatures recorded at the place (Indian Railways long welded rail practice, IRICEN notes).
    * A US transit procedure: ``(2 T_high + T_low) / 3`` plus an offset (the offset is the
      railway's own; shown without it), here with the design extremes.
    """
    rules = [
        PracticeRule("UK", (27.0, 27.0), "stress-free temperature", "Network Rail track standards"),
        PracticeRule("Australia", (23.0, 23.0) if tunnel else (38.0, 38.0),
                     "tunnels" if tunnel else "open track", "an Australian code of practice"),
        PracticeRule("North America", ((90 - 32) / 1.8, (110 - 32) / 1.8), "installation 90-110 degF",
                     "North American practice"),
    ]
    if record_max_rail_C is not None and record_min_rail_C is not None:
        tm = 0.5 * (record_max_rail_C + record_min_rail_C)
        rules.append(PracticeRule("India", (tm, tm + 5.0), f"t_m = {tm:.1f} degC (mean of record rail max and min)",
                                  "Indian Railways long welded rail practice (IRICEN notes)"))
    t = (2 * design_max_C + design_min_C) / 3.0
    rules.append(PracticeRule("US transit", (t, t), "(2 T_high + T_low)/3 with design extremes, before the "
                              "procedure's own offset", "a US transit CWR procedure"))
    return rules
