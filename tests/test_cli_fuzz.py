"""Fuzz the command line: hypothesis draws argument vectors of every command, valid and malformed.

Contract checked (DESIGN.md, "Regimes and limits"; issue 10): every vector ends
with exit code 0, or 2 with exactly one ``Error: ...`` line on stderr and no
traceback — never an internal error (1), a MemoryError, OverflowError or
RecursionError, nor a native abort.

The vectors run in-process through typer's ``CliRunner``, in batches, each in
a child process whose address space is capped (``RLIMIT_AS``) and whose work
limits are small (``ENUMERATOR_MAX_MEMORY``, ``ENUMERATOR_MAX_SECONDS``), so a
runaway allocation fails the child (and the test) instead of the machine.  The
child reports each vector before running it, so a vector that kills the child
is named in the failure.
"""

from __future__ import annotations

import json
import os
import random
import subprocess
import sys
from pathlib import Path

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

ROOT = Path(__file__).resolve().parent.parent

#: Address-space cap of a batch child (numpy, FLINT and SymPy alone reserve a few hundred MB).
ADDRESS_SPACE = 3 * 2 ** 30

_CHILD = r"""
import json, resource, sys
cap = int(sys.argv[1])
resource.setrlimit(resource.RLIMIT_AS, (cap, cap))
from typer.testing import CliRunner
from enumerator.cli import app
runner = CliRunner()
for line in sys.stdin:
    argv = json.loads(line)
    print(json.dumps({"start": argv}), flush=True)
    result = runner.invoke(app, argv)
    stderr = result.stderr
    exc = result.exception
    if exc is not None and not isinstance(exc, SystemExit):
        stderr += f" [exception escaped: {type(exc).__name__}: {exc}]"
    print(json.dumps({"argv": argv, "code": result.exit_code, "stderr": stderr[-2000:]}), flush=True)
"""

def mix(good, bad, share: float = 0.15):
    """Mostly well-formed values (so the vectors reach the library), a malformed one with chance *share*.

    (``one_of`` and drawn floats lean towards their boundaries, which makes
    nearly every vector malformed somewhere; a uniform number from a drawn
    seed keeps the share.)
    """
    return st.tuples(st.integers(0, 2 ** 32 - 1), good, bad).map(
        lambda t: t[2] if random.Random(t[0]).random() < share else t[1])


COUNTS = mix(st.integers(0, 12).map(str),
             st.sampled_from(["0", "1", "-1", "", " 7 ", "3.5", "1e999999999", "2**64", "18446744073709551616",
                              "340282366920938463463374607431768211456", "9" * 60, "9" * 5000, "0x10",
                              "1_000"]))
BIG_COUNTS = st.one_of(COUNTS, st.sampled_from(["100000", "1000000000", "4294967296", "18446744073709551616",
                                                "340282366920938463463374607431768211456"]))
RULES = mix(st.sampled_from(["MB", "BE", "FD", "be"]), st.sampled_from(["xx", ""]))
BOUND_ITEMS = mix(st.sampled_from(["0:2", "1:", "0:", "3", "0:3", "1000x0:3", "2x1:", "2x0:2",
                                   "18446744073709551616x0:2", "4294967296x0:1"]),
                  st.sampled_from(["2:1", "0x1:", "x:", "1e9x0:", ":::", "", "3x", "-1:2",
                                   "2x1:9999999999999999999999"]))
BOUNDS = st.lists(BOUND_ITEMS, min_size=1, max_size=4).map(",".join)
WEIGHT_ITEMS = mix(st.sampled_from(["1", "2", "1/3", "0.25", "365x400", "97", "3x2", "2x1/5",
                                    "18446744073709551616x1", "3x1/2"]),
                   st.sampled_from(["0", "-1", "1/0", "2x", "x3", "1e999999999", ""]))
