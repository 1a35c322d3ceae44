"""Units at the edges: parse what a person typed, format what is printed.

Inside trackplan every quantity is a plain SI float: m, N, Pa, s, kg, degC for
an absolute temperature and K for a temperature difference. This module turns
text such as ``"95 degF"``, ``"1600 ft"`` or ``"8 kN/m"`` into those floats, and
SI floats back into text in the selected unit system (``si`` or ``us``).

Two paths parse a unit:

* a table of the units people use for track work (``_UNITS`` below), each a
  factor and an offset to SI. It needs no import and keeps light commands fast
  (``trackplan force`` answers in a fraction of a second);
* anything not in the table goes to ``pint`` (imported on first use), which
  understands compound units such as ``lbf/in`` or ``kN/m**2`` and checks the
  dimension. The table itself is tested against pint, the reference library,
  entry by entry (``tests/test_units.py``).

Absolute temperatures and temperature differences are different kinds:
``27 degC`` is a point on a scale, a rise of ``10 K`` (or ``10 delta_degC``)
is a difference. A difference option refuses ``10 degC`` with a message,
because guessing which was meant is how a 32 degF error is born.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass
from functools import lru_cache

from trackplan.errors import InputError, UnitKindError

# --------------------------------------------------------------------------
# Kinds of quantity and their SI unit
# --------------------------------------------------------------------------

#: SI unit (as written by pint) of each kind of quantity trackplan reads.
SI_UNIT = {
    "temperature": "degC",
    "temperature_difference": "K",
    "length": "m",
    "force": "N",
    "stress": "Pa",
    "force_per_length": "N/m",
    "stiffness_per_area": "N/m**2",
    "area": "m**2",
    "second_moment": "m**4",
    "mass_per_length": "kg/m",
    "expansion": "1/K",
    "irradiance": "W/m**2",
    "speed": "m/s",
    "angle": "deg",
    "time": "s",
}

#: pint dimensionality expected for each kind (checked on the pint path).
_PINT_CHECK_UNIT = {k: v for k, v in SI_UNIT.items()}
_PINT_CHECK_UNIT["temperature"] = "K"
_PINT_CHECK_UNIT["angle"] = "degree"  # SI inside for angles is the degree (converted, never just checked)

# factor, offset: si_value = value * factor + offset
_F = 4.4482216152605  # N per lbf (exact by definition of the pound-force)
_IN = 0.0254  # m per inch (exact, international inch)
_FT = 0.3048  # m per foot (exact)

_UNITS: dict[str, dict[str, tuple[float, float]]] = {
    "temperature": {
        "degC": (1.0, 0.0),
        "°C": (1.0, 0.0),
        "celsius": (1.0, 0.0),
        "degF": (5.0 / 9.0, -32.0 * 5.0 / 9.0),
        "°F": (5.0 / 9.0, -32.0 * 5.0 / 9.0),
        "fahrenheit": (5.0 / 9.0, -32.0 * 5.0 / 9.0),
        "K": (1.0, -273.15),
        "kelvin": (1.0, -273.15),
    },
    "temperature_difference": {
        "K": (1.0, 0.0),
        "kelvin": (1.0, 0.0),
        "delta_degC": (1.0, 0.0),
        "delta_degF": (5.0 / 9.0, 0.0),
    },
    "length": {
        "m": (1.0, 0.0),
        "mm": (1e-3, 0.0),
        "cm": (1e-2, 0.0),
        "km": (1e3, 0.0),
        "in": (_IN, 0.0),
        "inch": (_IN, 0.0),
        "ft": (_FT, 0.0),
        "foot": (_FT, 0.0),
        "feet": (_FT, 0.0),
        "yd": (3 * _FT, 0.0),
        "mi": (1609.344, 0.0),
    },
    "force": {
        "N": (1.0, 0.0),
        "kN": (1e3, 0.0),
        "MN": (1e6, 0.0),
        "lbf": (_F, 0.0),
        "kip": (1e3 * _F, 0.0),
        "tonf": (2000 * _F, 0.0),
    },
    "stress": {
        "Pa": (1.0, 0.0),
        "kPa": (1e3, 0.0),
        "MPa": (1e6, 0.0),
        "GPa": (1e9, 0.0),
        "N/mm**2": (1e6, 0.0),
        "psi": (_F / _IN**2, 0.0),
        "ksi": (1e3 * _F / _IN**2, 0.0),
    },
    "force_per_length": {
        "N/m": (1.0, 0.0),
        "kN/m": (1e3, 0.0),
        "N/mm": (1e3, 0.0),
        "lbf/in": (_F / _IN, 0.0),
        "lbf/ft": (_F / _FT, 0.0),
        "kip/in": (1e3 * _F / _IN, 0.0),
        "kip/ft": (1e3 * _F / _FT, 0.0),
    },
    "stiffness_per_area": {
        "N/m**2": (1.0, 0.0),
        "kN/m**2": (1e3, 0.0),
        "MN/m**2": (1e6, 0.0),
        "psi": (_F / _IN**2, 0.0),
        "lbf/in**2": (_F / _IN**2, 0.0),
    },
    "area": {
        "m**2": (1.0, 0.0),
        "cm**2": (1e-4, 0.0),
        "mm**2": (1e-6, 0.0),
        "in**2": (_IN**2, 0.0),
    },
    "second_moment": {
        "m**4": (1.0, 0.0),
        "cm**4": (1e-8, 0.0),
        "mm**4": (1e-12, 0.0),
        "in**4": (_IN**4, 0.0),
    },
    "mass_per_length": {
        "kg/m": (1.0, 0.0),
        "lb/yd": (0.45359237 / (3 * _FT), 0.0),
        "lb/ft": (0.45359237 / _FT, 0.0),
    },
    "expansion": {
        "1/K": (1.0, 0.0),
        "1/delta_degC": (1.0, 0.0),
        "1/delta_degF": (9.0 / 5.0, 0.0),
    },
    "irradiance": {"W/m**2": (1.0, 0.0)},
    "speed": {
        "m/s": (1.0, 0.0),
        "km/h": (1000.0 / 3600.0, 0.0),
        "mph": (1609.344 / 3600.0, 0.0),
        "knot": (1852.0 / 3600.0, 0.0),
    },
    "angle": {"deg": (1.0, 0.0), "degree": (1.0, 0.0), "degrees": (1.0, 0.0), "°": (1.0, 0.0),
              "rad": (180.0 / math.pi, 0.0), "radian": (180.0 / math.pi, 0.0), "grad": (0.9, 0.0),
              "gon": (0.9, 0.0), "turn": (360.0, 0.0)},
    "time": {"s": (1.0, 0.0), "min": (60.0, 0.0), "h": (3600.0, 0.0), "day": (86400.0, 0.0)},
}

# Ways people write the same unit; folded before lookup.
_ALIASES = {
    "deg c": "degC",
    "degc": "degC",
    "deg f": "degF",
    "degf": "degF",
    "°c": "°C",
    "°f": "°F",
    "m2": "m**2",
    "cm2": "cm**2",
    "mm2": "mm**2",
    "in2": "in**2",
    "m4": "m**4",
    "cm4": "cm**4",
    "mm4": "mm**4",
    "in4": "in**4",
    "kn/m2": "kN/m**2",
    "kn/m^2": "kN/m**2",
    "n/mm2": "N/mm**2",
    "kips": "kip",
    "lb/in": "lbf/in",
    "lb/ft": "lb/ft",
    "kn": "kN",
    "mpa": "MPa",
    "gpa": "GPa",
    "delta_degc": "delta_degC",
    "delta_degf": "delta_degF",
    "w/m2": "W/m**2",
}

#: How each kind is shown in each unit system: (unit label, factor, offset)
#: so that shown = (si - offset) / factor.
DISPLAY = {
    "si": {
        "temperature": "degC",
        "temperature_difference": "K",
        "length": "m",
        "short_length": "mm",
        "force": "kN",
        "stress": "MPa",
        "modulus": "GPa",
        "force_per_length": "kN/m",
        "stiffness_per_area": "kN/m**2",
        "area": "cm**2",
        "second_moment": "cm**4",
        "mass_per_length": "kg/m",
        "expansion": "1/K",
    },
    "us": {
        "temperature": "degF",
        "temperature_difference": "delta_degF",
        "length": "ft",
        "short_length": "in",
        "force": "kip",
        "stress": "ksi",
        "modulus": "ksi",
        "force_per_length": "lbf/in",
        "stiffness_per_area": "psi",
        "area": "in**2",
        "second_moment": "in**4",
        "mass_per_length": "lb/yd",
        "expansion": "1/delta_degF",
    },
}

#: Short labels for printing (pint spellings are kept for parsing).
_LABEL = {
    "degC": "°C",
    "degF": "°F",
    "delta_degF": "Δ°F",
    "K": "K",
    "cm**2": "cm²",
    "in**2": "in²",
    "cm**4": "cm⁴",
    "in**4": "in⁴",
    "kN/m**2": "kN/m²",
    "1/delta_degF": "1/°F",
}

# The kind a display kind reads its factor from.
_DISPLAY_BASE = {"short_length": "length", "modulus": "stress"}

UNIT_SYSTEMS = ("si", "us")

_NUMBER_RE = re.compile(r"^\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s*(.*?)\s*$")


@dataclass(frozen=True)
class Parsed:
    """A parsed quantity: the SI value, the number and the unit as written."""

    value: float
    unit: str
    number: float

    @property
    def echo(self) -> str:
        """The quantity as understood, for echoing back (``'27 degC'``)."""
        return f"{self.number:g} {self.unit}"


def accepted_units(kind: str) -> list[str]:
    """Units of the fast table for ``kind`` (for messages and ``--help``)."""
    return [u for u in _UNITS[kind] if not u.startswith("°")]


def _canonical_unit(unit: str) -> str:
    u = unit.strip().replace("^", "**").replace("·", "*")
    return _ALIASES.get(u.lower(), u)


#: Kinds parsed as another kind; they differ only in the unit of a bare number typed on the
#: command line (a misalignment or a movement is typed in mm or in, a length in m or ft).
_KIND_ALIAS = {"short_length": "length"}


def _check_kind(kind: str) -> None:
    if kind not in _UNITS:
        raise KeyError(f"unknown quantity kind {kind!r}; known: {sorted(_UNITS)}")


@lru_cache(maxsize=1)
def registry():
    """The application's single pint registry, created on first use."""
    import pint

    return pint.UnitRegistry(autoconvert_offset_to_baseunit=False)


