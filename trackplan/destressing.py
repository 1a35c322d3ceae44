"""Destressing and adjustment of continuous welded rail: the crew's figures.

Four ways of setting the neutral (stress-free) temperature of a welded string
to a target ``T_t`` (docs/methods/destressing.md):

``free``
    The string is unclipped and lies free on rollers at the measured rail
    temperature ``T_r``; it is cut, stretched by a hydraulic tensor to the
    length it would have at ``T_t``, welded and clipped.
``restrained``
    The current neutral temperature ``T_Nc`` of the string is known (from a
    measurement or a record); the adjustment is ``alpha L (T_t - T_Nc)``,
    counted from the positions the rail held while clipped.
``repair``
    A broken rail or a removed defect: a closure rail is cut so that the
    original (or a new) neutral temperature is restored.
``heating``
    Instead of stretching, the free rail is heated to ``T_t`` and clipped at
    that temperature; no tensor.

All functions are pure and work in SI (m, N, Pa, degC, K). The command
``trackplan destress`` (:mod:`trackplan.cli.destress`) prints, writes and
serialises the :class:`DestressPlan` returned by :func:`plan_destressing`.

Sign conventions
----------------
* ``extension_m`` is the total closing movement of the rail ends towards the
  cut (positive: the rail is stretched, or expands when heated).
* ``weld_allowance_m`` is signed, per weld, and is added to the length cut
  out: positive for a gap filled by weld metal (aluminothermic), negative for
  rail consumed by the weld (flash-butt). ``cut_length_m`` is
  ``extension_m + n_welds * weld_allowance_m``; a negative cut length means
  rail must be added.
* ``tensor_force_per_rail_N`` is the pull of the tensor on one rail, equal to
  the thermal force :func:`trackplan.thermal.thermal_force` of the rise
  ``T_t - T_r`` (positive: a pull; negative: a push would be needed, which a
  tensor cannot give, and ``stretch_possible`` is False).

References
----------
Esveld, C. (2001). *Modern Railway Track*, 2nd ed., MRT-Productions, ch. 7
(thermal force ``E A alpha dT``, free expansion ``alpha L dT``) and the
chapter on CWR construction (stretching of rails with tensors).
Kerr, A. D. (2003). *Fundamentals of Railway Track Engineering*,
Simmons-Boardman, chapter on thermal stresses in CWR (adjustment of the
neutral temperature).
"""

from __future__ import annotations

import csv
import math
from dataclasses import dataclass, field
from functools import lru_cache
from importlib import resources

import numpy as np

from trackplan import notices, ranges, thermal, units
from trackplan.errors import InputError, option_ref
from trackplan.notices import Notice

# The physics of the plan lives apart; every name stays importable from here.
from trackplan.destressing_physics import (  # noqa: F401
    achieved_neutral_temperature,
    adjustment_length,
    closure_length,
    heating_temperature,
    mark_movements,
    repair_opening,
)

#: Targets outside this range are refused [degC]: no railway sets the neutral
#: temperature of CWR outside it, and a value outside it is almost always a
#: unit slip (a degF figure read as degC, or a rail temperature typed as target).
TARGET_RANGE_C = ranges.bounds("target_neutral_temperature")

#: Plausible range of a measured current neutral temperature [degC] (wider than
#: the target range: a badly set string can be well outside the design range).
CURRENT_NEUTRAL_RANGE_C = ranges.bounds("measured_neutral_temperature")

#: Plausible range of a measured rail temperature [degC].
RAIL_TEMPERATURE_RANGE_C = (-50.0, 90.0)

#: Longest length one tensor set should pull (each pulled length: the whole
#: string for a pull from one end, each half for a pull towards a central cut)
#: [m]. (from memory) Common practice keeps each pulled length to a few hundred
#: metres so that the friction of the rail on its rollers and at the sleepers
#: does not stop the pull reaching the far end; 400 m is used here as the
#: default criterion. Confirm the figure in your railway's CWR procedure; the
#: reference marks are the check that the pull did reach the whole length.
MAX_PULL_LENGTH_M = 400.0
#: Most reference marks on one pulled length (a crew sheet lists every mark).
MAX_MARKS = 1000

