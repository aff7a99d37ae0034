"""Shared helpers of the CLI test modules: invoke the app in-process, read
its one JSON object, and check the one-line error contract."""

from __future__ import annotations

import json

from typer.testing import CliRunner

from enumerator.cli import app

runner = CliRunner()


def run(*args, env=None):
    """Invoke the CLI in-process and return the result."""
    return runner.invoke(app, [str(a) for a in args], env=env)


def run_json(*args) -> dict:
    """Run with ``--json``; it must succeed and print exactly one line holding one object."""
    result = run(*args, "--json")
    assert result.exit_code == 0, result.output
    lines = result.stdout.splitlines()
    assert len(lines) == 1, "--json prints exactly one line holding one object"
    payload = json.loads(lines[0])
    assert isinstance(payload, dict)
    return payload


def one_line_error(result, code: int = 2, quiet_stdout: bool = True) -> str:
    """Assert the error contract (exit *code*, one ``Error: ...`` line, no traceback); return the line.

    *quiet_stdout* also requires that nothing reached stdout (commands that
    report progress before failing pass False).
    """
    assert result.exit_code == code, result.output
    if quiet_stdout:
        assert result.stdout == ""
    lines = result.stderr.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("Error: "), result.stderr
    assert "Traceback" not in result.output
    return lines[0]