WEIGHTS = st.lists(WEIGHT_ITEMS, min_size=1, max_size=4).map(",".join)
EVENTS = mix(st.sampled_from(["max <= 1", "max >= 2", "max >= 3", "empty == 3", "k1 >= 1 and not empty == 2",
                              "count(== 2) >= 1", "occupied > 2 or min == 0", "not not not max < 3",
                              "count(>= 2) <= 1", "(" * 400 + "max <= 1" + ")" * 400,
                              "max >= 99999999999999999999", "k18446744073709551617 >= 1"]),
             st.sampled_from(["((((", "", "max <= 1e999999999", "k0 == 1", "max <=", "1 <= max",
                              "min >= 1 and", "(" * 5000 + "max <= 1" + ")" * 5000]))
STATS = mix(st.sampled_from(["empty", "occupied", "max", "min", "urn:1", "exactly:2", "atleast:1", "profile"]),
            st.sampled_from(["urn:0", "urn:99999999999999999999", "atleast:1e9", "bogus", ""]))
UPTO = mix(st.sampled_from(["0", "5", "30", "3", "12", "1000000000", "99999999999", "100000000"]),
           st.sampled_from(["-1", "1e9", ""]))
EXPRESSIONS = mix(st.sampled_from(["1/(1-x)", "1/(1 - x - x^2)", "(1+x)^5", "(1+x)^99999999999", "1/(3 - x)",
                                   "(" * 400 + "x" + ")" * 400, "1/((1-x)(1-x^2))", "(1-x)^-1000000000"]),
                  st.sampled_from(["x^-1", "1/0", "exp(x)", "", "x**x", "(((", "x" * 100000]))
TARGETS = mix(st.sampled_from(["0.5", "1/2", "1e-6", "0.999", "0.9", "1/10", "1"]),
              st.sampled_from(["2", "0", "-1", "abc", "1e-9999", ""]))

ENERGIES = mix(st.sampled_from(["0,1,2,3", "0,1/2,3/2", "0,1", "-1,0,2", "0,0.25,1"]),
               st.sampled_from(["0,1e400", "", "0,a", "1/0", "0,1e99999999", "0," + "9" * 5000]))
TEMPERATURES = mix(st.sampled_from(["1", "0.5,2", "0.1..3:4", "1..3", "0.5..4:3:log", "10", "1e-6", "1e300"]),
                   st.sampled_from(["0", "-1", "", "1e-400", "1e99999999", "1..", "3..1:2", "0.5..0.6"]))
FACTORS = mix(st.sampled_from(["1/2", "2/3", "1/10"]), st.sampled_from(["1", "0", "2", "-1/2", "1e-99999999"]))


def _levels_argv(draw):
    args = ["levels"]
    if draw(st.booleans()):
        args += ["--preset", draw(mix(st.sampled_from(["harmonic", "trap", "two-level"]), st.just("nope")))]
    else:
        args += ["--energies", draw(ENERGIES)]
        if draw(st.booleans()):
            args += ["--degeneracies", draw(mix(st.sampled_from(["1,2,3,4", "1,1", "2,2,2"]),
                                                st.sampled_from(["0,1", "-1", "a"])))]
    args += ["--particles", draw(COUNTS), "--rule", draw(RULES)]
    what = draw(st.sampled_from(["temperatures", "temperatures", "factor", "max-energy"]))
    if what == "temperatures":
        args += ["--temperatures", draw(TEMPERATURES)]
    elif what == "factor":
        args += ["--factor", draw(FACTORS)]
    else:
        args += ["--max-energy", draw(mix(st.sampled_from(["6", "20", "7/2"]),
                                          st.sampled_from(["-1", "1e400", "99999999999999999999", ""])))]
    args += draw(st.sampled_from([[], ["--occupation-law", "0"], ["--report-levels", draw(COUNTS)],
                                  ["--digits", draw(mix(st.sampled_from(["10", "30"]), st.sampled_from(["2", "99999"])))],
                                  ["--route", draw(st.sampled_from(["auto", "float", "particle-hole", "nope"]))],
                                  ["--processes", draw(COUNTS)]]))
    return args + ["--json"]


