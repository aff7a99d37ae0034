"""Paths the user gives (--plot, --output-dir) are checked before any work; a closed pipe ends quietly.

Facts of the trade (common practice): a file cannot be created in a missing
folder or under a regular file, matplotlib writes only the formats it lists,
and a reader such as ``head`` that stops early closes the pipe (SIGPIPE/EPIPE),
which a well-behaved filter treats as success.
"""

import os
import subprocess
import sys

import pytest
from cli_helpers import one_line_error, run


def test_output_dir_that_is_a_file_is_refused(tmp_path):
    target = tmp_path / "afile"
    target.write_text("")
    message = one_line_error(run("list", "-n", "3", "-r", "3", "--output-dir", str(target)))
    assert "is a file, not a folder" in message


def test_output_dir_under_a_missing_folder_is_refused(tmp_path):
    message = one_line_error(run("list", "-n", "3", "-r", "3", "--output-dir", str(tmp_path / "no" / "such")))
    assert "not an existing folder" in message


def test_output_dir_is_created_in_a_writable_folder(tmp_path):
    result = run("list", "-n", "3", "-r", "3", "--output-dir", str(tmp_path / "new"))
    assert result.exit_code == 0
    # C(3+3-1, 3) = 10 configurations, stars and bars (common practice)
    assert sum(1 for _ in (tmp_path / "new").glob("ranks-*.csv")) == 1


@pytest.mark.parametrize("command", [
    ["levels", "--particles", "3", "--preset", "harmonic", "--rule", "BE", "--temperatures", "1"],
    ["contact", "--oscillators-a", "3", "--oscillators-b", "3", "--quanta", "6"],
    ["compare", "birthday", "--balls", "23", "--urns", "365"],
])
def test_plot_paths_are_checked_before_the_work(tmp_path, command):
    pytest.importorskip("matplotlib")
    message = one_line_error(run(*command, "--plot", str(tmp_path / "x.txt")))
    assert "plot.png" in message
    message = one_line_error(run(*command, "--plot", str(tmp_path / "missing" / "x.png")))
    assert "not an existing folder" in message
    message = one_line_error(run(*command, "--plot", str(tmp_path)))
    assert "is a folder" in message


def test_a_reader_that_stops_early_is_not_a_failure():
    # the levels table is printed through rich, whose own broken-pipe handling exits 1
    reader = subprocess.Popen(["head", "-c", "10"], stdin=subprocess.PIPE, stdout=subprocess.DEVNULL)
    writer = subprocess.run(
        [sys.executable, "-m", "enumerator", "levels", "--particles", "3", "--preset", "harmonic", "--rule", "BE",
         "--temperatures", "1,2,3,4", "--report-levels", "40"],
        stdout=reader.stdin, stderr=subprocess.PIPE, env={**os.environ, "ENUMERATOR_NO_CACHE": "1"}, timeout=120,
    )
    reader.stdin.close()
    reader.wait()
    assert writer.returncode == 0, writer.stderr
    assert writer.stderr == b""
