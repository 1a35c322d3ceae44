"""Warnings as objects with stable codes: ``{"code", "message", "where"}``.

A :class:`Notice` is a ``str`` (its text, as printed in the terminal, so every
list of warnings keeps working as a list of text) that also carries a stable
``code`` for scripts and the ``where`` it points at (file and line, section,
option). :func:`to_json` turns any list of warnings, notices or plain text,
into the JSON objects of every command that reads a weather record.

Codes (stable; scripts may rely on them):

=========================  =====================================================
code                       meaning
=========================  =====================================================
``gaps``                   missing values or timestamps in the record
``interpolated``           short gaps filled by linear interpolation
``incomplete_years``       years left out of the annual extremes
``unit_suspect``           values that look like another unit than the one stated
``impossible_values``      values outside physical limits, treated as missing
``time_zone``              time zone assumed or timing of the sun looks wrong
``ignored_columns``        columns of the file that are not read
``smoothed_series``        day-to-day variability far below any station's
``typical_year``           a typical (synthetic) year, not a record of real years
``repeated_years``         two or more years of the record are identical
``short_record``           too few years for the return period asked for
``observed_extreme_used``  the design value is the recorded extreme (plus allowance)
``extrapolated``           return period far beyond the record length
``heavy_tail``             GEV fit with a heavy upper tail
``quality_flag``           values flagged by the data archive, treated as missing
``calendar``               a model calendar (noleap, 360_day) mapped to dates
``assumed_input``          an input the record lacks, assumed (clear sky, wind)
``no_coordinates``         the record gives no latitude/longitude (a section or option may)
``winter_months``          the months screened are mostly winter at the station
``record_note``            anything else about the record
``rail_hotter_than_target``  destress: the rail is hotter than the target (no stretch now)
``force_beyond_capacity``  destress: the tensor force exceeds the tensor's capacity
``string_too_long``        destress: the string is longer than one pull can move
``rail_to_add``            destress: rail must be added (the target is below the rail temperature)
``achieved_differs_from_target``  destress: a short pull's reading gives another neutral
``bad_section``            risk: a section that could not be computed
``projection-metadata``    outlook: a projection file's model or scenario read from its name
``period-outside-run``     outlook: a period the model run does not cover
``short-baseline``         outlook: a station record that covers little of the baseline
=========================  =====================================================
"""

from __future__ import annotations

import re

#: The stable codes (see the module documentation).
CODES = (
    "gaps", "interpolated", "incomplete_years", "unit_suspect", "impossible_values", "time_zone",
    "ignored_columns", "smoothed_series", "typical_year", "repeated_years", "short_record",
    "observed_extreme_used", "extrapolated", "heavy_tail", "quality_flag", "calendar", "assumed_input",
    "winter_months", "no_coordinates", "record_note",
    # destress (trackplan.destressing), risk, outlook
    "rail_hotter_than_target", "force_beyond_capacity", "string_too_long", "rail_to_add",
    "achieved_differs_from_target", "bad_section", "projection-metadata", "period-outside-run", "short-baseline",
)


class Notice(str):
    """A warning: its text (a ``str``), a stable ``code`` and a ``where``.

    Parameters
    ----------
    message : str
        The text, as printed.
    code : str
        One of :data:`CODES`.
    where : str, optional
        File and line, section or option the warning points at.
    """

    def __new__(cls, message: str, code: str, where: str | None = None):
        from trackplan.errors import render

        if code not in CODES:
            raise ValueError(f"unknown warning code {code!r}")
        obj = super().__new__(cls, render(message))
        obj.code = code
        obj.where = where
        obj.template = message  # with its option references (trackplan.errors.render)
        return obj

    def __reduce__(self):  # pickles across worker processes with its code
        return (Notice, (self.template, self.code, self.where))

    def as_json(self) -> dict:
        return {"code": self.code, "message": str(self), "where": self.where}


# Older warnings are plain text: their code is read from their words (first match wins).
_PATTERNS = (
    ("quality_flag", r"quality flag"),
    ("no_coordinates", r"no latitude/longitude"),
    ("interpolated", r"filled by linear interpolation"),
    ("unit_suspect", r"look(s)? like|may be deg|is the unit|very high;"),
    ("impossible_values", r"impossible value"),
    ("time_zone", r"time ?zone|timezone|solar noon|daylight saving|offset"),
    ("gaps", r"\bgap|missing|no data"),
    ("incomplete_years", r"incomplete year|left out|not complete enough"),
    ("ignored_columns", r"ignored|not used"),
    ("short_record", r"short record|complete years?:|too few to fit"),
    ("observed_extreme_used", r"observed extreme|is the recorded value"),
    ("extrapolated", r"extrapolated"),
    ("heavy_tail", r"heavy tail"),
    ("typical_year", r"typical-year"),
    ("assumed_input", r"assumed|clear[- ]sky"),
)
_COMPILED = tuple((c, re.compile(p, re.IGNORECASE)) for c, p in _PATTERNS)
_WHERE_RE = re.compile(r"^(.{1,200}?(?: line \d+)?(?: column [^:]+)?): ")


def classify(text: str) -> str:
    """The code of a plain-text warning, from its words (``record_note`` if none fits)."""
    for code, rx in _COMPILED:
        if rx.search(text):
            return code
    return "record_note"


def as_notice(w) -> Notice:
    """A :class:`Notice` for a notice or a plain-text warning."""
    if isinstance(w, Notice):
        return w
    text = str(w)
    m = _WHERE_RE.match(text)
    where = m.group(1) if m and ("/" in m.group(1) or "." in m.group(1) or " line " in m.group(1)) else None
    return Notice(text, classify(text), where)


def merge(*groups, drop: tuple = ()) -> list[Notice]:
    """The warnings of several sources (the record, the rail temperature method, the design values,
    the season) as one list: every one a :class:`Notice`, in order, each once, the codes in
    ``drop`` left out (a lack the caller has made good). The one place warnings are merged."""
    out: list[Notice] = []
    for group in groups:
        for w in group or ():
            n = as_notice(w)
            if n.code not in drop:
                out.append(n)
    return list(dict.fromkeys(out))


def to_json(warnings) -> list[dict]:
    """JSON objects ``{"code", "message", "where"}`` of a list of warnings, duplicates once."""
    return [as_notice(w).as_json() for w in dict.fromkeys(warnings)]


def codes(warnings) -> list[str]:
    """The codes of a list of warnings, in order, each once."""
    return list(dict.fromkeys(as_notice(w).code for w in warnings))
