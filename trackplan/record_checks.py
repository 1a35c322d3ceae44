"""Checks of a whole weather record before it is used: a span the rows cannot fill, and a likely
temperature unit slip. Called by the readers of :mod:`trackplan.weather` (``ctx`` is the reader's
context: ``ctx.label`` names the file, ``ctx.at(line, column)`` a place in it, ``ctx.warn`` keeps a
warning).

* :func:`check_span` refuses a record whose regular time grid would be huge (a timestamp far
  outside the record's span, such as a year typed 2999 in an hourly record, would otherwise
  build a grid of millions of empty steps), before any grid is built.
* :func:`unit_slip` stops a record whose temperatures look like another unit than the stated
  one, unless the unit is confirmed.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from trackplan.errors import InputError

#: Most steps on the regular grid of one record (30 years of one-minute data is 15.8 million).
MAX_GRID_STEPS = 20_000_000
#: The regular grid may hold at most this many times the rows of the file (more: a timestamp lies far
#: outside the record's span, e.g. a year typed as 2999).
MAX_GRID_RATIO = 4.0


def check_span(idx: pd.DatetimeIndex, step: pd.Timedelta, ctx) -> None:
    """Refuse a record whose regular grid would be huge: a timestamp far outside the record's span,
    or more steps than :data:`MAX_GRID_STEPS` (checked before any grid is built)."""
    if len(idx) < 2:
        return
    v = idx.asi8
    unit_ns = pd.Timedelta(1, unit=idx.unit).value
    steps = (int(v[-1]) - int(v[0])) * unit_ns / step.value + 1
    if steps <= max(MAX_GRID_RATIO * len(idx), 1000) and steps <= MAX_GRID_STEPS:
        return
    d = np.diff(v)
    i = int(np.argmax(d))
    gap_days = float(d[i]) * unit_ns / 86400e9
    if steps > MAX_GRID_RATIO * len(idx) and gap_days > 30:
        raise InputError(
            f"a gap of {gap_days / 365.25:.1f} years between {idx[i]} and {idx[i + 1]} (row {i + 2} of the data); "
            f"the {len(idx)} rows would fill only {len(idx) / steps:.1%} of the span: a timestamp far outside "
            "the record's span (a mistyped year?); correct the date or split the record", ctx.label)
    raise InputError(
        f"the record spans {steps:,.0f} steps of {step}, more than trackplan reads "
        f"({MAX_GRID_STEPS:,} steps; at most {MAX_GRID_RATIO:g} times the rows in the file); "
        "check the dates, or resample the record to a coarser step", ctx.label)



#: A record of at least this many days is judged on its annual figures.
SLIP_YEAR_DAYS = 300
#: Mean air temperature above which a record labelled degC looks like degF [degC]: a year hotter than
#: any station's annual mean (the hottest, in the Danakil depression, about 35 degC; from memory), or,
#: for a shorter record, a mean hotter than any month on record (about 42 degC, Death Valley; from memory).
SLIP_MEAN_YEAR_C = 35.0
SLIP_MEAN_SHORT_C = 43.0
#: Lowest air temperature of a whole year above which a record labelled degC looks like degF [degC]
#: (tropical coasts fall below about 20 degC at some time of a year; from memory).
SLIP_YEAR_MIN_C = 25.0
#: Warmest value of a year below which a record labelled degF looks like degC, away from the polar
#: regions [degC, after conversion from the stated degF].
SLIP_YEAR_MAX_F_AS_C = 10.0

_CONFIRM_HOW = ("if the unit is right, confirm it: a line '# units confirmed: yes' in the record, or "
                "climate_units_confirmed = true in the section")


def unit_slip(s: pd.Series, low: pd.Series | None, unit: str, lat, name: str, confirmed: bool,
                     ctx) -> None:
    """Stop a record whose temperatures look like another unit than the stated one.

    The values (within the plausible range of the stated unit) are judged on their mean,
    and on a record of a year or more on their lowest and highest values: degF figures
    written as degC make a year hotter than anywhere on Earth, degC figures written as
    degF a year that never warms above 10 degC away from the poles. A wrong unit shifts
    every design temperature, so this is an error, not a warning, unless the unit is
    confirmed (``# units confirmed: yes`` in the record, or ``climate_units_confirmed``
    in the section); then it is a warning.
    """
    u = unit.strip().lower()
    v = s.dropna()
    if len(v) == 0:
        return
    lo = low.dropna() if low is not None else v
    mean = float(((v + low) / 2.0).dropna().mean()) if low is not None else float(v.mean())
    span_days = (v.index[-1] - v.index[0]) / pd.Timedelta(days=1)
    year = span_days >= SLIP_YEAR_DAYS
    problem = None
    if u in ("degc", "°c", "celsius", "deg c"):
        mn = float(lo.min()) if len(lo) else float("nan")
        if year and mean > SLIP_MEAN_YEAR_C:
            problem = (f"the mean over a year or more is {mean:.1f} degC, hotter than anywhere on Earth; "
                       f"as degF it would be {(mean - 32) * 5 / 9:.1f} degC: these look like degF")
        elif year and mn > SLIP_YEAR_MIN_C:
            problem = (f"the lowest value in a year or more is {mn:.1f} degC, warmer than any station's coldest "
                       f"hour; as degF it would be {(mn - 32) * 5 / 9:.1f} degC: these look like degF")
        elif not year and mean > SLIP_MEAN_SHORT_C:
            problem = (f"the mean is {mean:.1f} degC, hotter than any month on record; as degF it would be "
                       f"{(mean - 32) * 5 / 9:.1f} degC: these look like degF")
    elif u in ("degf", "°f", "fahrenheit", "deg f"):
        mx = float(v.max())
        if year and mx < SLIP_YEAR_MAX_F_AS_C and (lat is None or abs(lat) < 60.0):
            problem = (f"the warmest value in a year or more is {mx * 9 / 5 + 32:.1f} degF ({mx:.1f} degC) away "
                       "from the polar regions: these look like degC")
    if problem is None:
        return
    if confirmed:
        ctx.warn(f"column {name}: {problem} (the unit [{unit}] is confirmed in the file or section; kept)")
        return
    raise InputError(f"{problem}, not the stated [{unit}]; correct the unit in the header, or {_CONFIRM_HOW}",
                     ctx.at(None, name))
