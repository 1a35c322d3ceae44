"""Seasons by hemisphere: which months are summer or winter at a station.

Screening a month range means different seasons on either side of the equator:
May to September is the northern summer and the southern winter. These pure
functions give the months of a named season at a latitude and say when an
explicit month range falls mostly in a station's winter.

The seasons are the five warmest and five coldest months of the mid-latitude
year, centred on the solstice months (July and January in the north, January
and July in the south), as the heat and cold seasons of welded track are
planned around them (common practice).
"""

from __future__ import annotations

from trackplan.errors import InputError, option_ref

#: Month ranges (inclusive, may wrap the year end) of each season by hemisphere.
SEASON_MONTHS = {
    "summer": {"north": (5, 9), "south": (11, 3)},
    "winter": {"north": (11, 3), "south": (5, 9)},
}

#: The winter half-year of each hemisphere (months).
_WINTER_HALF = {"north": (10, 11, 12, 1, 2, 3), "south": (4, 5, 6, 7, 8, 9)}


def hemisphere(latitude_deg: float) -> str:
    """``"north"`` for latitude >= 0 [deg], else ``"south"``."""
    return "north" if latitude_deg >= 0 else "south"


def season_months(season: str, latitude_deg: float | None, where: str | None = None) -> tuple[int, int]:
    """The month range of ``season`` (summer or winter) at a latitude [deg].

    Raises
    ------
    InputError
        Unknown season, or no latitude to tell the hemisphere.
    """
    key = str(season).strip().lower()
    if key not in SEASON_MONTHS:
        raise InputError(f"unknown season {season!r}; accepted: {', '.join(SEASON_MONTHS)}", where, field="season")
    if latitude_deg is None:
        raise InputError("the hemisphere is not known (no latitude in the section or its climate record); "
                         f"add latitude to the section, or give {option_ref('months')}", where)
    return SEASON_MONTHS[key][hemisphere(latitude_deg)]


def month_list(months: tuple[int, int] | None) -> list[int]:
    """Month numbers of an inclusive range that may wrap the year end (all 12 for None)."""
    if months is None:
        return list(range(1, 13))
    a, b = months
    return list(range(a, b + 1)) if a <= b else list(range(a, 13)) + list(range(1, b + 1))


def mostly_winter(months: tuple[int, int] | None, latitude_deg: float | None) -> bool:
    """True when more than half of the months lie in the station's winter half-year."""
    if months is None or latitude_deg is None:
        return False
    ms = month_list(months)
    winter = _WINTER_HALF[hemisphere(latitude_deg)]
    return sum(m in winter for m in ms) * 2 > len(ms)


def station_months(months: tuple[int, int] | None, season: str | None, latitude_deg: float | None):
    """The month range screened at a station: ``months`` as given, or ``season`` at its hemisphere."""
    return months if season is None else season_months(season, latitude_deg)


def winter_warnings(months: tuple[int, int] | None, latitude_deg: float | None, station: str) -> tuple:
    """A warning (code ``winter_months``) when explicit months are mostly winter at the station."""
    if not mostly_winter(months, latitude_deg):
        return ()
    from trackplan.notices import Notice

    return (Notice(f"months {months[0]}-{months[1]} are mostly winter at {station} (latitude {latitude_deg:.1f}, "
                   f"{hemisphere(latitude_deg)}ern hemisphere): few heat days are to be expected; for its hot "
                   f"season use {option_ref('season')} summer", "winter_months", "months"),)
