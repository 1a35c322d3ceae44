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