def _contact_argv(draw):
    args = ["contact"]
    for side in ("a", "b"):
        if draw(st.booleans()):
            args += [f"--oscillators-{side}", draw(COUNTS)]
        else:
            args += [f"--energies-{side}", draw(ENERGIES), f"--particles-{side}", draw(COUNTS)]
    if draw(st.booleans()):
        args += ["--quanta", draw(COUNTS)]
    else:
        args += ["--energy", draw(mix(st.sampled_from(["3", "5/2", "0"]), st.sampled_from(["-1", "1e400", "x"])))]
    args += draw(st.sampled_from([[], ["--summary"], ["--splits", "1..3"], ["--splits", "2"], ["--splits", "9..1"]]))
    return args + ["--json"]


def _compare_argv(draw):
    name = draw(mix(st.sampled_from(["birthday", "empty-mean", "poisson", "normal", "stirling1", "saddle",
                                     "boltzmann", "entropy", "birthday,empty-mean"]), st.just("nope")))
    args = ["compare", name]
    if draw(st.booleans()):
        args += ["--vary", draw(mix(st.sampled_from(["balls=10..40", "balls=2..200", "at=0..2"]),
                                    st.sampled_from(["balls=5..1", "x=1..2", "balls=..3"]))),
                 "--urns", draw(mix(st.sampled_from(["balls", "balls//2", "balls*balls", "7"]),
                                    st.sampled_from(["balls-100", "(" * 200 + "balls" + ")" * 200, "balls/0"])))]
        if "at=" in args[-3]:
            args += ["--balls", "30"]
    else:
        args += ["--balls", draw(COUNTS), "--urns", draw(COUNTS)]
    return args + ["--no-cache", "--json"]


def _model_options(draw, *, need_urns=True):
    args = ["-n", draw(COUNTS)]
    choice = draw(mix(st.sampled_from(["urns", "urns", "bounds", "weights", "both", "capacity"]), st.just("none")))
    if choice in ("urns", "capacity", "both") or (choice == "none" and not need_urns):
        args += ["-r", draw(BIG_COUNTS)]
    if choice in ("bounds",):
        args += ["--bounds", draw(BOUNDS)]
    if choice in ("weights", "both"):
        args += ["--weights", draw(WEIGHTS)]
    if choice == "capacity":
        args += ["--capacity", draw(COUNTS)]
        if draw(st.booleans()):
            args += ["--minimum", draw(COUNTS)]
    if draw(st.booleans()):
        args += ["--rule", draw(RULES)]
    return args


