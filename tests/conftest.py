"""Shared test fixtures."""

from __future__ import annotations

import json

import pytest
from typer.testing import CliRunner


@pytest.fixture
def runner():
    return CliRunner()


@pytest.fixture
def run_cli(runner):
    """Run the trackplan CLI in-process; returns the click Result."""
    from trackplan.cli import app

    def _run(*args, json_out=False):
        result = runner.invoke(app, [str(a) for a in args])
        if json_out:
            assert result.exit_code in (0, 1), result.output
            return result, json.loads(result.stdout)
        return result

    return _run


@pytest.fixture(scope="session")
def dask_cluster():
    """One in-process Dask cluster (2 single-threaded workers) for the whole session, over TCP on
    127.0.0.1 so that a test can also reach its scheduler as an existing cluster.
    Returns ``(cluster, engine)`` with a :class:`trackplan.engine.Engine` on it."""
    pytest.importorskip("dask.distributed")
    from dask.distributed import Client, LocalCluster

    from trackplan.engine import Engine

    with LocalCluster(n_workers=2, threads_per_worker=1, processes=False, dashboard_address="127.0.0.1:0",
                      host="127.0.0.1", protocol="tcp") as cluster, Client(cluster) as client:
        yield cluster, Engine(client, "local", 2)


# --------------------------------------------------------------------------
# One vocabulary: the keys of every command's JSON are names of docs/glossary.md,
# and its CSV columns are that JSON flattened (trackplan.tables)
# --------------------------------------------------------------------------

#: JSON objects keyed by data (levels, inputs, sections, models), not by names: their keys are not vocabulary.
KEYED_BY_DATA = ("days_per_year", "heat_days_by_level", "drivers", "chart")


def glossary_names() -> set:
    """Every name written in code style in docs/glossary.md (the identifiers inside backticks)."""
    import re
    from pathlib import Path

    text = (Path(__file__).resolve().parents[1] / "docs" / "glossary.md").read_text(encoding="utf-8")
    names = set()
    for span in re.findall(r"`([^`]+)`", text):
        names.update(re.findall(r"[A-Za-z_][A-Za-z0-9_]*", span))
    return names


def keys_outside_glossary(obj, path: str = "", names: set | None = None) -> set:
    """The paths of the keys of a JSON object (at any depth) that docs/glossary.md does not name."""
    names = glossary_names() if names is None else names
    out = set()
    if isinstance(obj, dict):
        for k, v in obj.items():
            here = f"{path}.{k}" if path else k
            if k not in names and path.rsplit(".", 1)[-1] not in KEYED_BY_DATA:
                out.add(here)
            out |= keys_outside_glossary(v, here, names)
    elif isinstance(obj, list):
        for v in obj:
            out |= keys_outside_glossary(v, path + "[]", names)
    return out


def _warning_lists(obj):
    if isinstance(obj, dict):
        for k, v in obj.items():
            if k in ("warnings", "blocking"):
                yield v
            yield from _warning_lists(v)
    elif isinstance(obj, list):
        for v in obj:
            yield from _warning_lists(v)


def assert_glossary_keys(obj) -> None:
    """Fail naming every key of ``obj`` that docs/glossary.md does not name; and every warning must be an
    object with a stable code (trackplan.notices.to_json), at any depth."""
    from trackplan import notices

    missing = keys_outside_glossary(obj)
    assert not missing, f"JSON keys not in docs/glossary.md: {sorted(missing)}"
    for ws in _warning_lists(obj):
        assert all(isinstance(w, dict) and set(w) == {"code", "message", "where"} and w["code"] in notices.CODES
                   for w in ws), ws


def assert_csv_is_flat_json(csv_path, objs: list[dict], names: dict | None = None, leave_out=None,
                            aliases: dict | None = None, by_section: bool = False) -> None:
    """The CSV's columns are the flattened keys of the command's JSON objects ``objs`` (trackplan.tables,
    with the command's ``names`` and ``leave_out``), in order, and each cell holds the JSON's value (numbers
    to the CSV's rounding). ``aliases``: earlier column names kept after them (old -> JSON name)."""
    import math

    import pandas as pd

    from trackplan import tables

    rows = [tables.flat_row(o, names, tables.LEAVE_OUT if leave_out is None else leave_out) for o in objs]
    rows = [{**r, **{old: r[new] for old, new in (aliases or {}).items()}} for r in rows]
    df = pd.read_csv(csv_path, comment="#", keep_default_na=False, dtype=str)
    assert rows, "no JSON rows to compare"
    columns = tables.columns_of(rows)
    if by_section:  # the same sections, another order (a run ranked otherwise)
        rows = sorted(rows, key=lambda r: r["section"])
        df = df.sort_values("section", kind="stable")
    assert list(df.columns) == columns, (list(df.columns), columns)
    assert len(df) == len(rows)
    for (_, got), want in zip(df.iterrows(), rows):
        for col in columns:
            v = want.get(col)
            cell = got[col]
            if v is None or (isinstance(v, float) and not math.isfinite(v)):
                assert cell == "", (col, cell)
            elif isinstance(v, bool):
                assert cell == str(v), (col, cell, v)
            elif isinstance(v, (int, float)):
                assert float(cell) == pytest.approx(v, rel=1e-3, abs=0.051), (col, cell, v)
            else:
                assert cell.lstrip("'") == str(v), (col, cell, v)


@pytest.fixture
def vocabulary():
    """The checks of one vocabulary: ``.assert_glossary_keys(json)``, ``.assert_csv_is_flat_json(...)``."""
    from types import SimpleNamespace

    return SimpleNamespace(assert_glossary_keys=assert_glossary_keys, assert_csv_is_flat_json=assert_csv_is_flat_json)
