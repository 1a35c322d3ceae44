"""The neutral temperature a destressing achieved, from the crew's observed mark movements.

After a pull (or a heating, or a restrained adjustment) the crew reads how far
each reference mark moved towards the cut. :func:`trackplan.destressing.mark_movements`
gives the planned movements (the forward calculation); this module inverts
the readings into the neutral temperature the string actually reached and
its standard uncertainty, for the neutral-temperature register.

A job file holds the destressing's ``[destress]`` table (the fields of
``trackplan destress --job``) and the crew's readings::

    [readings]
    section = "KP-101"          # the register's section
    date = 2026-06-02           # the day of the work
    rail_temp_uncertainty = "1 K"     # standard uncertainty of the base temperature (default 1 K)
    reading_uncertainty = "1 mm"      # standard uncertainty of one movement reading (default 1 mm)
    [[readings.marks]]
    at = "200 m"                # distance from the fixed end of its pulled length
    movement = "27 mm"          # observed movement towards the cut
    half = "A"                  # pull towards a central cut: which half (A or B)
"""

from __future__ import annotations

import datetime as dt
import math
from dataclasses import dataclass, field

import numpy as np

from trackplan import units
from trackplan.destressing import achieved_neutral_temperature, mark_movements
from trackplan.errors import InputError

#: Default standard uncertainty of the base temperature [K]: a contact rail
#: thermometer read on site (from memory: calibrated rail thermometers are
#: specified to about +-1 K; set your instrument's figure).
BASE_UNCERTAINTY_K = 1.0
#: Default standard uncertainty of one movement reading [m] (a steel rule read to
#: the millimetre against the reference mark; from memory).
READING_UNCERTAINTY_M = 1e-3


@dataclass(frozen=True)
class Reading:
    """One observed mark: distance from the fixed end of its pulled length [m], movement [m]."""

    at_m: float
    movement_m: float
    half: str = "A"


@dataclass
class Achieved:
    """The neutral temperature a destressing reached, from its mark readings.

    Attributes
    ----------
    neutral_temperature_C : float
        Length-weighted mean neutral temperature over the observed lengths [degC].
    uncertainty_K : float
        Its standard uncertainty [K] (base temperature, readings, non-uniformity).
    base_temperature_C : float
        Temperature the rail was stress-free at when the marks were set [degC].
    per_mark_C : list of float
        Mean neutral temperature from the fixed end to each mark [degC].
    segments : list of (half, from_m, to_m, neutral_C)
        Neutral temperature of each stretch between consecutive marks.
    lowest_segment_C : float
        Lowest segment neutral temperature [degC] (the heat side's concern).
    expected_movements_m : list of float
        Planned movement at each mark (forward calculation) [m], or empty.
    components_K : dict
        ``base``, ``readings``, ``non_uniformity``: the parts of the uncertainty [K].
    """

    neutral_temperature_C: float
    uncertainty_K: float
    base_temperature_C: float
    per_mark_C: list
    segments: list
    lowest_segment_C: float
    expected_movements_m: list = field(default_factory=list)
    components_K: dict = field(default_factory=dict)