@st.composite
def argvs(draw):
    command = draw(mix(st.sampled_from(["count", "prob", "dist", "list", "gf", "coeff", "sample", "ways",
                                        "threshold", "levels", "contact", "compare"]), st.just("bogus")))
    if command == "levels":
        return _levels_argv(draw)
    if command == "contact":
        return _contact_argv(draw)
    if command == "compare":
        return _compare_argv(draw)
    if command == "count":
        return ["count", *_model_options(draw), "--no-cache"] + draw(st.sampled_from([[], ["--json"]]))
    if command == "prob":
        which = draw(st.sampled_from(["event", "event", "config", "both"]))
        extra = []
        if which in ("event", "both"):
            extra += ["--event", draw(EVENTS)]
        if which in ("config", "both"):
            extra += ["--config", draw(mix(st.sampled_from(["1,1", "2,0,1", "0", "1,0,0,1"]),
                                           st.sampled_from(["-1,4", "a,b", "9" * 40 + ",0", ""])))]
        return ["prob", *_model_options(draw), *extra, "--no-cache", "--json"]
    if command == "dist":
        extra = draw(st.sampled_from([[], ["--moments-only"], ["--limit", "10"], ["--limit", "0"]]))
        return ["dist", *_model_options(draw), "--stat", draw(STATS), *extra, "--no-cache", "--json"]
    if command == "list":
        extra = draw(st.sampled_from([[], ["--limit", "5"], ["--start", "3", "--stop", "6"],
                                      ["--start", "99999999999999999999999"], ["--sparse", "--limit", "4"],
                                      ["--limit", "-1"]]))
        return ["list", *_model_options(draw), *extra] + draw(st.sampled_from([[], ["--json"],
                                                                                ["--format", "jsonl"]]))
    if command == "gf":
        extra = draw(st.sampled_from([[], ["--upto", draw(UPTO)], ["--mark", "empty"], ["--mark", "nope"]]))
        return ["gf", *_model_options(draw), *extra, "--no-cache", "--json"]
    if command == "coeff":
        return ["coeff", draw(EXPRESSIONS), "--upto", draw(UPTO), "--json"]
    if command == "sample":
        extra = draw(st.sampled_from([[], ["--sparse"], ["--method", "subset"], ["--method", "nope"]]))
        return ["sample", *_model_options(draw), "--size", draw(mix(st.sampled_from(["3", "5", "0"]),
                                                                    st.sampled_from(["-2", "1e9"]))),
                "--seed", "1", *extra]
    if command == "ways":
        return ["ways", "-n", draw(COUNTS), "-r", draw(COUNTS), "--json"]
    if command == "threshold":
        vary = draw(mix(st.sampled_from(["balls", "urns"]), st.sampled_from(["both", "nope"])))
        model = _model_options(draw, need_urns=False)
        if vary == "balls" and draw(st.booleans()):
            model = model[2:]  # the balls are not needed when they vary
        return ["threshold", "--vary", vary, *model, "--event", draw(EVENTS), "--target", draw(TARGETS),
                "--json"]
    return ["bogus", "--json"]


def _run_batch(batch, tmp_path):
    env = dict(os.environ)
    env.update({
        "ENUMERATOR_MAX_MEMORY": "512M",
        "ENUMERATOR_MAX_SECONDS": "5",
        "ENUMERATOR_NO_CACHE": "1",
        "ENUMERATOR_STORE": str(tmp_path / "fuzz.sqlite"),
        "PYTHONPATH": str(ROOT) + os.pathsep + env.get("PYTHONPATH", ""),
    })
    env.pop("ENUMERATOR_DEBUG", None)
    feed = "".join(json.dumps(argv) + "\n" for argv in batch)
    proc = subprocess.run([sys.executable, "-c", _CHILD, str(ADDRESS_SPACE)], input=feed, env=env,
                          capture_output=True, text=True, cwd=str(ROOT), timeout=900)
    records = [json.loads(line) for line in proc.stdout.splitlines() if line.startswith("{")]
    finished = [r for r in records if "code" in r]
    started = [r["start"] for r in records if "start" in r]
    assert proc.returncode == 0 and len(finished) == len(batch), (
        f"the batch child died (exit {proc.returncode}) while running {started[-1] if started else None}: "
        f"{proc.stderr[-1500:]}"
    )
    return finished


@settings(max_examples=3, deadline=None, derandomize=True, database=None,
          suppress_health_check=[HealthCheck.function_scoped_fixture, HealthCheck.too_slow,
                                 HealthCheck.data_too_large])
@given(batch=st.lists(argvs(), min_size=25, max_size=25))
def test_every_argument_vector_exits_0_or_2_with_one_line(batch, tmp_path):
    for record in _run_batch(batch, tmp_path):
        argv, code, stderr = record["argv"], record["code"], record["stderr"]
        assert code in (0, 2), f"{argv}: exit {code}: {stderr}"
        assert "Traceback" not in stderr and "exception escaped" not in stderr, f"{argv}: {stderr}"
        if code == 2:
            lines = stderr.strip().splitlines()
            assert len(lines) == 1 and lines[0].startswith("Error: "), f"{argv}: {stderr!r}"
