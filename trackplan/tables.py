"""A command's JSON as CSV rows: the one way every command turns its JSON into a table.

Rendering only. Every command builds its JSON once from its result objects (the
names of docs/glossary.md: SI, the unit in the key); its CSV files are that JSON
flattened here, so a CSV never carries a figure, or a name, the JSON does not.
The settings a file was made with go above the header as ``# key: value`` lines
(:func:`trackplan.reports.write_csv`).

Flattening rules (one row per JSON object):

* a key keeps its name; the object's ``id`` is the row's ``section`` (every CSV of
  trackplan names the section's id so);
* a nested object's entries keep their own names, its ``value`` entry (or its only
  entry) takes the object's name: ``probability_per_season.standard_error`` ->
  ``standard_error``, ``probability_per_season.value`` -> ``probability_per_season``;
* where a command's entries would collide, or are keyed by a category (a level, an
  input), the builder names them with a template of the entry's key, by the nested
  object's key: ``{"days_per_year": "{}_days_per_year"}`` gives ``watch_days_per_year``;
  below a templated entry the names are ``<entry's name>_<key>``;
* a ``[low, high]`` interval (a key with ``range``, ``window`` or ``ci`` before its unit)
  becomes two columns ``<name>_low_<unit>`` and ``<name>_high_<unit>``; another list of
  numbers one cell of numbers separated by spaces (``months``: ``5 6 7 8 9``); a list of
  words one cell joined by `` | ``;
* a list of objects is a table of its own (:func:`table_rows`), never a cell; a missing
  (null) object whose entries a template names gives no cells in that row (they stay empty);
  keys in ``leave_out`` (warnings, inputs, files, the caution) stay in the JSON only.
"""

from __future__ import annotations

import re
from typing import Iterable

#: Keys of every command's JSON that stay out of its CSV rows (said in the JSON and in the terminal).
LEAVE_OUT = ("warnings", "caution", "files", "problems", "inputs")

_INTERVAL = re.compile(r"^(?P<stem>.*(?:range|window|_ci))_(?P<unit>[A-Za-z0-9]+)$")


def _cell_of_list(key: str, values: list, put) -> None:
    if values and all(isinstance(v, dict) for v in values):
        return  # a table of its own
    m = _INTERVAL.match(key)
    if m and len(values) == 2 and all(isinstance(v, (int, float)) or v is None for v in values):
        put(f"{m['stem']}_low_{m['unit']}", values[0])
        put(f"{m['stem']}_high_{m['unit']}", values[1])
    elif all(isinstance(v, (int, float)) and not isinstance(v, bool) for v in values):
        put(key, " ".join(str(v) for v in values))
    else:
        put(key, " | ".join(str(v) for v in values))


def flat_row(obj: dict, names: dict | None = None, leave_out: Iterable[str] = LEAVE_OUT) -> dict:
    """One CSV row of a JSON object (see the module documentation for the rules).

    Parameters
    ----------
    obj : dict
        A JSON object of a command (one section, one period, ...).
    names : dict, optional
        Templates naming the entries of nested objects, by the nested object's key
        (``{"drivers": "drop_{}"}``).
    leave_out : iterable of str
        Keys left out at every level.

    Raises
    ------
    ValueError
        Two entries would get the same column name (the builder has to name them).
    """
    names = names or {}
    skip = set(leave_out)
    row: dict = {}

    def put(col, v):
        if col in row:
            raise ValueError(f"two entries of the JSON give the CSV column {col!r}")
        row[col] = v

    def walk(o: dict, own: str | None, template: str | None, named: bool = False) -> None:
        # named: the builder's template names these entries (keyed by a category), never collapsed
        only = len(o) == 1
        for k, v in o.items():
            if k in skip:
                continue
            if own is not None and not named and (k == "value" or only):
                col = own
            elif template is not None:
                col = template.format(k)
            elif own is None and k == "id":
                col = "section"
            else:
                col = k
            if isinstance(v, dict):
                if template is not None:
                    walk(v, col, col + "_{}")
                else:
                    walk(v, col, names.get(k), named=k in names)
            elif isinstance(v, (list, tuple)):
                _cell_of_list(col, list(v), put)
            elif v is None and _INTERVAL.match(col):  # no interval: both ends empty, the same columns
                _cell_of_list(col, [None, None], put)
            elif v is None and k in names:  # no such object (no worst cold day): its columns stay empty
                continue
            else:
                put(col, v)

    walk(obj, None, None)
    return row


def csv_rows(objs: Iterable[dict], names: dict | None = None, leave_out: Iterable[str] = LEAVE_OUT) -> list[dict]:
    """One row per JSON object (:func:`flat_row`)."""
    return [flat_row(o, names, leave_out) for o in objs]


def table_rows(objs: Iterable[dict], key: str, names: dict | None = None,
               leave_out: Iterable[str] = LEAVE_OUT, carry: Iterable[str] = ()) -> list[dict]:
    """The rows of a list of objects inside each JSON object (``annual`` of every section), each row
    led by its object's ``section`` and the keys ``carry`` of that object (``name``, ``station``)."""
    out = []
    for o in objs:
        lead = {"section": o.get("id"), **{k: o.get(k) for k in carry}}
        for item in o.get(key) or ():
            out.append({**lead, **flat_row(item, names, leave_out)})
    return out


def columns_of(rows: list[dict]) -> list[str]:
    """The columns of rows that may lack some (a section without a worst cold day): every key, in the
    order it first appears."""
    return list(dict.fromkeys(k for r in rows for k in r))


def frame(rows: list[dict], columns: Iterable[str] = ()):
    """A pandas DataFrame of rows, with :func:`columns_of` them (``columns`` when there are none, so an
    empty file has its header); a cell a row lacks is empty."""
    import pandas as pd

    return pd.DataFrame(rows, columns=columns_of(rows)) if rows else pd.DataFrame(columns=list(columns))