#: A what-if result further than this from the target is repeated as a warning [K].
#: A reporting threshold of the project, not a tolerance from any standard: the
#: tolerance on the achieved neutral temperature is your railway's.
ACHIEVED_REPORT_K = 1.0

#: Number of welds each mode leaves: one closing weld at the cut, or two for a
#: closure rail.
N_WELDS = {"free": 1, "restrained": 1, "repair": 2, "heating": 1}

#: The modes and what they do (CLI choices come from the keys).
MODES = {
    "free": "rail unclipped on rollers at the rail temperature, stretched by a tensor to the target",
    "restrained": "adjustment from a known current neutral temperature: alpha L (T_target - T_N current)",
    "repair": "closure rail for a broken rail or removed defect, restoring the original (or a new) neutral",
    "heating": "rail heated to the target and clipped there, no tensor",
}

#: Warnings that stop the work as planned ("can it be done now?" is no while any holds).
BLOCKING_CODES = ("rail_hotter_than_target", "force_beyond_capacity", "string_too_long", "rail_to_add")
#: The field each blocking warning points at (the command line puts its option there).
WARNING_FIELDS = {"rail_hotter_than_target": "rail_temp", "force_beyond_capacity": "tensor_capacity",
                  "string_too_long": "length", "rail_to_add": "target"}

#: Pulling arrangements (CLI choices come from the keys).
PULLS = {
    "end": "the string pulled from one end towards the cut at that end",
    "centre": "both halves pulled towards a cut in the middle",
}


# --------------------------------------------------------------------------
# Weld allowances: a preset table with sources
# --------------------------------------------------------------------------


@dataclass(frozen=True)
class WeldAllowance:
    """Length added to the cut per weld.

    Attributes
    ----------
    name : str
        Preset name, or ``"given"`` for a value a person typed.
    allowance_m : float
        Signed allowance per weld [m]: positive for a gap filled by weld metal,
        negative for rail consumed by the weld.
    description : str
        What the allowance is.
    source : str
        Where the value comes from.
    """

    name: str
    allowance_m: float
    description: str = ""
    source: str = ""


@lru_cache(maxsize=1)
def weld_presets() -> dict[str, WeldAllowance]:
    """The weld allowance presets of ``trackplan/data/weld_allowances.csv``."""
    text = resources.files("trackplan").joinpath("data/weld_allowances.csv").read_text(encoding="utf-8")
    lines = [ln for ln in text.splitlines() if ln.strip() and not ln.startswith("#")]
    out = {}
    for row in csv.DictReader(lines):
        name = row["name"].strip()
        out[name] = WeldAllowance(
            name, float(row["allowance_mm"]) * 1e-3, row["description"].strip(), row["source"].strip()
        )
    return out


#: Largest weld allowance accepted, either sign [m].
_MAX_WELD_ALLOWANCE_M = 0.15


def weld_allowance(spec: str, where: str = "weld") -> WeldAllowance:
    """A weld allowance from a preset name or a length with its unit.

    Parameters
    ----------
    spec : str
        A preset name (``aluminothermic``, ``aluminothermic-wide``,
        ``flash-butt``) or a length with a unit such as ``"30 mm"`` (a gap
        filled by weld metal) or ``"-35 mm"`` (rail consumed by the weld).
    where : str
        Option or field name for messages.

    Returns
    -------
    WeldAllowance

    Raises
    ------
    InputError
        Unknown process name, a bare number, or a value beyond 150 mm.
    """
    presets = weld_presets()
    key = str(spec).strip().lower()
    if key in presets:
        return presets[key]
    if not key or not (key[0].isdigit() or key[0] in "+-."):
        raise InputError(
            f"unknown weld process {spec!r}; accepted: {', '.join(presets)}, or a length with a unit "
            "such as '30 mm' (gap filled by the weld) or '-35 mm' (rail consumed by the weld)",
            where,
        )
    value = units.parse(spec, "length", where)  # no default unit: '30' alone is refused
    if abs(value) > _MAX_WELD_ALLOWANCE_M:
        raise InputError(
            f"{spec!r} is beyond the {_MAX_WELD_ALLOWANCE_M * 1e3:.0f} mm of any weld gap or consumption; "
            "give the allowance per weld, e.g. '25 mm'",
            where,
        )
    return WeldAllowance("given", value, "allowance given by the user", "given on the command line")


