"""The names of the registries' entries, light enough for the command line's start-up.

The registries themselves live in modules that import numpy: the rail
temperature methods (:data:`trackplan.railtemp.METHODS`), the extreme-value
distributions (:data:`trackplan.extremes.DISTRIBUTIONS`), the allowable-rise
criteria (:data:`trackplan.stability.CRITERIA`), the train presets
(:func:`trackplan.loading.train_presets`). The command line and the section
reader list and check names from here, so that ``--help`` needs no numpy;
``tests/test_names.py`` keeps every tuple equal to its registry's keys. The
track presets (sleeper, ballast, shoulder) are read by :mod:`trackplan.track`,
which is light itself.
"""

from __future__ import annotations

import csv
from functools import lru_cache
from importlib import resources

#: The rail temperature method that picks one by the record's time step.
AUTO_METHOD = "auto"
#: Keys of :data:`trackplan.railtemp.METHODS`.
RAIL_TEMPERATURE_METHODS = ("heat-balance", "daily-extremes", "air-plus-30F")
#: Keys of :data:`trackplan.extremes.DISTRIBUTIONS`.
DISTRIBUTIONS = ("gumbel", "gev")
#: Keys of :data:`trackplan.stability.CRITERIA`; the first is the default.
CRITERIA = ("practice-calibrated", "lower-critical", "upper-quarter")
DEFAULT_CRITERION = CRITERIA[0]
#: What an empty neutral window gives way to (:func:`trackplan.target.recommend_neutral`).
PRIORITIES = ("heat", "cold")
#: Name that switches vehicle loading off (the unloaded, static analysis).
NO_LOADING = "none"
#: Default train preset.
DEFAULT_LOADING = "freight-22.5t"


def method_choices() -> tuple[str, ...]:
    """Valid rail temperature method names, ``auto`` first."""
    return (AUTO_METHOD, *RAIL_TEMPERATURE_METHODS)


@lru_cache(maxsize=1)
def loading_names() -> tuple[str, ...]:
    """Train presets of ``data/train_presets.csv`` in file order, then :data:`NO_LOADING`."""
    text = resources.files("trackplan").joinpath("data/train_presets.csv").read_text(encoding="utf-8")
    lines = [ln for ln in text.splitlines() if ln.strip() and not ln.startswith("#")]
    return (*(r["name"].strip() for r in csv.DictReader(lines)), NO_LOADING)


def listing(names, default: str | None = None) -> str:
    """``a (default), b, c`` for a help text."""
    return ", ".join(f"{n} (default)" if n == default else n for n in names)
