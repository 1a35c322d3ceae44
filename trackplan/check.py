"""Pre-summer check: verdict per section from its current neutral estimate.

Pure functions over SI floats. For each section:

* heat side, with the current neutral estimate ``T_N,cur`` (the latest recorded
  neutral temperature less the drift allowance): the rise at the design hot
  rail temperature ``dT_hot = T_hot - T_N,cur``, the compressive force per rail
  ``E A alpha dT_hot`` (:func:`trackplan.thermal.thermal_force`), and the heat
  margin ``dT_allow - dT_hot`` [K];
* cold side, with the recorded neutral temperature *without* drift (a neutral
  temperature that has not fallen is the worse case in winter): the tension
  force and stress at the design cold rail temperature and the gap a break
  would open, ``P**2 / (E A r)`` (:func:`trackplan.thermal.pull_apart_gap`).

Verdict rules (documented defaults; ``watch_fraction`` matches the ``watch``
level of risk-day screening):

* ``act`` when the heat margin is negative (the design hot day exceeds the
  allowable rise), or the gap or the tension stress exceeds its limit;
* ``watch`` when the rise reaches ``watch_fraction`` (0.8) of the allowable
  rise, the gap or stress reaches ``watch_fraction`` of its limit, or the
  neutral temperature has not been established by a record or a measurement;
* ``ok`` otherwise.

Sections rank worst first: ``act`` before ``watch`` before ``ok``, then by the
smallest margin as a fraction of its limit.
"""

from __future__ import annotations

from dataclasses import dataclass, field

from trackplan import thermal, units

VERDICTS = ("act", "watch", "ok")
DEFAULT_WATCH_FRACTION = 0.8


@dataclass(frozen=True)
class CheckResult:
    """Pre-summer figures and verdict for one section (SI; units in names)."""

    verdict: str
    reason_items: tuple  # of Reason: the reasons in words, formatted in any unit system
    current_neutral_temperature_C: float
    cold_neutral_temperature_C: float
    design_max_rail_temperature_C: float
    design_min_rail_temperature_C: float
    heat_rise_K: float
    allowable_rise_K: float
    heat_margin_K: float
    max_compression_force_per_rail_N: float
    max_tension_force_per_rail_N: float
    max_tension_stress_Pa: float
    pull_apart_gap_m: float
    gap_limit_m: float
    tension_stress_limit_Pa: float
    severity: float = field(default=0.0)  # smallest margin / limit; lower is worse

    @property
    def reasons(self) -> list[str]:
        """The reasons in words, SI (as in JSON)."""
        return self.reasons_in("si")

    def reasons_in(self, system: str) -> list[str]:
        """The reasons in words in the unit system ``si`` or ``us``."""
        return [r.text(system) for r in self.reason_items]


#: A reason in words (figures in SI, printed in any unit system).
Reason = units.Phrase