# --------------------------------------------------------------------------
# The plan
# --------------------------------------------------------------------------


@dataclass
class DestressPlan:
    """Everything the crew needs for one destressing or adjustment, SI.

    Attributes
    ----------
    mode : str
        One of :data:`MODES`.
    pull : str
        One of :data:`PULLS`.
    length_m : float
        String length between the fixed points [m].
    pulled_lengths_m : list of float
        Each length pulled towards the cut [m] (one, or two halves).
    rail_temperature_C : float
        Measured rail temperature [degC].
    target_neutral_C : float
        Target neutral temperature [degC].
    current_neutral_C : float or None
        Current (restrained) or original (repair) neutral temperature [degC].
    base_temperature_C : float
        Temperature the rail is stress-free at when the marks are set [degC]:
        the current neutral (restrained) or the rail temperature (others).
    adjustment_K : float
        ``T_t - base_temperature_C`` [K]: what the extension and marks are made of.
    rise_K : float
        ``T_t - T_r`` [K]: the rise the tensor force is the thermal force of.
    extension_m : float
        Total closing movement of the rail ends [m] (negative: rail to add).
    weld_name : str
        Weld preset or ``given``.
    weld_allowance_m : float
        Signed allowance per weld [m].
    weld_source : str
        Source of the weld allowance.
    n_welds : int
        Welds made.
    cut_length_m : float
        Length to cut out, ``extension_m + n_welds * weld_allowance_m`` [m]; in
        repair mode the opening less the closure length. Negative: rail to add.
    tensor_force_per_rail_N : float
        Pull of the tensor on one rail [N]; 0 in heating mode; negative when a
        push would be needed (impossible).
    tensor_capacity_N : float or None
        Capacity of the tensor [N].
    within_capacity : bool or None
        Force not above the capacity (None without a capacity).
    stretch_possible : bool
        False when the rail is hotter than the target (a tensor cannot push,
        heating cannot cool).
    mark_spacing_m : float
        Spacing of reference marks [m].
    marks : list of (float, float)
        ``(distance_m, movement_m)`` for each mark of one pulled length,
        distance from its fixed end towards the cut; the same for each half of
        a centre pull.
    max_pull_length_m : float
        Criterion for a string too long for one pull [m].
    removed_length_m, opening_m, closure_length_m : float or None
        Repair mode: the removed length (clipped rail), the opening between
        the freed ends, the closure rail length [m].
    freed_length_m : float or None
        Repair: the freed rail ``D - G`` [m], marks on it; each pulled length adds its
        share of the closure rail and welds, all stretched together by the tensor.
    heating_temperature_C : float or None
        Heating mode: the rail temperature to reach [degC].
    observed_movement_m, at_mark_m, achieved_neutral_C : float or None
        The what-if of a pull that stopped short: movement observed at a mark,
        its distance, and the neutral temperature it means [degC].
    expected_movement_at_mark_m : float or None
        Planned movement of that mark [m].
    E_Pa, alpha_per_K, area_m2 : float
        Steel and section used [Pa, 1/K, m**2].
    warnings : list of str
        Warnings in words, with figures in the unit system the plan was made for.
    warning_codes : list of str
        Short codes of the warnings, same order (for scripts).
    """

    mode: str
    pull: str
    length_m: float
    pulled_lengths_m: list
    rail_temperature_C: float
    target_neutral_C: float
    current_neutral_C: float | None
    base_temperature_C: float
    adjustment_K: float
    rise_K: float
    extension_m: float
    weld_name: str
    weld_allowance_m: float
    weld_source: str
    n_welds: int
    cut_length_m: float
    tensor_force_per_rail_N: float
    tensor_capacity_N: float | None
    within_capacity: bool | None
    stretch_possible: bool
    mark_spacing_m: float
    marks: list
    max_pull_length_m: float
    E_Pa: float
    alpha_per_K: float
    area_m2: float
    removed_length_m: float | None = None
    opening_m: float | None = None
    closure_length_m: float | None = None
    freed_length_m: float | None = None
    heating_temperature_C: float | None = None
    observed_movement_m: float | None = None
    at_mark_m: float | None = None
    achieved_neutral_C: float | None = None
    expected_movement_at_mark_m: float | None = None
    warnings: list = field(default_factory=list)
    warning_codes: list = field(default_factory=list)

    @property
    def blocking(self) -> list[tuple[str, str]]:
        """``(code, message)`` of every warning that stops the work as planned."""
        return [(c, w) for c, w in zip(self.warning_codes, self.warnings) if c in BLOCKING_CODES]

    @property
    def can_be_done_now(self) -> bool:
        """True only when no blocking warning holds (see :data:`BLOCKING_CODES`)."""
        return not self.blocking

    def as_json(self) -> dict:
        """The plan with units in the key names (docs/glossary.md)."""
        out = {
            "mode": self.mode,
            "pull": self.pull,
            "length_m": self.length_m,
            "pulled_lengths_m": list(self.pulled_lengths_m),
            "rail_temperature_C": self.rail_temperature_C,
            "target_neutral_temperature_C": self.target_neutral_C,
            "known_neutral_temperature_C": self.current_neutral_C,
            "adjustment_K": self.adjustment_K,
            "tensor_rise_K": self.rise_K,
            "extension_mm": self.extension_m * 1e3,
            "weld": self.weld_name,
            "weld_allowance_mm": self.weld_allowance_m * 1e3,
            "weld_allowance_source": self.weld_source,
            "n_welds": self.n_welds,
            "cut_length_mm": self.cut_length_m * 1e3,
            "tensor_force_per_rail_kN": self.tensor_force_per_rail_N / 1e3,
            "tensor_capacity_kN": None if self.tensor_capacity_N is None else self.tensor_capacity_N / 1e3,
            "within_capacity": self.within_capacity,
            "stretch_possible": self.stretch_possible,
            "can_be_done_now": self.can_be_done_now,
            "blocking": notices.to_json(Notice(w, c, WARNING_FIELDS.get(c)) for c, w in self.blocking),
            "mark_spacing_m": self.mark_spacing_m,
            "marks": [{"distance_m": d, "movement_mm": m * 1e3} for d, m in self.marks],
            "max_pull_length_m": self.max_pull_length_m,
            "alpha_per_K": self.alpha_per_K,
            "E_GPa": self.E_Pa / 1e9,
            "area_cm2": self.area_m2 * 1e4,
            # the one warning form of every command: objects with a stable code
            "warnings": notices.to_json(Notice(w, c, WARNING_FIELDS.get(c))
                                        for c, w in zip(self.warning_codes, self.warnings)),
            "warning_codes": list(self.warning_codes),
        }
        if not self.stretch_possible and self.mode in ("free", "restrained"):
            # nothing to cut, pull or mark now: the warnings say what can be done instead
            out["cut_length_mm"] = None
            out["tensor_force_per_rail_kN"] = None
            out["marks"] = []
        if self.mode == "repair":
            out["removed_length_mm"] = None if self.removed_length_m is None else self.removed_length_m * 1e3
            out["opening_mm"] = self.opening_m * 1e3
            out["closure_length_mm"] = self.closure_length_m * 1e3
            out["freed_length_m"] = self.freed_length_m
        if self.mode == "heating":
            out["heating_temperature_C"] = self.heating_temperature_C  # the free expansion is extension_mm
        if self.achieved_neutral_C is not None:
            out["observed_movement_mm"] = self.observed_movement_m * 1e3
            out["at_mark_m"] = self.at_mark_m
            out["expected_movement_at_mark_mm"] = self.expected_movement_at_mark_m * 1e3
            out["achieved_neutral_temperature_C"] = self.achieved_neutral_C
        return out


