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