def _via_pint(value: float, unit: str, kind: str, where: str | None) -> float:
    import pint

    ureg = registry()
    if kind in ("temperature", "temperature_difference"):
        try:
            offset = not ureg.Unit(unit).is_compatible_with("kelvin") or not ureg.Quantity(1, unit)._is_multiplicative
        except Exception:
            offset = None
        if kind == "temperature_difference" and offset:
            raise InputError(
                f"'{value:g} {unit}' is a point on a temperature scale (an absolute temperature), but a "
                f"temperature difference is needed here; write it as K, delta_degC or delta_degF (e.g. '{value:g} K')",
                where,
            )
        if kind == "temperature" and offset is False and "delta" in unit.lower():
            raise InputError(
                f"'{value:g} {unit}' is a temperature difference, but an absolute temperature "
                "is needed here; write degC or degF (e.g. '27 degC')",
                where,
            )
    try:
        q = ureg.Quantity(value, unit)
        si = q.to(_PINT_CHECK_UNIT[kind])
    except pint.errors.DimensionalityError:
        raise UnitKindError(
            f"'{value:g} {unit}' is not a {kind.replace('_', ' ')}; accepted units: "
            + ", ".join(accepted_units(kind)),
            where,
        ) from None
    except Exception:  # pint raises several types for text it cannot read
        raise InputError(
            f"unknown unit '{unit}'; accepted units for a {kind.replace('_', ' ')}: "
            + ", ".join(accepted_units(kind)),
            where,
        ) from None
    mag = float(si.magnitude)
    if kind == "temperature":
        mag -= 273.15
    return mag