def _check_range(value: float, lo: float, hi: float, what: str, why: str, field: str) -> None:
    if not lo <= value <= hi:
        raise InputError(f"{what} {value:.1f} degC is outside {lo:g}..{hi:g} degC: {why}", field=field)


def mark_positions(pulled_length_m: float, spacing_m: float) -> np.ndarray:
    """Mark distances from the fixed end: 0, s, 2s, ... and the pulled end [m].

    The mark at 0 (the fixed end) must not move; a last mark sits at the cut
    end of the pulled length when the spacing does not divide it.
    """
    n = int(math.floor(pulled_length_m / spacing_m + 1e-9))
    x = spacing_m * np.arange(n + 1)
    if pulled_length_m - x[-1] > 1e-6 * max(1.0, pulled_length_m):
        x = np.append(x, pulled_length_m)
    return x


def plan_destressing(
    *,
    length_m: float,
    rail_temperature_C: float,
    target_neutral_C: float | None,
    area_m2: float,
    E_Pa: float,
    alpha_per_K: float,
    mode: str = "free",
    pull: str = "end",
    weld: WeldAllowance | None = None,
    current_neutral_C: float | None = None,
    removed_length_m: float | None = None,
    opening_m: float | None = None,
    mark_spacing_m: float | None = None,
    tensor_capacity_N: float | None = None,
    max_pull_length_m: float = MAX_PULL_LENGTH_M,
    observed_movement_m: float | None = None,
    at_mark_m: float | None = None,
    system: str = "si",
) -> DestressPlan:
    """Plan a destressing, adjustment, repair or heating of one rail of a string.

    Parameters
    ----------
    length_m : float
        String length between the fixed points [m] (repair: between the clips
        left on each side, across the opening).
    rail_temperature_C : float
        Rail temperature measured on site [degC].
    target_neutral_C : float or None
        Target neutral temperature [degC], within :data:`TARGET_RANGE_C`. In
        repair mode None means: restore ``current_neutral_C``.
    area_m2 : float
        Rail cross-section area [m**2].
    E_Pa : float
        Young's modulus [Pa].
    alpha_per_K : float
        Thermal expansion coefficient [1/K].
    mode : {"free", "restrained", "repair", "heating"}
        See :data:`MODES`.
    pull : {"end", "centre"}
        From one end, or both halves towards a central cut.
    weld : WeldAllowance, optional
        Weld allowance (default: the ``aluminothermic`` preset).
    current_neutral_C : float, optional
        Restrained: the current neutral temperature; repair: the neutral
        temperature before the break [degC].
    removed_length_m : float, optional
        Repair: distance between the cuts, measured with the rail still clipped [m].
    opening_m : float, optional
        Repair: opening measured between the freed rail ends instead [m].
    mark_spacing_m : float, optional
        Reference mark spacing [m]; default 50 m or the pulled length if shorter.
    tensor_capacity_N : float, optional
        Capacity of the tensor per rail [N].
    max_pull_length_m : float
        Longest pulled length for one tensor set [m] (:data:`MAX_PULL_LENGTH_M`).
    observed_movement_m, at_mark_m : float, optional
        Movement observed at a mark and the mark's distance from its fixed end
        [m]: gives the neutral temperature achieved.
    system : {"si", "us"}
        Unit system of the figures inside the warning texts.

    Returns
    -------
    DestressPlan

    Raises
    ------
    InputError
        Non-positive length, target outside -10..60 degC, missing inputs of a
        mode, mark spacing longer than the pulled length, a mark outside the
        pulled length.

    Notes
    -----
    ``base = T_Nc`` (restrained) or ``T_r`` (other modes). Extension
    ``e = alpha L (T_t - base)``; each pulled length ``L_p`` closes
    ``alpha L_p (T_t - base)`` and a mark at ``x`` moves ``alpha x (T_t - base)``.
    Cut ``e + n a`` (``n`` welds of allowance ``a``). Tensor pull
    ``P = E A alpha (T_t - T_r)`` (:func:`trackplan.thermal.thermal_force`).
    Repair: :func:`repair_opening`, :func:`closure_length`.

    References
    ----------
    Esveld (2001), *Modern Railway Track*, ch. 7; Kerr (2003), *Fundamentals
    of Railway Track Engineering*, CWR chapter.
    """
    if mode not in MODES:
        raise InputError(f"unknown mode {mode!r}; accepted: {', '.join(MODES)}", field="mode")
    if pull not in PULLS:
        raise InputError(f"unknown pulling arrangement {pull!r}; accepted: {', '.join(PULLS)}", field="pull")
    if not (math.isfinite(length_m) and length_m > 0):
        raise InputError(f"the string length must be positive, got {length_m:g} m (e.g. '400 m')", field="length")
    thermal.check_steel(E_Pa, alpha_per_K)
    if not area_m2 > 0:
        raise InputError("the rail area must be positive", field="rail")
    _check_range(rail_temperature_C, *RAIL_TEMPERATURE_RANGE_C, "rail temperature",
                 "no rail on a track is that cold or hot; check the unit (degC or degF)", field="rail_temp")
    if current_neutral_C is not None:
        _check_range(current_neutral_C, *CURRENT_NEUTRAL_RANGE_C, "current neutral temperature",
                     "a measured or recorded neutral temperature is never that far out; check the unit", field="current_neutral")
    if mode in ("restrained", "repair") and current_neutral_C is None and not (mode == "repair" and opening_m is not None):
        what = "the current neutral temperature" if mode == "restrained" else "the neutral temperature before the break"
        raise InputError(f"{mode} mode needs {what}, e.g. current_neutral '20 degC'", field="current_neutral")
    if target_neutral_C is None:
        if mode == "repair" and current_neutral_C is not None:
            target_neutral_C = current_neutral_C
        else:
            raise InputError("a target neutral temperature is required, e.g. target '27 degC'", field="target")
    _check_range(target_neutral_C, *TARGET_RANGE_C, "target neutral temperature",
                 "CWR is not set to a neutral temperature outside this range (a value outside is usually "
                 "a unit slip, e.g. a degF figure given as degC)", field="target")
    if tensor_capacity_N is not None and not tensor_capacity_N > 0:
        raise InputError("the tensor capacity must be positive, e.g. '600 kN'", field="tensor_capacity")
    if not max_pull_length_m > 0:
        raise InputError("the longest pulled length must be positive, e.g. '400 m'", field="max_pull")
    weld = weld or weld_presets()["aluminothermic"]

    t_r, t_t = float(rail_temperature_C), float(target_neutral_C)
    base = float(current_neutral_C) if mode == "restrained" else t_r
    adj_K = t_t - base
    rise_K = t_t - t_r
    length_m = float(length_m)
    pulled = [length_m] if pull == "end" else [length_m / 2.0, length_m / 2.0]
    extension = float(sum(adjustment_length(lp, base, t_t, alpha_per_K) for lp in pulled))
    n_welds = N_WELDS[mode]
    cut = extension + n_welds * weld.allowance_m

    removed = opening = closure = None
    if mode == "repair":
        if (removed_length_m is None) == (opening_m is None):
            raise InputError(
                f"repair mode needs either the removed length ({option_ref('removed')}, measured with the rail still "
                f"clipped) or the opening between the freed rail ends ({option_ref('opening')}), not both",
                field="removed/opening",
            )
        if removed_length_m is not None:
            if not removed_length_m > 0:
                raise InputError("the removed length must be positive, e.g. '4.5 m'", field="removed")
            if removed_length_m >= length_m:
                raise InputError(
                    "the removed length must be shorter than the length between the fixed points", field="removed"
                )
            removed = float(removed_length_m)
            opening = repair_opening(removed, length_m, current_neutral_C, t_r, alpha_per_K)
        else:
            if not opening_m > 0 or opening_m >= length_m:
                raise InputError("the opening must be positive and shorter than the length between the fixed points", field="opening")
            opening = float(opening_m)
        closure = closure_length(opening, length_m, t_t, t_r, alpha_per_K, weld.allowance_m, n_welds)
        if not closure > 0:
            raise InputError(
                f"the closure rail would be {closure * 1e3:.0f} mm long: the opening is too small for "
                f"{n_welds} welds of this process; cut a longer opening",
                field="removed/opening",
            )
        cut = opening - closure  # equals extension + n_welds * allowance

    force = 0.0 if mode == "heating" else float(thermal.thermal_force(rise_K, E_Pa, area_m2, alpha_per_K))
    stretch_possible = rise_K >= 0.0
    # A capacity is checked against a pull only: no tensor in heating mode, and no
    # pull at all when the rail is hotter than the target.
    within = None if (tensor_capacity_N is None or mode == "heating" or force < 0) else bool(force <= tensor_capacity_N)

    # marks lie on rail that was there when they were set: in a repair, the freed
    # rail of each side (the closure rail is stretched with it but carries none)
    freed = None if opening is None else float(length_m - opening)
    lp = pulled[0] if freed is None else freed / len(pulled)
    if mark_spacing_m is None:
        spacing = min(50.0, lp)
    else:
        if not mark_spacing_m > 0:
            raise InputError("the mark spacing must be positive, e.g. '50 m'", field="marks")
        if mark_spacing_m > lp * (1 + 1e-9):
            half = " (half the string, for a pull towards a central cut)" if pull == "centre" else ""
            raise InputError(
                f"mark spacing {units.fmt(mark_spacing_m, 'length', system)} is longer than the pulled length "
                f"{units.fmt(lp, 'length', system)}{half}; choose a spacing of at most the pulled length",
                field="marks",
            )
        spacing = float(mark_spacing_m)
    if lp / spacing > MAX_MARKS:
        raise InputError(f"a mark spacing of {units.fmt(spacing, 'length', system, 3)} puts more than {MAX_MARKS} "
                         f"marks on the pulled length {units.fmt(lp, 'length', system)}; choose a wider spacing "
                         "(marks are usually 25-100 m apart)", field="marks")
    xs = mark_positions(lp, spacing)
    moves = mark_movements(xs, base, t_t, alpha_per_K)
    marks = [(float(x), float(m)) for x, m in zip(xs, moves)]

    achieved = expected_at = None
    if (observed_movement_m is None) != (at_mark_m is None):
        raise InputError(f"give both {option_ref('observed_movement')} and {option_ref('at_mark')} (the mark's "
                         "distance from its fixed end)",
                         field="observed_movement/at_mark")
    if at_mark_m is not None:
        if not 0 < at_mark_m <= lp * (1 + 1e-9):
            raise InputError(
                f"the mark must lie on the pulled length, between 0 and {units.fmt(lp, 'length', system)} "
                "from its fixed end",
                field="at_mark",
            )
        achieved = float(achieved_neutral_temperature(observed_movement_m, at_mark_m, base, alpha_per_K))
        if not TARGET_RANGE_C[0] - 20.0 <= achieved <= TARGET_RANGE_C[1] + 20.0:
            raise InputError(
                f"a movement of {units.fmt(observed_movement_m, 'short_length', system)} at "
                f"{units.fmt(at_mark_m, 'length', system)} would mean a neutral temperature of {achieved:.0f} degC, "
                "which no pull can reach: check the reading and its unit (e.g. '40 mm')",
                field="observed_movement",
            )
        expected_at = float(mark_movements(at_mark_m, base, t_t, alpha_per_K))

    heat_C = None
    if mode == "heating":
        heat_C = float(heating_temperature(t_r, extension, length_m, alpha_per_K))

    plan = DestressPlan(
        mode=mode, pull=pull, length_m=float(length_m), pulled_lengths_m=pulled,
        rail_temperature_C=t_r, target_neutral_C=t_t, current_neutral_C=current_neutral_C,
        base_temperature_C=base, adjustment_K=adj_K, rise_K=rise_K, extension_m=extension,
        weld_name=weld.name, weld_allowance_m=weld.allowance_m, weld_source=weld.source, n_welds=n_welds,
        cut_length_m=float(cut), tensor_force_per_rail_N=force, tensor_capacity_N=tensor_capacity_N,
        within_capacity=within, stretch_possible=stretch_possible, mark_spacing_m=spacing, marks=marks,
        max_pull_length_m=float(max_pull_length_m), E_Pa=E_Pa, alpha_per_K=alpha_per_K, area_m2=area_m2,
        removed_length_m=removed, opening_m=opening, closure_length_m=closure, freed_length_m=freed,
        heating_temperature_C=heat_C,
        observed_movement_m=None if observed_movement_m is None else float(observed_movement_m),
        at_mark_m=None if at_mark_m is None else float(at_mark_m), achieved_neutral_C=achieved,
        expected_movement_at_mark_m=expected_at,
    )
    _add_warnings(plan, system)
    return plan