def achieved_from_readings(readings, base_temperature_C: float, alpha_per_K: float,
                           base_uncertainty_K: float = BASE_UNCERTAINTY_K,
                           reading_uncertainty_m: float = READING_UNCERTAINTY_M,
                           target_neutral_C: float | None = None) -> Achieved:
    """Achieved neutral temperature and its standard uncertainty from observed mark movements.

    Parameters
    ----------
    readings : sequence of Reading
        Observed movements towards the cut, grouped by pulled length (``half``),
        each mark at its distance from that length's fixed end [m].
    base_temperature_C : float
        The temperature the rail was stress-free at when the marks were set:
        the rail temperature (free rail, heating, repair) or the current
        neutral temperature (restrained adjustment) [degC].
    alpha_per_K : float
        Thermal expansion coefficient [1/K].
    base_uncertainty_K : float
        Standard uncertainty of the base temperature [K].
    reading_uncertainty_m : float
        Standard uncertainty of one movement reading [m].
    target_neutral_C : float, optional
        The planned target, for the planned movements at the marks [degC].

    Returns
    -------
    Achieved

    Notes
    -----
    Free rail stretches uniformly, so a mark at ``x`` from its fixed end moves
    ``u = alpha x (T_N - T_b)`` (:func:`trackplan.destressing.mark_movements`).
    Inverted per mark (:func:`trackplan.destressing.achieved_neutral_temperature`),
    ``T_i = T_b + u_i / (alpha x_i)`` is the mean over ``0..x_i``. Between
    consecutive marks of one pulled length (``x_0 = 0``, ``u_0 = 0`` at the
    fixed end)

    .. math:: T_k = T_b + \\frac{u_k - u_{k-1}}{\\alpha (x_k - x_{k-1})}

    The neutral temperature recorded is the length-weighted mean of the
    segments over every pulled length ``h`` (its farthest mark ``X_h``, ``U_h``):

    .. math:: \\bar T = T_b + \\frac{\\sum_h U_h}{\\alpha \\sum_h X_h}

    Its standard uncertainty combines, in quadrature, the base temperature's
    ``u_b``, the readings' ``u_r = \\sigma_u \\sqrt{n_h} / (\\alpha \\sum_h X_h)``
    (``n_h`` pulled lengths read at their far mark) and the non-uniformity of
    the pull: the length-weighted variance of the segments about the mean,
    less the part the reading errors explain
    (``2 \\sigma_u^2 / (\\alpha \\Delta x_k)^2`` per segment, ``\\sigma_u^2 / (\\alpha
    \\Delta x_1)^2`` for the first), floored at zero:

    .. math:: u = \\sqrt{u_b^2 + u_r^2 + \\max(0, s^2 - s_{noise}^2)}

    A pull that did not reach the far marks shows as low segments there: the
    lowest segment is kept beside the mean.

    References
    ----------
    Esveld, C. (2001). *Modern Railway Track*, 2nd ed., ch. 7 (free expansion
    ``alpha L dT``); JCGM 100:2008 (GUM), *Evaluation of measurement data*,
    combination of standard uncertainties in quadrature.
    """
    if not readings:
        raise InputError("no mark readings; give at least the mark at the cut", "readings marks")
    if not (math.isfinite(alpha_per_K) and alpha_per_K > 0):
        raise InputError("the expansion coefficient must be positive", "alpha")
    for name, v in (("rail_temp_uncertainty", base_uncertainty_K), ("reading_uncertainty", reading_uncertainty_m)):
        if not (math.isfinite(v) and v >= 0):
            raise InputError("must be zero or positive", f"readings {name}")
    halves: dict[str, list[Reading]] = {}
    for r in readings:
        halves.setdefault(r.half, []).append(r)
    tb = float(base_temperature_C)
    segs, per_mark, noise = [], [], []
    far_u, far_x = 0.0, 0.0
    for h, rs in sorted(halves.items()):
        rs = sorted(rs, key=lambda r: r.at_m)
        xs = np.array([r.at_m for r in rs])
        us = np.array([r.movement_m for r in rs])
        if np.any(np.diff(xs) <= 0):
            raise InputError(f"two readings at the same mark in half {h}", "readings marks")
        per_mark += list(np.atleast_1d(achieved_neutral_temperature(us, xs, tb, alpha_per_K)))
        x0 = np.concatenate([[0.0], xs[:-1]])
        u0 = np.concatenate([[0.0], us[:-1]])
        dx = xs - x0
        t_seg = tb + (us - u0) / (alpha_per_K * dx)
        var_noise = np.full(xs.size, 2.0) * (reading_uncertainty_m / (alpha_per_K * dx)) ** 2
        var_noise[0] /= 2.0  # the fixed end has no reading
        segs += [(h, float(a), float(b), float(t)) for a, b, t in zip(x0, xs, t_seg)]
        noise += list(var_noise)
        far_u += float(us[-1])
        far_x += float(xs[-1])
    mean = tb + far_u / (alpha_per_K * far_x)
    w = np.array([b - a for _, a, b, _ in segs]) / far_x
    t = np.array([s[3] for s in segs])
    spread = float(np.sum(w * (t - mean) ** 2))
    excess = max(0.0, spread - float(np.sum(w * np.array(noise))))
    u_read = reading_uncertainty_m * math.sqrt(len(halves)) / (alpha_per_K * far_x)
    comps = {"base": float(base_uncertainty_K), "readings": u_read, "non_uniformity": math.sqrt(excess)}
    expected = []
    if target_neutral_C is not None:
        expected = [float(m) for m in mark_movements(np.array([r.at_m for h in sorted(halves)
                                                                for r in sorted(halves[h], key=lambda r: r.at_m)]),
                                                     tb, target_neutral_C, alpha_per_K)]
    return Achieved(
        neutral_temperature_C=float(mean),
        uncertainty_K=float(math.sqrt(sum(v * v for v in comps.values()))),
        base_temperature_C=tb, per_mark_C=[float(v) for v in per_mark], segments=segs,
        lowest_segment_C=float(t.min()), expected_movements_m=expected, components_K=comps,
    )