def to_si(value: float, unit: str, kind: str, where: str | None = None) -> float:
    """Convert ``value`` in ``unit`` to the SI unit of ``kind``.

    Parameters
    ----------
    value : float
        Magnitude in ``unit``.
    unit : str
        Unit text, e.g. ``"degF"``, ``"kN/m"``, ``"ft"``.
    kind : str
        One of :data:`SI_UNIT`'s keys.
    where : str, optional
        Option or field name used in error messages.

    Returns
    -------
    float
        Value in the SI unit of ``kind`` (degC for ``temperature``).

    Raises
    ------
    InputError
        Unknown unit, or a unit of another dimension.
    """
    kind = _KIND_ALIAS.get(kind, kind)
    _check_kind(kind)
    u = _canonical_unit(unit)
    if kind == "temperature_difference" and u in ("degC", "degF", "°C", "°F", "celsius", "fahrenheit"):
        raise InputError(
            f"'{value:g} {unit}' is a point on a temperature scale, but a temperature "
            f"difference is needed here; write it as K, delta_degC or delta_degF (e.g. '{value:g} K')",
            where,
        )
    if kind == "temperature" and u.startswith("delta_"):
        raise InputError(
            f"'{value:g} {unit}' is a temperature difference, but an absolute temperature "
            "is needed here; write degC or degF (e.g. '27 degC')",
            where,
        )
    table = _UNITS[kind]
    if u in table:
        f, o = table[u]
        return value * f + o
    return _via_pint(value, u, kind, where)


