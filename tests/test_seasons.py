"""Seasons by hemisphere (trackplan.seasons)."""

from __future__ import annotations

import pytest

from trackplan import seasons
from trackplan.errors import InputError


def test_season_months_follow_the_hemisphere():
    assert seasons.season_months("summer", 41.2) == (5, 9)
    assert seasons.season_months("summer", -42.35) == (11, 3)
    assert seasons.season_months("winter", -42.35) == (5, 9)
    assert seasons.month_list((11, 3)) == [11, 12, 1, 2, 3]
    assert seasons.month_list(None) == list(range(1, 13))


def test_winter_months_are_recognised():
    assert seasons.mostly_winter((5, 9), -42.35) and not seasons.mostly_winter((5, 9), 41.2)
    assert seasons.mostly_winter((11, 3), 41.2)
    assert not seasons.mostly_winter((1, 12), -42.35)  # a whole year is not a winter
    assert not seasons.mostly_winter((5, 9), None)


def test_bad_season_or_unknown_hemisphere():
    with pytest.raises(InputError, match="accepted: summer, winter"):
        seasons.season_months("spring", 10.0)
    with pytest.raises(InputError, match="hemisphere is not known"):
        seasons.season_months("summer", None)
