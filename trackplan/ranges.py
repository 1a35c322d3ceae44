"""Plausible ranges of every physical input, by field, with the likely slip named.

One table (:data:`RANGES`) serves the command line, section files, job files and
rail profile files alike: :func:`trackplan.units.parse_with_unit` checks every
value it converts against the range of its field (or, for a field not in the
table, the broad range of its kind in :data:`KIND_RANGES`). A value outside is
refused with a message giving the range and, where another unit of the same
kind would put the figure inside it, the likely slip (``'8 kN/mm'`` is
8000 kN/m; ``did you mean '8 kN/m'?``).

The ranges are wide: they refuse figures no track has (a slip of unit or of a
power of ten), not unusual track. Their sources: the presets and catalogues of
the project (``data/track_presets.csv``, ``data/rails.csv``) and common practice
as noted per row.

Fields are matched by name: a command-line option ``--tensor-capacity`` is the
field ``tensor_capacity``; a section file field ``stability.peak_resistance`` is
``peak_resistance``.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass

from trackplan.errors import InputError


@dataclass(frozen=True)
class Range:
    """Plausible range of one field, SI.

    Attributes
    ----------
    kind : str
        Kind of quantity (:data:`trackplan.units.SI_UNIT`).
    lo, hi : float
        Inclusive bounds in the SI unit of ``kind``.
    what : str
        What the field is, for messages.
    """

    kind: str
    lo: float
    hi: float
    what: str


_k = 1e3
_mm = 1e-3

#: Plausible range of each field [SI]. Keys are field names; several spellings of the same field
#: (command-line option and file field) share a row through :data:`ALIASES`.
RANGES: dict[str, Range] = {
    # temperatures [degC]
    # a neutral temperature set by laying or destressing is -10..60 degC in practice (as section files and
    # the destressing target); one measured on a disturbed track may lie further out (-30..70, as the register)
    "neutral_temperature": Range("temperature", -10.0, 60.0, "neutral temperature"),
    "measured_neutral_temperature": Range("temperature", -30.0, 70.0, "neutral temperature (set or measured)"),
    "target_neutral_temperature": Range("temperature", -10.0, 60.0, "target neutral temperature"),
    "rail_temperature": Range("temperature", -60.0, 90.0, "rail temperature"),
    # temperature differences [K]
    "drift_allowance": Range("temperature_difference", 0.0, 25.0, "drift allowance"),
    "laying_tolerance": Range("temperature_difference", 0.0, 10.0, "laying tolerance"),
    "warming": Range("temperature_difference", -10.0, 10.0, "uniform warming"),
    # lengths [m]
    "length": Range("length", 1.0, 100e3, "length between fixed points"),
    "radius": Range("length", 10.0, 100e3, "curve radius"),  # the stability model itself needs 100 m or more
    "sleeper_spacing": Range("length", 0.3, 1.0, "sleeper spacing"),
    "misalignment": Range("length", 0.0, 100 * _mm, "misalignment amplitude"),
    "misalignment_length": Range("length", 2.0, 40.0, "misalignment length"),
    "peak_displacement": Range("length", 0.5 * _mm, 100 * _mm, "lateral displacement at the peak resistance"),
    # limit displacement: beyond the peak displacement, at most 500 mm (checked again by trackplan.track)
    "limit_displacement": Range("length", 1 * _mm, 500 * _mm, "lateral displacement of the limit resistance"),
    "gap_limit": Range("length", 5 * _mm, 200 * _mm, "pull-apart gap limit"),
    "marks": Range("length", 1.0, 1000.0, "reference mark spacing"),
    "max_pull": Range("length", 1.0, 100e3, "longest pulled length"),
    "removed": Range("length", 1 * _mm, 100.0, "removed rail length"),
    "opening": Range("length", 1 * _mm, 100.0, "opening at the cut"),
    "observed_movement": Range("length", -5.0, 5.0, "observed movement of a mark"),
    "at_mark": Range("length", 0.0, 100e3, "distance of the mark from the fixed end"),
    "elevation": Range("length", -500.0, 9000.0, "elevation"),
    "wind_height": Range("length", 0.5, 300.0, "anemometer height"),
    "height": Range("length", 50 * _mm, 300 * _mm, "rail height"),
    "foot_width": Range("length", 50 * _mm, 250 * _mm, "rail foot width"),
    "head_width": Range("length", 30 * _mm, 120 * _mm, "rail head width"),
    # forces [N]
    "tensor_capacity": Range("force", 10 * _k, 10e6, "tensor capacity per rail"),
    # axle load: as trackplan.loading.AXLE_LOAD_RANGE_N (1 kN .. 50 t)
    "axle_load": Range("force", 1 * _k, 50e3 * 9.80665, "axle load"),
    # stresses [Pa]
    "youngs_modulus": Range("stress", 150e9, 250e9, "Young's modulus of rail steel"),
    "tension_stress_limit": Range("stress", 20e6, 400e6, "tension stress limit"),
    # support modulus per rail: as trackplan.loading.SUPPORT_MODULUS_RANGE_N_PER_M2 (soft formation .. slab-like)
    "support_modulus": Range("stress", 2e6, 150e6, "track support modulus per rail"),
    # resistances [N/m]: presets 4.5-10 kN/m per rail longitudinal, 17-33 kN/m per metre of track lateral
    "longitudinal_resistance": Range("force_per_length", 1 * _k, 50 * _k, "longitudinal resistance per rail"),
    "peak_resistance": Range("force_per_length", 2 * _k, 100 * _k, "peak lateral resistance per metre of track"),
    "limit_resistance": Range("force_per_length", 1 * _k, 100 * _k, "limit lateral resistance per metre of track"),
    "lateral_stiffness": Range("stiffness_per_area", 100 * _k, 1e9, "lateral stiffness per metre of track"),
    # rail sections
    "area": Range("area", 10e-4, 200e-4, "rail cross-section area"),
    "mass": Range("mass_per_length", 10.0, 100.0, "rail mass per metre"),
    "vertical_inertia": Range("second_moment", 100e-8, 10000e-8, "vertical second moment of area"),
    "lateral_inertia": Range("second_moment", 20e-8, 3000e-8, "lateral second moment of area"),
    # steel [1/K]
    "alpha": Range("expansion", 8e-6, 16e-6, "expansion coefficient of rail steel"),
    # angles [deg]
    "latitude": Range("angle", -90.0, 90.0, "latitude"),
    "longitude": Range("angle", -180.0, 180.0, "longitude"),
    "track_azimuth": Range("angle", -360.0, 360.0, "track azimuth"),
}

#: Other names of the same fields (command-line options, job and file fields).
ALIASES = {
    "neutral": "measured_neutral_temperature",
    "current_neutral": "measured_neutral_temperature",
    "target": "target_neutral_temperature",
    "neutral_override": "target_neutral_temperature",
    "at": "rail_temperature",
    "rail_temp": "rail_temperature",
    "resistance": "longitudinal_resistance",
    "lat": "latitude",
    "lon": "longitude",
    "azimuth": "track_azimuth",
    "altitude": "elevation",
    "anemometer_height": "wind_height",
}

#: Broad range of every kind, for a field not in :data:`RANGES` [SI]: (lo, hi).
KIND_RANGES = {
    "temperature": (-100.0, 100.0),
    "temperature_difference": (-150.0, 150.0),
    "length": (-1e6, 1e6),
    "force": (-1e9, 1e9),
    "stress": (-1e12, 1e12),
    "force_per_length": (-1e9, 1e9),
    "stiffness_per_area": (0.0, 1e12),
    "area": (0.0, 1.0),
    "second_moment": (0.0, 1.0),
    "mass_per_length": (0.0, 1e4),
    "expansion": (0.0, 1e-3),
    "irradiance": (-100.0, 2000.0),
    "speed": (0.0, 200.0),
    "angle": (-360.0, 360.0),
    "time": (0.0, 1e10),
}

#: Limits of validity of the lateral stability model (trackplan.track.check_input), SI: wider
#: than the plausible ranges above, which refuse slips of input; these refuse figures the model
#: was not built for, whoever sets them (a section, an override, a sampled uncertainty).
MODEL_LIMITS: dict[str, Range] = {
    "misalignment": Range("length", 0.0, 0.5, "misalignment amplitude"),
    "misalignment_length": Range("length", 1.0, 40.0, "misalignment length"),
    "peak_displacement": Range("length", 0.0, 50 * _mm, "lateral displacement at the peak resistance"),
    "limit_displacement": Range("length", 0.0, 500 * _mm, "lateral displacement of the limit resistance"),
    "radius": Range("length", 100.0, math.inf, "curve radius"),
}

#: A calendar year (or season) of a record is complete enough when this share of its days
#: (or values) has data ...
YEAR_MIN_COVERAGE = 0.9
#: ... and every month has at least this share (a missing July would hide the year's maximum).
MONTH_MIN_COVERAGE = 0.7

#: A value of smaller magnitude than this (but not zero) is refused as vanishing (a slip of the
#: exponent, a denormal number): no input of trackplan is that small in SI.
TINY = 1e-30


def field_of(where: str | None) -> str | None:
    """The field name a ``where`` text points at (``--tensor-capacity`` -> ``tensor_capacity``,
    ``net.toml [sections.A] stability.peak_resistance`` -> ``peak_resistance``,
    ``--job crew.toml [destress] length`` -> ``length``): the last word when it names a field of
    :data:`RANGES`, else the option."""
    if not where:
        return None
    w = where.strip()
    norm = lambda t: t.strip("()").rsplit(".", 1)[-1].replace("-", "_").lower()  # noqa: E731
    last = norm(w.split()[-1])
    m = re.match(r"^--([A-Za-z][\w-]*)", w)
    option = norm(m.group(1)) if m else None
    for token in (last, option):
        if token and lookup(token) is not None:
            return token
    return option or last or None


def lookup(field: str | None) -> Range | None:
    """The range row of a field (through :data:`ALIASES`), or None."""
    if field is None:
        return None
    field = ALIASES.get(field, field)
    return RANGES.get(field)


def bounds(field: str) -> tuple[float, float]:
    """``(lo, hi)`` of a field's plausible range [SI] (through :data:`ALIASES`)."""
    row = lookup(field)
    if row is None:
        raise KeyError(field)
    return (row.lo, row.hi)


