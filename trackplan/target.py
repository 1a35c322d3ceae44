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

import math
from dataclasses import dataclass, field

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
    explanation : list of str
        The reasoning in words.
    openers : list of str
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
    explanation: list[str] = field(default_factory=list)
    openers: list[str] = field(default_factory=list)

    @property
    def feasible_window_C(self) -> tuple[float, float] | None:
        return (self.heat_floor_C, self.cold_ceiling_C) if self.feasible else None


def heat_floor(design_max_C: float, allowable_rise_K: float, drift_allowance_K: float) -> float:
    """Lowest acceptable neutral temperature, ``T_hot + d - dT_allow`` [degC]."""
    return design_max_C + drift_allowance_K - allowable_rise_K


def stress_ceiling(design_min_C: float, tension_stress_limit_Pa: float, E_Pa: float, alpha_per_K: float) -> float:
    """Highest neutral temperature for the tension stress limit [degC]."""
    return design_min_C + tension_stress_limit_Pa / (E_Pa * alpha_per_K)


def gap_ceiling(design_min_C: float, gap_limit_m: float, E_Pa: float, area_m2: float, alpha_per_K: float,
                resistance_N_per_m: float) -> float:
    """Highest neutral temperature for the pull-apart gap limit [degC].

    Inverts ``g = E A (alpha dT)**2 / r`` for ``dT``.
    """
    return design_min_C + math.sqrt(gap_limit_m * resistance_N_per_m / (E_Pa * area_m2)) / alpha_per_K


def recommend_neutral(
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

    Returns
    -------
    TargetResult
    """
    lo = heat_floor(design_max_C, allowable_rise_K, drift_allowance_K)
    s_ceil = stress_ceiling(design_min_C, tension_stress_limit_Pa, E_Pa, alpha_per_K)
    g_ceil = gap_ceiling(design_min_C, gap_limit_m, E_Pa, area_m2, alpha_per_K, resistance_N_per_m)
    hi = min(s_ceil, g_ceil)
    governing = "tension stress" if s_ceil <= g_ceil else "pull-apart gap"
    why = [
        f"heat: design rail maximum {design_max_C:.1f} degC, allowable rise {allowable_rise_K:.1f} K, drift "
        f"allowance {drift_allowance_K:.1f} K, so the neutral temperature must be at least {lo:.1f} degC",
        f"cold: design rail minimum {design_min_C:.1f} degC; the tension stress limit "
        f"{tension_stress_limit_Pa / 1e6:.0f} MPa allows at most {s_ceil:.1f} degC and the pull-apart gap limit "
        f"{gap_limit_m * 1e3:.0f} mm at most {g_ceil:.1f} degC ({governing} governs)",
    ]
    if hi < lo:
        short = lo - hi
        r_need = E_Pa * area_m2 * (alpha_per_K * (lo - design_min_C)) ** 2 / gap_limit_m
        openers = [
            f"a stronger track: {short:.1f} K more allowable rise (consolidated ballast, full shoulders, heavier "
            "sleepers, or a verified higher lateral resistance)",
            f"less drift: a drift allowance {short:.1f} K smaller through neutral temperature monitoring"
            if drift_allowance_K >= short else
            f"drift allowance cannot close it alone ({drift_allowance_K:.1f} K in use)",
            "a shorter return period for the design temperatures (accepting more risk), or shade",
        ]
        if governing == "pull-apart gap":
            openers.append(
                f"on the cold side: longitudinal resistance of at least {r_need / 1e3:.1f} kN/m per rail "
                f"(now {resistance_N_per_m / 1e3:.1f}) so a break opens no more than {gap_limit_m * 1e3:.0f} mm "
                "at the heat floor, or expansion devices / shorter strings with breather arrangements"
            )
        why.append(f"the window is empty: the heat floor is {short:.1f} K above the cold ceiling")
        return TargetResult(False, lo, hi, s_ceil, g_ceil, governing, None, None, short, False, why, openers)

    width = hi - lo
    tol = laying_tolerance_K
    if width >= 2 * tol:
        target = min(max(lo + bias * width, lo + tol), hi - tol)
        rng = (target - tol, target + tol)
        narrow = False
        why.append(
            f"window {lo:.1f} to {hi:.1f} degC ({width:.1f} K); target placed {bias:.0%} of the way to the hot end "
            f"(the neutral temperature tends to fall in service), laying range +/-{tol:.1f} K inside the window"
        )
    else:
        target = 0.5 * (lo + hi)
        rng = (lo, hi)
        narrow = True
        why.append(
            f"window {lo:.1f} to {hi:.1f} degC is narrower than the laying range +/-{tol:.1f} K: target its middle "
            "and lay within the window itself; consider a stronger track to widen it"
        )
    return TargetResult(True, lo, hi, s_ceil, g_ceil, governing, target, rng, 0.0, narrow, why, [])


@dataclass(frozen=True)
class PracticeRule:
    """A regional rule of practice shown beside the recommendation, for context."""

    name: str
    neutral_C: tuple[float, float] | None
    note: str
    source: str


def regional_practice(record_max_rail_C: float | None, record_min_rail_C: float | None,
                      design_max_C: float, design_min_C: float, tunnel: bool = False) -> list[PracticeRule]:
    """Regional rules for the neutral temperature (DOMAIN.md 7), evaluated where their inputs exist.

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