def from_si(value: float, unit: str, kind: str) -> float:
    """Convert an SI ``value`` of ``kind`` to ``unit`` (inverse of :func:`to_si`)."""
    _check_kind(kind)
    u = _canonical_unit(unit)
    table = _UNITS[kind]
    if u in table:
        f, o = table[u]
        return (value - o) / f
    # pint path: ratio of one unit to SI
    one = to_si(1.0, u, kind)
    zero = to_si(0.0, u, kind)
    return (value - zero) / (one - zero)


def parse(
    text: str | float | int,
    kind: str,
    where: str | None = None,
    default_unit: str | None = None,
    field: str | None = None,
) -> float:
    """Parse a quantity a person wrote and return its SI value.

    Parameters
    ----------
    text : str or number
        ``"95 degF"``, ``"480 m"``, ``"8 kN/m"``. A bare number is read in
        ``default_unit`` when one is given (the command line's unit system);
        otherwise it is an error that names the accepted units (files must
        always carry a unit).
    kind : str
        Kind of quantity (see :data:`SI_UNIT`).
    where : str, optional
        Option or file field, used in messages.
    default_unit : str, optional
        Unit for a bare number.

    Returns
    -------
    float
        SI value (degC for absolute temperature, K for a difference).

    Raises
    ------
    InputError
        Unparseable text, a missing unit, a unit of another dimension, a value
        outside the plausible range of its field (:mod:`trackplan.ranges`).
    """
    return parse_with_unit(text, kind, where, default_unit, field).value