def _add_warnings(p: DestressPlan, s: str) -> None:
    """Warnings in words, with figures in unit system ``s``."""
    T = lambda v: units.fmt(v, "temperature", s)  # noqa: E731
    dT = lambda v: units.fmt(v, "temperature_difference", s)  # noqa: E731
    mm = lambda v: units.fmt(v, "short_length", s, 0 if s == "si" else 2)  # noqa: E731
    kN = lambda v: units.fmt(v, "force", s, 0)  # noqa: E731
    m = lambda v: units.fmt(v, "length", s, 0)  # noqa: E731

    def add(code: str, text: str) -> None:
        p.warning_codes.append(code)
        p.warnings.append(text)

    if not p.stretch_possible:
        excess = -p.rise_K
        lock = float(adjustment_length(p.length_m, p.target_neutral_C, p.rail_temperature_C, p.alpha_per_K))
        push = float(thermal.thermal_force(excess, p.E_Pa, p.area_m2, p.alpha_per_K))
        how = "heating cannot help: it only makes the rail hotter" if p.mode == "heating" else \
            "a tensor can only pull, and heating only makes the rail hotter"
        add(
            "rail_hotter_than_target",
            f"The rail at {T(p.rail_temperature_C)} is {dT(excess)} hotter than the target {T(p.target_neutral_C)}: "
            f"stretching to the target is impossible now ({how}). Wait until the rail has cooled to "
            f"{T(p.target_neutral_C)} or below and do the work then; or add rail: {mm(lock)} more than fits "
            f"stress-free now, held in compression of {kN(push)} per rail, which only your railway's procedure "
            f"can allow. Fastening the rail stress-free now would set the neutral "
            f"temperature at {T(p.rail_temperature_C)}, {dT(excess)} above the target.",
        )
    if p.within_capacity is False:
        reach = p.rail_temperature_C + p.tensor_capacity_N / (p.E_Pa * p.area_m2 * p.alpha_per_K)
        warm = p.target_neutral_C - p.tensor_capacity_N / (p.E_Pa * p.area_m2 * p.alpha_per_K)
        add(
            "force_beyond_capacity",
            f"The pull of {kN(p.tensor_force_per_rail_N)} per rail is beyond the tensor's capacity of "
            f"{kN(p.tensor_capacity_N)}: with this tensor the target can be reached once the rail has warmed to "
            f"{T(warm)} or more; at {T(p.rail_temperature_C)} it reaches a neutral temperature of {T(reach)} only. "
            "Use a larger tensor, wait for warmer rail, or combine heating with the pull.",
        )
    long = [lp for lp in p.pulled_lengths_m if lp > p.max_pull_length_m * (1 + 1e-9)]
    if long:
        what = "the string pulled from one end" if p.pull == "end" else "each half of the string"
        add(
            "string_too_long",
            f"The pulled length ({what}) is {m(long[0])}, longer than the {m(p.max_pull_length_m)} taken as the "
            "most one tensor set pulls reliably (from memory, common practice; confirm in your CWR procedure): "
            "friction on the rollers and at the sleepers may stop the stretch short of the far end. "
            + ("Pull both halves towards a central cut, or split " if p.pull == "end" else "Split ")
            + "the string into shorter pulled lengths with intermediate fixed points; check every mark.",
        )
    if p.cut_length_m < 0 and p.mode != "repair" and p.stretch_possible:
        add(
            "rail_to_add",
            f"The length to cut out is negative ({mm(p.cut_length_m)}): rail must be added, "
            f"{mm(-p.cut_length_m)}, as a closure rail with its own two welds (re-plan it in repair mode).",
        )
    if p.achieved_neutral_C is not None:
        short = p.target_neutral_C - p.achieved_neutral_C
        if abs(short) > ACHIEVED_REPORT_K:
            word = "below" if short > 0 else "above"
            add(
                "achieved_differs_from_target",
                f"The movement observed at {m(p.at_mark_m)} ({mm(p.observed_movement_m)}, expected "
                f"{mm(p.expected_movement_at_mark_m)}) means a neutral temperature of {T(p.achieved_neutral_C)}, "
                f"{dT(abs(short))} {word} the target.",
            )