def _fmt(v: float) -> str:
    return f"{v:.6g}"


def check(value: float, kind: str, where: str | None = None, field: str | None = None,
          number: float | None = None, unit: str | None = None) -> float:
    """Refuse a value outside the plausible range of its field (or of its kind).

    Parameters
    ----------
    value : float
        SI value.
    kind : str
        Kind of quantity.
    where : str, optional
        Where the value came from (also used to find the field when ``field`` is not given).
    field : str, optional
        Field name (a key of :data:`RANGES` or :data:`ALIASES`).
    number, unit : optional
        The figure and unit as written, to name the likely slip.

    Returns
    -------
    float
        ``value``, unchanged.

    Raises
    ------
    InputError
        Not finite, vanishingly small, or outside the range, with the likely slip.
    """
    shown = f"'{number:g} {unit}'" if number is not None and unit else f"{value:g}"
    if not math.isfinite(value):
        raise InputError(f"{shown} is too large (not a finite number in SI units)"
                         if number is not None and math.isfinite(number) else f"{shown} is not a finite number", where)
    if value != 0.0 and abs(value) < TINY:
        raise InputError(f"{shown} is vanishingly small (a slip of the exponent?)", where)
    row = lookup(field if field is not None else field_of(where))
    if row is not None and row.kind != kind:
        row = None
    lo, hi = (row.lo, row.hi) if row is not None else KIND_RANGES.get(kind, (-math.inf, math.inf))
    if lo <= value <= hi:
        return value
    from trackplan import units

    disp = _display_unit(kind, unit)
    conv = lambda v: units.from_si(v, disp, kind)
    what = row.what if row is not None else f"any {kind.replace('_', ' ')} trackplan reads"
    same = unit is not None and units._canonical_unit(unit) == disp
    head = f"{shown} is" if same else f"{shown} is {_fmt(conv(value))} {disp},"
    msg = (f"{head} outside {_fmt(conv(lo))}..{_fmt(conv(hi))} {disp}, "
           f"the plausible range of the {what}" if row is not None else
           f"{head} outside {_fmt(conv(lo))}..{_fmt(conv(hi))} {disp} for {what}")
    far = kind.startswith("temperature") or value > 3 * hi or value < lo / 3 if lo > 0 else True
    hint = _slip(number, unit, kind, lo, hi) if far else ""
    if hint:
        msg += f"; {hint}"
    raise InputError(msg, where)


def _display_unit(kind: str, unit: str | None) -> str:
    from trackplan import units

    table = units._UNITS[kind]
    if unit:
        u = units._canonical_unit(unit)
        if u in table and not u.startswith("°"):
            return u
    return {"force_per_length": "kN/m", "force": "kN", "stress": "MPa", "length": "m"}.get(kind, units.SI_UNIT[kind])


def _slip(number: float | None, unit: str | None, kind: str, lo: float, hi: float) -> str:
    """The other unit of the kind that would put the figure inside the range (or '')."""
    if number is None or not unit:
        return ""
    from trackplan import units

    written = units._canonical_unit(unit)
    for u in units.accepted_units(kind):
        if u == written:
            continue
        try:
            v = units.to_si(number, u, kind)
        except InputError:
            continue
        if lo <= v <= hi:
            return f"is the unit a slip for {u} (did you mean '{number:g} {u}')?"
    return ""