def check_section(
    *,
    latest_neutral_C: float,
    drift_allowance_K: float,
    design_max_C: float,
    design_min_C: float,
    allowable_rise_K: float,
    E_Pa: float,
    area_m2: float,
    alpha_per_K: float,
    resistance_N_per_m: float,
    gap_limit_m: float,
    tension_stress_limit_Pa: float,
    target_C: float | None = None,
    destress_before: str | None = None,
    neutral_basis: str = "unknown",
    watch_fraction: float = DEFAULT_WATCH_FRACTION,
) -> CheckResult:
    """Verdict and figures for one section.

    Parameters
    ----------
    latest_neutral_C : float
        Latest recorded neutral temperature [degC].
    drift_allowance_K : float
        Allowance for the fall of neutral temperature in service [K].
    design_max_C, design_min_C : float
        Design hot and cold rail temperatures [degC].
    allowable_rise_K : float
        Allowable rise above neutral (stability analysis) [K].
    E_Pa, area_m2, alpha_per_K : float
        Young's modulus [Pa], rail area [m**2], expansion coefficient [1/K].
    resistance_N_per_m : float
        Longitudinal resistance per rail [N/m].
    gap_limit_m : float
        Allowable pull-apart gap [m].
    tension_stress_limit_Pa : float
        Allowable thermal tension stress [Pa].
    target_C : float, optional
        Recommended neutral temperature, for the wording of an action [degC].
    destress_before : str, optional
        When the hot season starts (a month name), for the wording.
    neutral_basis : str
        How the neutral temperature was established (``unknown``/``estimated`` give ``watch``).
    watch_fraction : float
        Fraction of a limit at which a section goes on watch.

    Returns
    -------
    CheckResult
    """
    t_cur = latest_neutral_C - drift_allowance_K
    rise = design_max_C - t_cur
    margin = allowable_rise_K - rise
    p_hot = float(thermal.thermal_force(rise, E_Pa, area_m2, alpha_per_K))
    cold_rise = design_min_C - latest_neutral_C
    p_cold = float(thermal.thermal_force(cold_rise, E_Pa, area_m2, alpha_per_K))
    s_cold = float(thermal.thermal_stress(cold_rise, E_Pa, alpha_per_K))
    gap = float(thermal.pull_apart_gap(p_cold, E_Pa, area_m2, resistance_N_per_m))

    act: list[Reason] = []
    watch: list[Reason] = []
    T = lambda name, v, d=1: (name, v, "temperature", d)
    dT = lambda name, v: (name, v, "temperature_difference", 1)
    mm = lambda name, v: (name, v, "short_length", 0)
    when = f" before {destress_before}" if destress_before else " before the hot season"
    if margin < 0:
        if target_C is not None:
            act.append(Reason(
                "destress to {target}" + when + ": at the design rail maximum {tmax} the rise above the current "
                "neutral estimate {tcur} is {rise}, {over} over the allowable {allow}",
                (T("target", target_C, 0), T("tmax", design_max_C), T("tcur", t_cur), dT("rise", rise),
                 dT("over", -margin), dT("allow", allowable_rise_K))))
        else:
            act.append(Reason(
                "rise {rise} exceeds the allowable {allow} at {tmax} and no neutral temperature satisfies both heat "
                "and cold limits: strengthen the track or plan a heat speed restriction under local rules",
                (dT("rise", rise), dT("allow", allowable_rise_K), T("tmax", design_max_C))))
    elif rise >= watch_fraction * allowable_rise_K:
        watch.append(Reason(
            "rise {rise} at {tmax} is " + f"{rise / allowable_rise_K:.0%}" + " of the allowable {allow} "
            "(margin {margin}): keep on the hot-weather watch list",
            (dT("rise", rise), T("tmax", design_max_C), dT("allow", allowable_rise_K), dT("margin", margin))))
    if gap > gap_limit_m:
        act.append(Reason("pull-apart gap {gap} exceeds {limit} at {tmin}",
                          (mm("gap", gap), mm("limit", gap_limit_m), T("tmin", design_min_C, 0))))
    elif gap >= watch_fraction * gap_limit_m:
        watch.append(Reason("pull-apart gap {gap} is close to the {limit} limit at {tmin}",
                            (mm("gap", gap), mm("limit", gap_limit_m), T("tmin", design_min_C, 0))))
    st = lambda name, v: (name, v, "stress", 0)
    if -s_cold > tension_stress_limit_Pa:
        act.append(Reason("tension stress {s} exceeds {limit} at {tmin}",
                          (st("s", -s_cold), st("limit", tension_stress_limit_Pa), T("tmin", design_min_C, 0))))
    elif -s_cold >= watch_fraction * tension_stress_limit_Pa:
        watch.append(Reason("tension stress {s} is close to the {limit} limit at {tmin}",
                            (st("s", -s_cold), st("limit", tension_stress_limit_Pa), T("tmin", design_min_C, 0))))
    if neutral_basis in ("unknown", "estimated"):
        watch.append(Reason(f"neutral temperature is {neutral_basis}, not established by a record or measurement: "
                            "measure it", ()))

    if act:
        verdict, reasons = "act", act + watch
    elif watch:
        verdict, reasons = "watch", watch
    else:
        verdict = "ok"
        reasons = [Reason("heat margin {margin}; break gap {gap} within {limit}",
                          (dT("margin", margin), mm("gap", gap), mm("limit", gap_limit_m)))]
    severity = min(
        margin / allowable_rise_K if allowable_rise_K > 0 else -1.0,
        (gap_limit_m - gap) / gap_limit_m,
        (tension_stress_limit_Pa + s_cold) / tension_stress_limit_Pa,
    )
    return CheckResult(
        verdict=verdict,
        reason_items=tuple(reasons),
        current_neutral_temperature_C=t_cur,
        cold_neutral_temperature_C=latest_neutral_C,
        design_max_rail_temperature_C=design_max_C,
        design_min_rail_temperature_C=design_min_C,
        heat_rise_K=rise,
        allowable_rise_K=allowable_rise_K,
        heat_margin_K=margin,
        max_compression_force_per_rail_N=p_hot,
        max_tension_force_per_rail_N=p_cold,
        max_tension_stress_Pa=s_cold,
        pull_apart_gap_m=gap,
        gap_limit_m=gap_limit_m,
        tension_stress_limit_Pa=tension_stress_limit_Pa,
        severity=severity,
    )


def rank_key(result: CheckResult) -> tuple:
    """Sort key: worst first (act, watch, ok; then smallest relative margin)."""
    return (VERDICTS.index(result.verdict), result.severity)