#: Examples of each kind of quantity in the [readings] table, for messages.
_EXAMPLE = {"length": "200 m", "short_length": "27 mm", "temperature_difference": "1 K"}

#: Fields of the job file's [readings] table.
READING_FIELDS = ("section", "date", "rail_temp_uncertainty", "reading_uncertainty", "marks")


def read_readings(data: dict, path, today: dt.date | None = None) -> dict:
    """Validate the ``[readings]`` table of a job file (the parsed TOML ``data``).

    Returns
    -------
    dict
        ``section``, ``date``, ``base_uncertainty_K``, ``reading_uncertainty_m``
        and ``readings`` (list of :class:`Reading`; empty when the table gives
        none: the ``[destress]`` table's single observed movement is then used).
    """
    from trackplan.register import parse_date

    where = f"{path} [readings]"
    t = data.get("readings")
    if not isinstance(t, dict):
        raise InputError("no [readings] table: give the section, the date of the work and the observed mark "
                         "movements ([[readings.marks]] at = ..., movement = ...)", str(path))
    unknown = sorted(set(t) - set(READING_FIELDS))
    if unknown:
        raise InputError(f"unknown field(s) {unknown}; accepted: {', '.join(READING_FIELDS)}", where)
    sid = t.get("section")
    if not isinstance(sid, str) or not sid.strip():
        raise InputError("missing field 'section' (the register's section id, e.g. \"KP-101\")", where)
    if "date" not in t:
        raise InputError("missing field 'date' (the day of the work, YYYY-MM-DD)", where)
    day = parse_date(t["date"], f"{where} date", today)

    def qty(key, kind, default):
        if key not in t:
            return default
        v = t[key]
        if not isinstance(v, str):
            raise InputError(f"{v!r} has no unit; write e.g. \"{_EXAMPLE[kind]}\"", f"{where} {key}")
        return units.parse(v, kind, f"{where} {key}")

    u_b = qty("rail_temp_uncertainty", "temperature_difference", BASE_UNCERTAINTY_K)
    u_r = qty("reading_uncertainty", "short_length", READING_UNCERTAINTY_M)
    if not 0 < u_b <= 10:
        raise InputError(f"{u_b:g} K is outside (0, 10] K: no thermometer reading is exact", f"{where} rail_temp_uncertainty")
    if not 0 <= u_r <= 0.02:
        raise InputError(f"{u_r * 1e3:g} mm is outside 0..20 mm", f"{where} reading_uncertainty")
    marks = t.get("marks", [])
    if not isinstance(marks, list):
        raise InputError("expected [[readings.marks]] tables with at and movement", f"{where} marks")
    out = []
    for i, m in enumerate(marks):
        w = f"{where} marks[{i}]"
        if not isinstance(m, dict) or "at" not in m or "movement" not in m:
            raise InputError("each mark needs at (distance from the fixed end) and movement, e.g. "
                             "at = \"200 m\", movement = \"27 mm\"", w)
        extra = sorted(set(m) - {"at", "movement", "half"})
        if extra:
            raise InputError(f"unknown field(s) {extra}; accepted: at, movement, half", w)
        vals = []
        for key, kind in (("at", "length"), ("movement", "short_length")):
            if not isinstance(m[key], str):
                raise InputError(f"{m[key]!r} has no unit; write e.g. \"{_EXAMPLE[kind]}\"", f"{w} {key}")
            vals.append(units.parse(m[key], kind, f"{w} {key}"))
        half = str(m.get("half", "A")).strip().upper()
        if half not in ("A", "B"):
            raise InputError(f"half must be A or B, got {m.get('half')!r}", f"{w} half")
        if not vals[0] > 0:
            raise InputError("the mark must be at a positive distance from the fixed end", f"{w} at")
        if not abs(vals[1]) < 0.5:
            raise InputError(f"a movement of {vals[1] * 1e3:.0f} mm is not a mark reading; check the unit "
                             "(e.g. \"27 mm\")", f"{w} movement")
        out.append(Reading(vals[0], vals[1], half))
    return {"section": sid.strip(), "date": day, "base_uncertainty_K": u_b, "reading_uncertainty_m": u_r,
            "readings": out}