def parse_with_unit(
    text: str | float | int,
    kind: str,
    where: str | None = None,
    default_unit: str | None = None,
    field: str | None = None,
    check_range: bool = True,
) -> Parsed:
    """Like :func:`parse` but also return the unit as written (for echoing).

    The value is checked against the plausible range of its field
    (:func:`trackplan.ranges.check`: ``field``, or the field ``where`` names, or the
    broad range of the kind), unless ``check_range`` is false.
    """
    kind = _KIND_ALIAS.get(kind, kind)
    _check_kind(kind)
    if isinstance(text, bool):
        raise InputError(f"expected a {kind.replace('_', ' ')} with a unit, got {text!r}", where)
    if isinstance(text, (int, float)):
        number, unit = float(text), ""
    else:
        m = _NUMBER_RE.match(str(text)) if len(str(text)) <= 200 else None
        if not str(text).strip():
            raise InputError(f"the value is empty; write a number and a unit, e.g. '{_example(kind)}'", where)
        if not m:
            raise InputError(
                f"cannot read {_short(str(text))} as {'an' if kind[0] in 'aeiou' else 'a'} {kind.replace('_', ' ')}; "
                "write a number and a unit, "
                f"e.g. '{_example(kind)}'",
                where,
            )
        number, unit = float(m.group(1)), m.group(2)
    if not math.isfinite(number):
        raise InputError(f"{_short(text)} is not a finite number", where)
    if not unit:
        if default_unit is None:
            raise InputError(
                f"{_short(text)} has no unit; write it with one of: " + ", ".join(accepted_units(kind)),
                where,
            )
        unit = default_unit
    value = to_si(number, unit, kind, where)
    if check_range:
        from trackplan import ranges

        ranges.check(value, kind, where, field=field, number=number, unit=unit)
    return Parsed(value, unit, number)


def _short(text) -> str:
    from trackplan.errors import excerpt

    return excerpt(text) if isinstance(text, str) else repr(text)


def _example(kind: str) -> str:
    examples = {
        "temperature": "27 degC",
        "temperature_difference": "10 K",
        "length": "480 m",
        "force": "600 kN",
        "stress": "250 MPa",
        "force_per_length": "8 kN/m",
        "stiffness_per_area": "2000 kN/m**2",
        "area": "76.7 cm**2",
        "second_moment": "512 cm**4",
        "mass_per_length": "60.2 kg/m",
        "expansion": "1.15e-5 1/K",
        "irradiance": "800 W/m**2",
        "speed": "3 m/s",
        "angle": "90 deg",
        "time": "1 h",
    }
    return examples[kind]


# --------------------------------------------------------------------------
# Display
# --------------------------------------------------------------------------


def display_unit(kind: str, system: str) -> str:
    """Unit (pint spelling) in which ``kind`` is shown in ``system``."""
    if system not in DISPLAY:
        raise InputError(f"unknown unit system {system!r}; accepted: {', '.join(UNIT_SYSTEMS)}", field="units")
    return DISPLAY[system][kind]


def default_unit(kind: str, system: str) -> str:
    """Unit for a bare number typed on the command line in ``system``: the display
    unit of the kind (``short_length``: mm or in; ``length``: m or ft)."""
    return display_unit(kind, system)


def label(unit: str) -> str:
    """Short printable label for a unit."""
    return _LABEL.get(unit, unit.replace("**2", "²").replace("**4", "⁴"))


def convert_for_display(value_si: float, kind: str, system: str) -> tuple[float, str]:
    """Return ``(value, unit)`` of an SI value shown in ``system``."""
    unit = display_unit(kind, system)
    base = _DISPLAY_BASE.get(kind, kind)
    return from_si(value_si, unit, base), unit


def fmt(value_si: float | None, kind: str, system: str = "si", digits: int = 1) -> str:
    """Format an SI value for printing, e.g. ``fmt(27.0, "temperature", "us")``
    gives ``"80.6 °F"``.

    Parameters
    ----------
    value_si : float or None
        SI value (None or NaN prints as an en dash).
    kind : str
        Display kind (a key of :data:`DISPLAY`'s tables).
    system : {"si", "us"}
        Unit system.
    digits : int
        Digits after the decimal point.
    """
    if value_si is None or (isinstance(value_si, float) and math.isnan(value_si)):
        return "–"
    v, unit = convert_for_display(value_si, kind, system)
    return f"{v:.{digits}f} {label(unit)}"


def number(value_si: float | None, kind: str, system: str = "si", digits: int = 1) -> str:
    """Format an SI value as a bare number in the display unit of ``system``
    (for table cells whose header carries the unit, see :func:`header`)."""
    if value_si is None or (isinstance(value_si, float) and math.isnan(value_si)):
        return "–"
    v, _ = convert_for_display(value_si, kind, system)
    return f"{v:.{digits}f}"


def header_lines(name: str, kind: str, system: str = "si") -> str:
    """Column header on two lines, the unit below (narrow tables): ``"per rail\n(kN)"``."""
    return f"{name}\n({label(display_unit(kind, system))})"


def header(name: str, kind: str, system: str = "si") -> str:
    """Column header with the display unit, e.g. ``"force per rail (kN)"``
    (parentheses, not brackets, which rich would read as markup)."""
    return f"{name} ({label(display_unit(kind, system))})"


@dataclass(frozen=True)
class Phrase:
    """Words with figures kept in SI, formatted in a unit system when printed.

    ``template`` has ``{name}`` fields; ``values`` holds ``(name, SI value, kind, digits)``
    with a display kind of :data:`DISPLAY`. Inches and ksi get one more digit than mm
    and MPa, being coarser.

    Examples
    --------
    >>> Phrase("gap {g} at {t}", (("g", 0.062, "short_length", 0), ("t", -28.0, "temperature", 0))).text("us")
    'gap 2.4 in at -18 °F'
    """

    template: str
    values: tuple = ()

    def text(self, system: str = "si") -> str:
        extra = lambda k: 1 if system == "us" and k in ("short_length", "stress") else 0
        return self.template.format(**{n: fmt(v, k, system, d + extra(k)) for n, v, k, d in self.values})

    def __str__(self) -> str:
        return self.text("si")


# --------------------------------------------------------------------------
# Figures inside words made in SI (warnings and notes of the readers and models)
# --------------------------------------------------------------------------

#: SI unit as written in a message -> (display kind, SI factor, extra digits in US units).
_TEXT_UNITS = {
    "degC": ("temperature", 1.0, 0), "°C": ("temperature", 1.0, 0),
    "K": ("temperature_difference", 1.0, 0),
    "mm": ("short_length", 1e-3, 1), "m": ("length", 1.0, 0), "km": ("length", 1e3, 0),
    "kN": ("force", 1e3, 1), "MPa": ("stress", 1e6, 1), "kN/m": ("force_per_length", 1e3, 0),
}
_RANGE_RE = re.compile(r"(?<![\w.])([-+]?\d+(?:\.(\d+))?) to ([-+]?\d+(?:\.(\d+))?) ?(degC|°C|K|mm|km|m|kN|MPa)"
                       r"(?![\w/²³⁴*])")
_TEXT_RE = re.compile(r"(?<![\w.])([-+]?\d+(?:\.(\d+))?) ?(degC|°C|K|mm|km|m|kN/m|kN|MPa)(?![\w/²³⁴*])")


def text_in(text: str, system: str = "si") -> str:
    """Words with SI figures (``"rail 41.0 degC, gap 25 mm"``) with every figure in
    ``system``; unchanged for ``si`` (``degC`` shown as ``°C``).

    For messages made before the unit system was known (readers' and models'
    warnings and notes); a figure keeps its decimals, one more for the coarser
    US units of short lengths, forces and stresses.
    """
    def sub_range(m: re.Match) -> str:
        kind, factor, extra = _TEXT_UNITS[m.group(5)]
        digits = max(len(m.group(2) or ""), len(m.group(4) or "")) + extra
        lo = number(float(m.group(1)) * factor, kind, system, digits)
        return f"{lo} to {fmt(float(m.group(3)) * factor, kind, system, digits)}"

    def sub(m: re.Match) -> str:
        unit = m.group(3)
        kind, factor, extra = _TEXT_UNITS[unit]
        digits = len(m.group(2) or "") + (extra if system == "us" else 0)
        value = float(m.group(1)) * factor
        if system == "si":
            return m.group(0).replace("degC", "°C")
        sign = "+" if m.group(1).startswith("+") and value >= 0 else ""
        return sign + fmt(value, kind, system, digits)

    if system != "si":  # "A to B degC": the unit is written once, after B
        text = _RANGE_RE.sub(lambda m: f"{sub_range(m)}", text)
    return _TEXT_RE.sub(sub, text)
