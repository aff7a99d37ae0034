"""Benchmarks: enumerator against general-purpose peers, with every answer checked.

Usage::

    python scripts/bench.py                 # every workload, full repeats
    python scripts/bench.py --quick         # every workload in under a minute
    python scripts/bench.py --only NAME     # one workload (repeatable)
    python scripts/bench.py --list          # names and descriptions
    python scripts/bench.py --json FILE     # also write the results as JSON

Each workload runs enumerator and, in the same process and run, its peers
(plain gmpy2 formulas, python-flint ``fmpz_poly``, SymPy ``Poly``,
``itertools``), prints the best and median time of each method, the ratio
enumerator/peer and the fastest peer, and checks that every method returns the
same answer.  A disagreement prints a line starting ``MISMATCH`` and the script
exits with status 1 (an exception inside a workload prints ``ERROR`` and also
exits 1).  A compact table closes the run: workload, enumerator best, fastest
peer, ratio, target, met.  Targets are reported, never asserted.

Timing (``time.perf_counter``, garbage collector off while timing, as
``timeit`` does): one warm-up call gives the answer and a second one sets the
number of loops and samples.  Calls shorter than ``MIN_SAMPLE`` are looped so
a sample lasts about that long; the number of samples is chosen so one method
spends about its time budget (0.3 s with ``--quick``, 2 s otherwise), at
least 3.  A call longer than the budget gets one timed sample after the
warm-up, and one longer than 4 budgets (1 budget with ``--quick``) only the
warm-up itself (the output says so: first-call costs are then included).
Then enumerator and its fastest peer are timed again in turn (1 round with
``--quick``, 4 otherwise) and each keeps its best, because this machine's
speed drifts between phases; the ratio compares times taken side by side.
A peer that may be very slow is first run on scaled-down copies
of the instance (1/32, 1/16, ... of the size); when the extrapolated time
exceeds the per-call limit (3 s quick, 60 s full) it is skipped with a note
``skipped: too slow (>Ns)`` giving the estimate and the size it came from.
Otherwise its first full-size call runs in a forked child stopped at the
limit (the same note then says so); a call that long is timed once, there.
A skipped peer's answer is not checked, and the note says so.

The start-up workloads (``startup-*``) time whole processes instead: the
``enumerator`` console script against a Python one-liner that imports gmpy2
and prints one count, in interleaved rounds after two warm-up rounds (5
rounds with ``--quick``, 21 otherwise), with bytecode cached as an installed
package has it; their ratio is the ratio of the medians, since the fastest
of a few process starts is mostly luck.

Counts are measured cold: ``ENUMERATOR_NO_CACHE=1`` is set before enumerator
is imported, so the result store is bypassed (a workload that measures the
store turns it on for its own calls), and every count builds a fresh model
(the model memoises its own answers).  Memory is the peak resident set of a child process, read with
``os.wait4`` (the per-child form of ``getrusage(RUSAGE_CHILDREN)``).

Adding a workload
-----------------
Write a function that takes the :class:`Context` and returns a
:class:`Result`, usually through :meth:`Context.compare`, and register it with
the :func:`workload` decorator; nothing else needs to change (``--list``,
``--only``, the table, ``--json`` and the test pick it up)::

    @workload("be-closed-form", "BE configurations, n=5000 r=300, no bounds",
              target=faster_by(1))
    def _be_closed_form(ctx):
        return ctx.compare(
            Method("enumerator",
                   lambda: Occupancy(balls=5000, urns=300, rule="BE").configurations()),
            [Method("gmpy2 comb", lambda: gmpy2.comb(5299, 299))],
        )

A :class:`Method` may give ``scaled=`` (a function of the size fraction that
returns a call) so that a slow peer is estimated before it is run, ``check=``
(an untimed call returning the answer, when the timed call returns nothing)
and ``normalise=`` (maps the answer to plain ``int``/``Fraction``/tuples
before comparing).  ``compare(..., items=N)`` also prints rates in items/s.
A workload with no peer (e.g. "in seconds" figures) passes ``[]`` and
``target=None``.  Workloads that are not timings (memory) build the
:class:`Result` themselves; see :func:`_list_memory`.
"""

from __future__ import annotations

import argparse
import collections
import gc
import itertools
import json
import math
import os
import platform
import random
import re
import statistics
import subprocess
import sys
import time
import traceback
from dataclasses import asdict, dataclass, field
from fractions import Fraction
from pathlib import Path
from typing import Any, Callable, Dict, List, Optional, Sequence

# Cold measurements: the store (when present) must not answer from a cache.
os.environ["ENUMERATOR_NO_CACHE"] = "1"

ROOT = Path(__file__).resolve().parent.parent
if str(ROOT) not in sys.path:
    sys.path.insert(0, str(ROOT))

import gmpy2  # noqa: E402
from flint import fmpz, fmpz_poly  # noqa: E402

from enumerator import Occupancy  # noqa: E402

mpz = gmpy2.mpz
perf_counter = time.perf_counter

#: A sample of a fast call loops it until the sample lasts about this long.
MIN_SAMPLE = 2e-3


# ---------------------------------------------------------------------------
# registry
# ---------------------------------------------------------------------------

@dataclass
class Target:
    """A goal for a workload: ``value <= limit`` (``< limit`` if strict)."""

    text: str
    limit: float
    on: str = "ratio"  # "ratio": enumerator/fastest peer; "value": enumerator's own figure
    strict: bool = False

    def met(self, ratio: Optional[float], value: Optional[float]) -> Optional[bool]:
        x = ratio if self.on == "ratio" else value
        if x is None:
            return None
        return x < self.limit if self.strict else x <= self.limit


def faster_by(k: float) -> Target:
    """Enumerator at least *k* times faster than the fastest peer."""
    return Target(f"<={1 / k:.3g} (>={k:g}x faster)", 1 / k)


def at_most(k: float) -> Target:
    """Enumerator's time at most *k* times the fastest peer's."""
    return Target(f"<={k:g}", k)


def rate_at_least(k: float) -> Target:
    """Enumerator's rate (items/s) at least *k* times the fastest peer's."""
    return Target(f"<={1 / k:.3g} (rate >={k:g}x)", 1 / k)


def peak_below_mb(limit: float) -> Target:
    """Enumerator's peak resident memory below *limit* MB."""
    return Target(f"<{limit:g} MB peak", limit, on="value", strict=True)


@dataclass
class Workload:
    name: str
    description: str
    run: Callable[["Context"], "Result"]
    target: Optional[Target]


WORKLOADS: Dict[str, Workload] = {}


def workload(name: str, description: str, target: Optional[Target] = None):
    """Register a workload function ``f(ctx) -> Result`` under *name*."""
    def deco(fn):
        if name in WORKLOADS:
            raise ValueError(f"workload {name!r} registered twice")
        WORKLOADS[name] = Workload(name, description, fn, target)
        return fn
    return deco


# ---------------------------------------------------------------------------
# methods, measurements, results
# ---------------------------------------------------------------------------

def exact(value):
    """Map gmpy2/FLINT/numpy values to plain ``int``, ``Fraction`` and tuples."""
    if isinstance(value, (bool, str)) or value is None:
        return value
    if isinstance(value, Fraction):
        return value
    if isinstance(value, (int, type(mpz(0)), fmpz)):
        return int(value)
    if isinstance(value, type(gmpy2.mpq(0))):
        return Fraction(int(value.numerator), int(value.denominator))
    if isinstance(value, (tuple, list)):
        return tuple(exact(v) for v in value)
    if hasattr(value, "tolist"):  # numpy
        return exact(value.tolist())
    if hasattr(value, "__index__"):
        return int(value)
    return value


@dataclass
class Method:
    """One way of computing a workload's answer.

    ``run`` is timed; ``check`` (untimed, optional) returns the answer when
    ``run`` does not; ``scaled(s)`` returns a call on the instance shrunk to
    fraction ``s`` of its size, used to estimate a slow peer before running
    it; ``normalise`` maps the answer before comparison.
    """

    name: str
    run: Callable[[], Any]
    scaled: Optional[Callable[[float], Callable[[], Any]]] = None
    check: Optional[Callable[[], Any]] = None
    normalise: Callable[[Any], Any] = exact


@dataclass
class Measurement:
    method: str
    best: Optional[float] = None  # seconds per call (or MB for memory)
    median: Optional[float] = None
    samples: int = 0
    loops: int = 0  # calls per sample
    skipped: bool = False
    note: str = ""
    estimate: Optional[float] = None  # extrapolated seconds when skipped
    agrees: Optional[bool] = None
    answer: Any = field(default=None, repr=False)


@dataclass
class Result:
    name: str
    description: str
    enumerator: Measurement
    peers: List[Measurement]
    unit: str = "s"  # "s" or "MB"
    items: Optional[int] = None
    target: Optional[Target] = None
    notes: List[str] = field(default_factory=list)
    mismatches: List[str] = field(default_factory=list)
    error: Optional[str] = None

    @property
    def fastest(self) -> Optional[Measurement]:
        done = [m for m in self.peers if not m.skipped and m.best is not None]
        return min(done, key=lambda m: m.best) if done else None

    @property
    def ratio(self) -> Optional[float]:
        f = self.fastest
        if f is None or self.enumerator.best is None or not f.best:
            return None
        return self.enumerator.best / f.best

    @property
    def met(self) -> Optional[bool]:
        if self.target is None or self.error:
            return None
        return self.target.met(self.ratio, self.enumerator.best)


def _digits(value: int) -> str:
    # gmpy2 has no limit on decimal conversion (Python's int -> str stops at 4300 digits)
    return mpz(value).digits(10)


def describe(value) -> str:
    """A short description of an answer (digit count and last digits of big integers)."""
    if isinstance(value, int):
        text = _digits(abs(value))
        if len(text) <= 30:
            return str(value)
        return f"{len(text)}-digit integer ...{text[-8:]}"
    if isinstance(value, Fraction):
        return (f"fraction {describe(value.numerator)} / {describe(value.denominator)}"
                if value.denominator > 10 ** 30 else str(value))
    text = repr(value)
    return text if len(text) <= 100 else text[:97] + "..."


# ---------------------------------------------------------------------------
# the context: budgets and the timing loop
# ---------------------------------------------------------------------------

class Context:
    """Budgets for one run (``quick`` or full) and the measuring helpers."""

    def __init__(self, quick: bool):
        self.quick = quick
        self.time_budget = 0.3 if quick else 2.0  # seconds spent sampling one method
        self.call_limit = 3.0 if quick else 60.0  # longest single call of a peer
        self.max_samples = 7 if quick else 31
        self.interleaved_rounds = 1 if quick else 4

    # -- timing -----------------------------------------------------------
    def time(self, call: Callable[[], Any]) -> Measurement:
        """Time *call*; the warm-up call's return value is kept as the answer."""
        enabled = gc.isenabled()
        gc.disable()
        try:
            t = perf_counter()
            value = call()
            first = perf_counter() - t
            # --quick: a call longer than the budget is timed once (its first call)
            if first >= (1 if self.quick else 4) * self.time_budget:
                return Measurement("", first, first, 1, 1, answer=value,
                                   note="a single call: its time includes first-call costs")
            # the warm-up may be slow (lazy imports, one-time tables): calibrate on a second call
            t = perf_counter()
            call()
            first = perf_counter() - t
            if first >= self.time_budget:
                return Measurement("", first, first, 1, 1, answer=value)
            loops = max(1, math.ceil(MIN_SAMPLE / max(first, 1e-9)))
            count = int(self.time_budget / (max(first, 1e-9) * loops))
            count = max(3, min(self.max_samples, count))
            samples = []
            for _ in range(count):
                t = perf_counter()
                for _ in range(loops):
                    call()
                samples.append((perf_counter() - t) / loops)
        finally:
            if enabled:
                gc.enable()
        return Measurement("", min(samples), statistics.median(samples), count, loops, answer=value)

    def estimate(self, method: Method):
        """Run *method* on growing copies; return ``(fits, note, estimate)``.

        Sizes 1/32, 1/16, ... of the instance, one doubling at a time.  The
        time at full size is extrapolated with the steepest growth per
        doubling seen between runs of at least 10 ms (shorter ones jitter on
        a busy machine), at least 2 (the answer grows at least linearly) and
        taken as 4 until measured.  The ladder climbs to half the size (about
        as much work again as the full call, when the cost is at least
        linear) unless it stops, skipping the peer, because the next doubling
        is expected to pass the limit.  The caller still runs the full size
        under a time limit, since extrapolation can miss either way.
        """
        limit = self.call_limit
        previous = None
        measured = False
        steepest = 4.0  # until measured: the answer's length and the work per coefficient both grow
        s = 1 / 32
        while s < 1:
            call = method.scaled(s)
            t = perf_counter()
            call()
            dt = perf_counter() - t
            doublings = math.log2(1 / s)
            if previous is not None and previous >= 1e-2:  # shorter runs jitter too much
                steepest = max(2.0, dt / previous) if not measured else max(steepest, dt / previous)
                measured = True
            growth = steepest
            full = dt * growth ** doublings
            if dt > limit or (previous is not None and dt * growth > limit):
                bound = "" if previous is not None else "at least "
                note = (f"skipped: too slow (>{limit:g}s): estimated {bound}{fmt_time(full)} "
                        f"at full size from {fmt_time(dt)} at 1/{round(1 / s)} size")
                return False, note, full
            previous = dt
            s *= 2
        return True, "", full

    def measure(self, method: Method, guard: bool) -> Measurement:
        if guard and method.scaled is not None:
            fits, note, est = self.estimate(method)
            if not fits:
                return Measurement(method.name, skipped=True, note=note, estimate=est)
            # Extrapolation can be wrong both ways: the first full-size call
            # runs in a forked child that is stopped at the per-call limit.
            status, seconds, answer = run_forked(lambda: method.normalise(method.run()), self.call_limit)
            if status == "timeout":
                note = f"skipped: too slow (>{self.call_limit:g}s): stopped at the limit"
                if est is not None:
                    note += f" (extrapolated {fmt_time(est)} from smaller sizes)"
                return Measurement(method.name, skipped=True, note=note, estimate=self.call_limit)
            if status == "ok" and seconds >= self.time_budget and method.check is None:
                return Measurement(method.name, seconds, seconds, 1, 1, answer=answer,
                                   note="one call, timed in a forked child")
        m = self.time(method.run)
        m.method = method.name
        if method.check is not None:
            m.answer = method.check()
        m.answer = method.normalise(m.answer)
        return m

    # -- the usual workload shape ---------------------------------------
    def compare(self, enumerator: Method, peers: List[Method], *, items: Optional[int] = None,
                notes: Optional[List[str]] = None) -> Result:
        """Time enumerator and each peer, check the answers, return the Result."""
        ours = self.measure(enumerator, guard=False)
        ours.agrees = True
        done = []
        result = Result("", "", ours, done, items=items, notes=list(notes or []))
        for peer in peers:
            m = self.measure(peer, guard=True)
            if not m.skipped:
                m.agrees = m.answer == ours.answer
                if not m.agrees:
                    result.mismatches.append(
                        f"{peer.name} returned {describe(m.answer)}, enumerator {describe(ours.answer)}"
                    )
            else:
                m.note += "; answer not checked"
            done.append(m)
        fastest = result.fastest
        if fastest is not None and ours.samples > 1 and fastest.samples > 1:
            # Interleaved rounds: this machine's speed drifts between phases,
            # so enumerator and its fastest peer are timed again in turn and
            # each keeps its best; the ratio then compares like with like.
            runs = {id(ours): enumerator.run, id(fastest): next(p.run for p in peers if p.name == fastest.method)}
            for _ in range(self.interleaved_rounds):
                for m in (ours, fastest):
                    again = self.time(runs[id(m)])
                    m.best = min(m.best, again.best)
                    m.samples += again.samples
            result.notes.append(f"best times include {self.interleaved_rounds} interleaved rounds of "
                                f"enumerator and {fastest.method}")
        for m in done:
            if m.skipped and m.estimate is not None and fastest is not None and m.estimate < fastest.best:
                result.notes.append(f"{m.method} was skipped although its estimate is below the "
                                    "fastest measured peer; the ratio may flatter enumerator")
        return result


def run_forked(call: Callable[[], Any], limit: float):
    """Run *call* once in a forked child, stopped after *limit* seconds.

    Returns ``("ok", seconds, answer)``, ``("timeout", None, None)``, or
    ``("unavailable", None, None)`` where ``os.fork`` does not exist or the
    child failed (the caller then runs the call in process, where an error
    shows with its traceback).  The answer comes back pickled through a pipe.
    """
    if not hasattr(os, "fork"):
        return "unavailable", None, None
    import pickle
    import select
    import signal

    read_end, write_end = os.pipe()
    sys.stdout.flush()
    pid = os.fork()
    if pid == 0:  # child
        code = 1
        try:
            os.close(read_end)
            gc.disable()
            t = perf_counter()
            answer = call()
            seconds = perf_counter() - t
            data = pickle.dumps((seconds, answer))
            with os.fdopen(write_end, "wb") as out:
                out.write(data)
            code = 0
        finally:
            os._exit(code)
    os.close(write_end)
    chunks = []
    deadline = perf_counter() + limit
    timed_out = False
    with os.fdopen(read_end, "rb") as pipe:
        while True:
            left = deadline - perf_counter()
            if left <= 0:
                timed_out = True
                break
            ready, _, _ = select.select([pipe], [], [], left)
            if not ready:
                continue
            chunk = os.read(pipe.fileno(), 1 << 20)
            if not chunk:
                break
            chunks.append(chunk)
    if timed_out:
        os.kill(pid, signal.SIGKILL)
    _, status = os.waitpid(pid, 0)
    if timed_out:
        return "timeout", None, None
    if os.waitstatus_to_exitcode(status) != 0 or not chunks:
        return "unavailable", None, None
    seconds, answer = pickle.loads(b"".join(chunks))
    return "ok", seconds, answer


# ---------------------------------------------------------------------------
# formatting
# ---------------------------------------------------------------------------

def fmt_time(seconds: Optional[float]) -> str:
    if seconds is None:
        return "-"
    for unit, scale in (("s", 1.0), ("ms", 1e-3), ("us", 1e-6)):
        if seconds >= scale:
            return f"{seconds / scale:.3g} {unit}"
    return f"{seconds / 1e-9:.3g} ns"


def fmt_value(value: Optional[float], unit: str) -> str:
    if unit == "MB":
        return "-" if value is None else f"{value:.1f} MB"
    return fmt_time(value)


def fmt_rate(items: int, seconds: Optional[float]) -> str:
    if not seconds:
        return "-"
    rate = items / seconds
    return f"{rate / 1e6:.3g} M/s" if rate >= 1e6 else f"{rate / 1e3:.3g} k/s"


def print_result(result: Result) -> None:
    print(f"\n== {result.name}: {result.description}")
    if result.error:
        print("  ERROR: " + result.error.rstrip().replace("\n", "\n  "))
        return
    rows = [result.enumerator] + result.peers
    width = max(len(m.method) for m in rows) + 2
    extra = "  rate" if result.items else ""
    print(f"  {'method':<{width}}{'best':>11}{'median':>11}{'samples':>9}{'enum/this':>11}  agrees{extra}")
    for m in rows:
        if m.skipped:
            print(f"  {m.method:<{width}}{m.note}")
            continue
        reps = f"{m.samples}x{m.loops}" if m.loops > 1 else str(m.samples)
        agree = "yes" if m.agrees else ("-" if m.agrees is None else "NO")
        rate = f"  {fmt_rate(result.items, m.best)}" if result.items else ""
        ours = result.enumerator.best
        ratio = "" if m is result.enumerator or not m.best or ours is None else f"{ours / m.best:.3g}"
        print(f"  {m.method:<{width}}{fmt_value(m.best, result.unit):>11}"
              f"{fmt_value(m.median, result.unit):>11}{reps:>9}{ratio:>11}  {agree:<6}{rate}")
        if m.note:
            print(f"  {'':<{width}}({m.note})")
    fastest, ratio = result.fastest, result.ratio
    if fastest is not None and ratio is not None:
        if result.unit == "s":
            speed = f"enumerator {1 / ratio:.3g}x faster" if ratio < 1 else f"enumerator {ratio:.3g}x slower"
        else:
            speed = "ratio of peaks"
        label = "fastest peer" if result.unit == "s" else "leanest peer"
        line = f"  {label}: {fastest.method}; enumerator/peer = {ratio:.3g} ({speed})"
    else:
        line = "  no peer measured"
    if result.target is not None:
        met = result.met
        line += f"; target {result.target.text}: {'met' if met else ('not met' if met is False else '-')}"
    print(line)
    for note in result.notes:
        print(f"  note: {note}")
    for text in result.mismatches:
        print(f"  MISMATCH: {text}")
    if not result.mismatches:
        print(f"  answer: {describe(result.enumerator.answer)}; every measured method agrees")


def print_table(results: List[Result]) -> None:
    head = ("workload", "enumerator", "fastest peer (best)", "ratio", "target", "met")
    rows = []
    for r in results:
        if r.error:
            rows.append((r.name, "ERROR", "-", "-", r.target.text if r.target else "-", "-"))
            continue
        f = r.fastest
        peer = f"{f.method} {fmt_value(f.best, r.unit)}" if f else "-"
        ratio = "-" if r.ratio is None else f"{r.ratio:.3g}"
        met = {True: "yes", False: "no", None: "-"}[r.met]
        if r.mismatches:
            met += " (MISMATCH)"
        rows.append((r.name, fmt_value(r.enumerator.best, r.unit), peer, ratio,
                     r.target.text if r.target else "-", met))
    widths = [max(len(str(x[i])) for x in rows + [head]) for i in range(len(head))]
    print("\nSummary (ratio = enumerator / fastest peer; lower is better for enumerator)")
    for line in [head, tuple("-" * w for w in widths)] + rows:
        print("  " + "  ".join(str(x).ljust(w) for x, w in zip(line, widths)).rstrip())


def sympy_ground_types() -> str:
    """Which integer arithmetic SymPy's ``Poly`` runs on (``flint`` when python-flint is used)."""
    try:
        from sympy.external.gmpy import GROUND_TYPES
    except ImportError:  # older SymPy
        return "unknown"
    return GROUND_TYPES


def environment() -> Dict[str, str]:
    import flint
    import numpy
    import sympy
    return {
        "python": platform.python_version(),
        "platform": platform.platform(),
        "cpus": str(os.cpu_count()),
        "gmpy2": gmpy2.version(),
        "python-flint": flint.__version__,
        "sympy": f"{sympy.__version__} (ground types {sympy_ground_types()})",
        "numpy": numpy.__version__,
    }


# ---------------------------------------------------------------------------
# peers: plain general-purpose routes, written the way a user would
# ---------------------------------------------------------------------------

def ie_gmpy2(n: int, r: int, c: int):
    """``sum_j (-1)^j C(r, j) C(n - j(c+1) + r - 1, r - 1)``, every binomial by ``gmpy2.comb``."""
    s = c + 1
    total = mpz(0)
    comb = gmpy2.comb
    for j in range(min(r, n // s) + 1):
        term = comb(r, j) * comb(n - j * s + r - 1, r - 1)
        total = total - term if j & 1 else total + term
    return total


def flint_power_coeff(n: int, r: int, c: int):
    """``[x^n] (1 + x + ... + x^c)^r`` by FLINT's full power."""
    return (fmpz_poly([1] * (c + 1)) ** r)[n]


def flint_pow_trunc_coeff(n: int, r: int, c: int):
    """``[x^n] (1 + x + ... + x^c)^r`` by FLINT's truncated power."""
    return fmpz_poly([1] * (c + 1)).pow_trunc(r, n + 1)[n]


def sympy_power_coeff(n: int, r: int, c: int):
    """``[x^n] (1 + x + ... + x^c)^r`` by SymPy ``Poly`` power."""
    from sympy import ZZ, Poly, Symbol
    return (Poly([1] * (c + 1), Symbol("x"), domain=ZZ) ** r).nth(n)


def flint_tree_coeff(uppers: List[int], n: int):
    """``[x^n] prod_i (1 + ... + x^{b_i})`` by a balanced product tree, truncated (FLINT ``mul_low``)."""
    items = [fmpz_poly([1] * (b + 1)) for b in uppers]
    length = n + 1
    while len(items) > 1:
        nxt = [items[i].mul_low(items[i + 1], length) for i in range(0, len(items) - 1, 2)]
        if len(items) % 2:
            nxt.append(items[-1])
        items = nxt
    return items[0][n]


def sympy_tree_coeff(uppers: List[int], n: int):
    """``[x^n] prod_i (1 + ... + x^{b_i})`` by a balanced product tree of SymPy ``Poly``."""
    from sympy import ZZ, Poly, Symbol
    x = Symbol("x")
    items = [Poly([1] * (b + 1), x, domain=ZZ) for b in uppers]
    while len(items) > 1:
        nxt = [items[i] * items[i + 1] for i in range(0, len(items) - 1, 2)]
        if len(items) % 2:
            nxt.append(items[-1])
        items = nxt
    return items[0].nth(n)


def _scaled_window(c: int, r: int, n: int, how: str):
    """``n! [x^n] (sum_{k<=c} x^k/k!)^r`` via the integer polynomial ``sum (c!/k!) x^k``."""
    fac = gmpy2.fac
    coeffs = [int(fac(c) // fac(k)) for k in range(c + 1)]
    if how == "flint":
        coef = (fmpz_poly(coeffs) ** r)[n]
    elif how == "flint-trunc":
        coef = fmpz_poly(coeffs).pow_trunc(r, n + 1)[n]
    else:
        from sympy import ZZ, Poly, Symbol
        coef = (Poly(coeffs[::-1], Symbol("x"), domain=ZZ) ** r).nth(n)
    return gmpy2.divexact(mpz(int(coef)) * fac(n), fac(c) ** r)


def multinomial_probability_gmpy2(k, r: int):
    """``prod_i C(k_1+...+k_i, k_i) / r^n`` as a ``gmpy2.mpq`` (reduced by GMP)."""
    num = mpz(1)
    s = 0
    comb = gmpy2.comb
    for v in k:
        s += v
        num *= comb(s, v)
    return gmpy2.mpq(num, mpz(r) ** s)


def multinomial_probability_stdlib(k, r: int):
    """``prod_i C(k_1+...+k_i, k_i) / r^n`` with ``math.comb`` and ``fractions.Fraction``."""
    num = 1
    s = 0
    for v in k:
        s += v
        num *= math.comb(s, v)
    return Fraction(num, r ** s)


def occupancy_of(indices, r: int):
    """The occupancy vector of a sorted tuple of urn indices (a cwr item)."""
    k = [0] * r
    for i in indices:
        k[i] += 1
    return tuple(k)


def first_last_count(iterator):
    """``(count, first, last)`` of an iterator, consumed at C speed."""
    first = next(iterator, None)
    if first is None:
        return 0, None, None
    tail = collections.deque(zip(iterator, itertools.count(2)), maxlen=1)
    if not tail:
        return 1, first, first
    last, count = tail[0]
    return count, first, last


def _scale(value: int, s: float) -> int:
    return max(1, round(value * s))


# ---------------------------------------------------------------------------
# workloads
# ---------------------------------------------------------------------------

def _capacity_count(ctx: Context, n: int, r: int, c: int) -> Result:
    def ours():
        return Occupancy(balls=n, urns=r, rule="BE", capacity=c).configurations()

    def peer(name, fn):
        return Method(name, lambda: fn(n, r, c),
                      scaled=lambda s: (lambda: fn(_scale(n, s), _scale(r, s), c)))

    return ctx.compare(
        Method("enumerator", ours),
        [peer("gmpy2 inclusion-exclusion", ie_gmpy2),
         peer("flint fmpz_poly power", flint_power_coeff),
         peer("flint fmpz_poly pow_trunc", flint_pow_trunc_coeff),
         peer("sympy Poly power", sympy_power_coeff)],
        notes=[f"SymPy Poly ground types: {sympy_ground_types()}"],
    )


@workload("be-capacity-20000", "BE configurations, n=20000 r=5000 capacity 7", target=faster_by(3))
def _be_capacity_small(ctx):
    return _capacity_count(ctx, 20000, 5000, 7)


@workload("be-capacity-100000", "BE configurations, n=100000 r=10000 capacity 30", target=faster_by(3))
def _be_capacity_large(ctx):
    return _capacity_count(ctx, 10 ** 5, 10 ** 4, 30)


@workload("be-per-urn-bounds",
          "BE configurations, r=300, urn i holds 0..(i mod 10)+1, n=800", target=at_most(1.2))
def _be_per_urn(ctx):
    r, n = 300, 800
    uppers = [(i % 10) + 1 for i in range(r)]
    bounds = [(0, b) for b in uppers]

    def scaled(fn):
        return lambda s: (lambda: fn(uppers[:_scale(r, s)], _scale(n, s)))

    return ctx.compare(
        Method("enumerator", lambda: Occupancy(balls=n, bounds=bounds, rule="BE").configurations()),
        [Method("flint product tree", lambda: flint_tree_coeff(uppers, n), scaled=scaled(flint_tree_coeff)),
         Method("sympy Poly product tree", lambda: sympy_tree_coeff(uppers, n), scaled=scaled(sympy_tree_coeff))],
    )


@workload("mb-capacity-microstates", "MB microstates, n=1000 r=200 capacity 8", target=at_most(1.2))
def _mb_capacity(ctx):
    n, r, c = 1000, 200, 8

    def peer(name, how):
        return Method(name, lambda: _scaled_window(c, r, n, how),
                      scaled=lambda s: (lambda: _scaled_window(c, _scale(r, s), _scale(n, s), how)))

    return ctx.compare(
        Method("enumerator", lambda: Occupancy(balls=n, urns=r, rule="MB", capacity=c).microstates()),
        [peer("flint fmpz_poly power", "flint"),
         peer("flint fmpz_poly pow_trunc", "flint-trunc"),
         peer("sympy Poly power", "sympy")],
    )


def _mb_configuration(seed: int = 20240611, n: int = 1000, r: int = 100):
    """A fixed random MB configuration: n balls thrown uniformly into r urns."""
    rng = random.Random(seed)
    k = [0] * r
    for _ in range(n):
        k[rng.randrange(r)] += 1
    return tuple(k)


def _probability(ctx: Context, fresh: bool) -> Result:
    n, r = 1000, 100
    k = _mb_configuration(n=n, r=r)
    model = Occupancy(balls=n, urns=r, rule="MB")
    if fresh:
        def ours():
            return Occupancy(balls=n, urns=r, rule="MB").probability(k)
    else:
        def ours():
            return model.probability(k)
    return ctx.compare(
        Method("enumerator", ours),
        [Method("gmpy2 binomials / r^n (mpq)", lambda: multinomial_probability_gmpy2(k, r)),
         Method("math.comb / r^n (Fraction)", lambda: multinomial_probability_stdlib(k, r))],
        notes=["configuration: 1000 balls thrown into 100 urns by random.Random(20240611)"],
    )


@workload("mb-probability-same-model",
          "MB probability of one configuration, n=1000 r=100, one model reused", target=at_most(1.5))
def _prob_same(ctx):
    return _probability(ctx, fresh=False)


@workload("mb-probability-fresh-model",
          "MB probability of one configuration, n=1000 r=100, a new model each call", target=at_most(1.5))
def _prob_fresh(ctx):
    return _probability(ctx, fresh=True)


def _cwr_method(n: int, r: int, loop: bool = False) -> Method:
    def consume_loop():
        for _ in itertools.combinations_with_replacement(range(r), n):
            pass

    def check():
        count, first, last = first_last_count(itertools.combinations_with_replacement(range(r), n))
        # cwr runs in reverse lexicographic order of occupancy vectors
        return count, occupancy_of(last, r), occupancy_of(first, r)

    if loop:
        return Method("itertools cwr, for loop", consume_loop, check=check)
    return Method("itertools cwr + deque",
                  lambda: collections.deque(itertools.combinations_with_replacement(range(r), n), maxlen=0),
                  check=check)


@workload("list-tuples", "list n=16 r=10 unbounded as tuples (2042975 configurations)",
          target=rate_at_least(0.5))
def _list_tuples(ctx):
    n, r = 16, 10

    def model():
        return Occupancy(balls=n, urns=r, rule="BE")

    return ctx.compare(
        Method("enumerator tuples",
               lambda: collections.deque(model().iter_configurations(), maxlen=0),
               check=lambda: first_last_count(model().iter_configurations())),
        [_cwr_method(n, r)],
        items=math.comb(n + r - 1, r - 1),
    )


@workload("list-tuples-for-loop",
          "list n=16 r=10 unbounded as tuples, both consumed by a Python for loop",
          target=rate_at_least(0.5))
def _list_tuples_loop(ctx):
    # deque(maxlen=0) drops each tuple at once, which lets cwr (and zip) reuse
    # one result tuple; a for loop holds it, as a real consumer does.
    n, r = 16, 10

    def model():
        return Occupancy(balls=n, urns=r, rule="BE")

    def consume():
        for _ in model().iter_configurations():
            pass

    return ctx.compare(
        Method("enumerator tuples, for loop", consume,
               check=lambda: first_last_count(model().iter_configurations())),
        [_cwr_method(n, r, loop=True)],
        items=math.comb(n + r - 1, r - 1),
    )


@workload("list-blocks", "list n=16 r=10 unbounded in numpy blocks of 65536",
          target=rate_at_least(5))
def _list_blocks(ctx):
    n, r = 16, 10

    def blocks():
        count, first, last = 0, None, None
        for block in Occupancy(balls=n, urns=r, rule="BE").iter_blocks(65536):
            if first is None and len(block):
                first = block[0]
            if len(block):
                last = block[-1]
            count += len(block)
        return count, tuple(first.tolist()), tuple(last.tolist())

    return ctx.compare(
        Method("enumerator blocks", blocks),
        [_cwr_method(n, r)],
        items=math.comb(n + r - 1, r - 1),
    )


_MEMORY_CHILD = r"""
import collections, itertools, json, math, resource, sys, time

def hwm_kb():
    # the peak RSS of this process image (Linux); ru_maxrss also counts the parent's pages at fork
    try:
        with open("/proc/self/status") as f:
            for line in f:
                if line.startswith("VmHWM:"):
                    return int(line.split()[1])
    except OSError:
        pass
    return None

mode, n, r, count = sys.argv[1], int(sys.argv[2]), int(sys.argv[3]), int(sys.argv[4])
if mode == "enumerator":
    from enumerator import Occupancy
    model = Occupancy(balls=n, urns=r, rule="BE")
    base = hwm_kb()
    t = time.perf_counter()
    it = model.iter_configurations(0, count)
else:
    total = math.comb(n + r - 1, r - 1)
    base = hwm_kb()
    t = time.perf_counter()
    # cwr runs in reverse lexicographic order: its last `count` items are the first `count` ranks
    it = itertools.islice(itertools.combinations_with_replacement(range(r), n), total - count, None)
first = next(it)
tail = collections.deque(zip(it, itertools.count(2)), maxlen=1)
last, seen = tail[0] if tail else (first, 1)
print(json.dumps({"count": seen, "first": list(first), "last": list(last), "base_kb": base,
                  "hwm_kb": hwm_kb(), "seconds": time.perf_counter() - t}))
"""

# A small process between the benchmark and the measured child: Linux carries a
# process's peak RSS across fork and exec, so a child started straight from the
# (large) benchmark process would report the benchmark's own peak.  The launcher
# is a bare Python, so the grandchild's ru_maxrss is its own (or the launcher's
# few MB, whichever is larger).
_MEMORY_LAUNCHER = r"""
import json, resource, subprocess, sys
proc = subprocess.run([sys.executable, "-c"] + sys.argv[1:], stdout=subprocess.PIPE)
if proc.returncode:
    sys.exit(proc.returncode)
report = json.loads(proc.stdout)
report["children_maxrss"] = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss
print(json.dumps(report))
"""


def child_peak(code: str, *args, failure: str = "measured child failed", drop_env: Sequence[str] = ()):
    """Run the Python *code* with *args* in a grandchild; return ``(report, peak RSS in MB)``.

    The grandchild prints one JSON object (its report); the launcher
    (:data:`_MEMORY_LAUNCHER`) adds ``children_maxrss``, the grandchild's
    ``getrusage(RUSAGE_CHILDREN).ru_maxrss`` read after it exits.  The
    variables named in *drop_env* are removed from the child's environment.

    Raises
    ------
    RuntimeError
        When the child fails (``failure`` and its stderr are the message), or
        its report carries a nonzero ``code`` (the exit code of a command).
    """
    env = dict(os.environ, PYTHONPATH=str(ROOT) + os.pathsep + os.environ.get("PYTHONPATH", ""))
    for name in drop_env:
        env.pop(name, None)
    proc = subprocess.run([sys.executable, "-c", _MEMORY_LAUNCHER, code, *map(str, args)],
                          capture_output=True, text=True, cwd=str(ROOT), env=env)
    if proc.returncode != 0:
        raise RuntimeError(f"{failure}:\n{proc.stderr}")
    report = json.loads(proc.stdout)
    if report.get("code"):
        raise RuntimeError(f"the command exited {report['code']}")
    # ru_maxrss is in KiB on Linux, in bytes on macOS
    raw = report["children_maxrss"]
    return report, (raw / (1024 * 1024) if sys.platform == "darwin" else raw / 1024)


def _child_peak(mode: str, n: int, r: int, count: int):
    """List in a grandchild process (:func:`child_peak`); return its report and its peak RSS in MB."""
    return child_peak(_MEMORY_CHILD, mode, n, r, count, failure=f"{mode} listing child failed")


@workload("list-memory", "peak RSS listing the first 10^7 configurations of n=20 r=10 BE as tuples",
          target=peak_below_mb(100))
def _list_memory(ctx):
    n, r, count = 20, 10, 10 ** 7
    notes = []
    if ctx.quick:
        probe, _ = _child_peak("enumerator", n, r, 10 ** 6)
        if probe["seconds"] * 10 > 15:
            count = 10 ** 6
            notes.append("quick: listed 10^6 configurations instead of 10^7 "
                         f"(10^6 took {fmt_time(probe['seconds'])})")
    ours, ours_mb = _child_peak("enumerator", n, r, count)
    peer, peer_mb = _child_peak("cwr", n, r, count)
    mine = Measurement("enumerator tuples (child process)", ours_mb, ours_mb, 1, 1, agrees=True,
                       answer=(ours["count"], tuple(ours["first"]), tuple(ours["last"])))
    other = Measurement("itertools cwr + deque (child process)", peer_mb, peer_mb, 1, 1,
                        answer=(peer["count"], occupancy_of(peer["last"], r), occupancy_of(peer["first"], r)))
    other.agrees = other.answer == mine.answer
    result = Result("", "", mine, [other], unit="MB", notes=notes)
    if ours["count"] != count:
        result.mismatches.append(f"enumerator listed {ours['count']} configurations, asked for {count}")
    if not other.agrees:
        result.mismatches.append(f"cwr gave {describe(other.answer)}, enumerator {describe(mine.answer)}")
    def kb(value):
        return "-" if value is None else f"{value / 1024:.1f} MB"

    for label, rep in (("enumerator", ours), ("cwr", peer)):
        result.notes.append(f"{label} child: {rep['count']} configurations in {fmt_time(rep['seconds'])}; "
                            f"{kb(rep['base_kb'])} after import, VmHWM {kb(rep['hwm_kb'])} at the end")
    return result


# ---------------------------------------------------------------------------
# distributions, generating functions and sampling (statistics issue)
# ---------------------------------------------------------------------------

@workload("dist-max-mb", "exact distribution of the maximum, MB n=2000 r=500 (in seconds)")
def _dist_max(ctx):
    from enumerator.algorithms.statistics import distribution

    def ours():
        return len(distribution(Occupancy(balls=2000, urns=500, rule="MB"), "max").pmf)

    return ctx.compare(Method("enumerator", ours), [], notes=["answer: the support size"])


@workload("dist-empty-mb", "exact distribution of the number of empty urns, MB n=10^4 r=10^3 (in seconds)")
def _dist_empty(ctx):
    from enumerator.algorithms.statistics import distribution

    def ours():
        return len(distribution(Occupancy(balls=10 ** 4, urns=10 ** 3, rule="MB"), "empty").pmf)

    return ctx.compare(Method("enumerator", ours), [], notes=["answer: the support size"])


@workload("coefficient-row", "coefficients of (1+x+...+x^7)^5000 up to degree 20000",
          target=at_most(1.2))
def _coefficient_row(ctx):
    from enumerator.algorithms.generating import coefficient_row

    r, c, top = 5000, 7, 20000
    window = fmpz_poly([1] * (c + 1))

    def ours():
        row = coefficient_row(Occupancy(balls=top, urns=r, rule="BE", capacity=c), top)
        return row[top], row[top // 2], len(row)

    def full():
        p = window ** r
        return int(p[top]), int(p[top // 2]), top + 1

    def trunc():
        p = window.pow_trunc(r, top + 1)
        return int(p[top]), int(p[top // 2]), top + 1

    return ctx.compare(
        Method("enumerator", ours),
        [Method("flint fmpz_poly full power", full), Method("flint fmpz_poly pow_trunc", trunc)],
        notes=["answer: (coefficient 20000, coefficient 10000, row length)"],
    )


def _sampling_workload(ctx, rule: str, size: int = 10 ** 5, **bounds):
    import numpy as np

    from enumerator.algorithms.sampling import sample_array

    n, r = 1000, 100

    def ours():
        a = sample_array(Occupancy(balls=n, urns=r, rule=rule, **bounds), size, seed=7)
        return a.shape, int(a.sum())

    def numpy_multinomial():
        a = np.random.default_rng(7).multinomial(n, [1 / r] * r, size=size)
        return a.shape, int(a.sum())

    return ctx.compare(Method("enumerator", ours), [Method("numpy Generator.multinomial", numpy_multinomial)],
                       items=size, notes=["answer: (shape, total balls); draws differ, only shapes and sums are compared"])


@workload("sample-be", "10^5 exact BE samples, n=1000 r=100 unbounded", target=at_most(1))
def _sample_be(ctx):
    return _sampling_workload(ctx, "BE")


@workload("sample-mb", "10^5 exact MB samples, n=1000 r=100 unbounded", target=at_most(1))
def _sample_mb(ctx):
    return _sampling_workload(ctx, "MB")


@workload("sample-be-capacity", "10^4 exact BE samples, n=1000 r=100 capacity 15 (rate)")
def _sample_be_capacity(ctx):
    return _sampling_workload(ctx, "BE", size=10 ** 4, capacity=15)


@workload("sample-mb-capacity", "10^4 exact MB samples, n=1000 r=100 capacity 15 (rate)")
def _sample_mb_capacity(ctx):
    return _sampling_workload(ctx, "MB", size=10 ** 4, capacity=15)


# ---------------------------------------------------------------------------
# the result store (store issue)
# ---------------------------------------------------------------------------

def _store_methods():
    from enumerator.store.tables import bench_workloads

    return bench_workloads()


@workload("store-warm-lookup", "a stored count answered through the public API (target 1 ms median)")
def _store_warm(ctx):
    calls = _store_methods()
    return ctx.compare(Method("enumerator", calls["warm_lookup"]), [])


@workload("table-cold", "201 x 50 BE table built into an empty store (in seconds)")
def _table_cold(ctx):
    calls = _store_methods()
    return ctx.compare(Method("enumerator", calls["table_cold"]), [])


@workload("table-warm", "the same 201 x 50 BE table again, every cell stored (well under a second)")
def _table_warm(ctx):
    calls = _store_methods()
    return ctx.compare(Method("enumerator", calls["table_warm"]), [])


@workload("store-overhead", "a cold MB count of 10+ ms remembered in the store, against the pure computation",
          target=at_most(1.1))
def _store_overhead(ctx):
    import tempfile
    from functools import partial

    from enumerator import store as store_module
    from enumerator.algorithms.counting import count_microstates

    target = store_module.open_store(str(Path(tempfile.mkdtemp(prefix="enumerator-bench-")) / "o.sqlite"))

    def fresh_models():
        # each call a new key, so every stored call is a cold computation plus a write
        for n in itertools.count(4000):
            yield Occupancy(balls=n, urns=600, rule="MB", capacity=9)

    stored_models, pure_models = fresh_models(), fresh_models()

    def stored():
        model = next(stored_models)
        return store_module.remember("microstates", model, partial(count_microstates, model), store=target)

    def pure():
        return count_microstates(next(pure_models))

    return ctx.compare(Method("enumerator with store", stored), [Method("pure computation", pure)],
                       notes=["each call counts a new n, so the answers compared are the first calls' (n = 4000)"])


# ---------------------------------------------------------------------------
# start-up of the command line: whole processes (cli issue)
# ---------------------------------------------------------------------------

#: The peer of the start-up workloads: a Python process that imports one
#: extension and prints one exact count (the configurations of the stored count).
_STARTUP_PEER = "import gmpy2; print(gmpy2.comb(1199, 1000))"


@dataclass
class ProcessResult(Result):
    """A timing of whole processes, whose ratio compares medians.

    One process start is noisy (disk cache, scheduler, other jobs); the
    minimum of a few starts is mostly luck, so the ratio is the ratio of
    the medians of interleaved rounds.
    """

    @property
    def ratio(self) -> Optional[float]:
        f = self.fastest
        if f is None or self.enumerator.median is None or not f.median:
            return None
        return self.enumerator.median / f.median


def _process_env(pycache: str) -> Dict[str, str]:
    """The environment of a timed process: this checkout, the store on, bytecode cached.

    ``PYTHONDONTWRITEBYTECODE`` would make every start compile the package
    from source, which an installed package never does; the bytecode goes
    to a temporary ``PYTHONPYCACHEPREFIX`` instead (written by the warm-up
    runs), so the checkout stays clean.  ``ENUMERATOR_NO_CACHE`` (set for the
    in-process workloads) is dropped: the stored count must read its store.
    """
    env = dict(os.environ)
    env.pop("ENUMERATOR_NO_CACHE", None)
    env.pop("PYTHONDONTWRITEBYTECODE", None)
    env["PYTHONPYCACHEPREFIX"] = pycache
    env["PYTHONPATH"] = str(ROOT) + os.pathsep + env.get("PYTHONPATH", "")
    env["COLUMNS"] = "100"  # the same table width in every run
    return env


def _enumerator_argv(args: List[str]) -> List[str]:
    """The console script next to this interpreter, else the same entry point through ``-c``."""
    script = Path(sys.executable).with_name("enumerator")
    if script.is_file():
        return [str(script), *args]
    return [sys.executable, "-c", "from enumerator.cli import main; main()", *args]


def _timed_process(argv: List[str], env: Dict[str, str]):
    """Run *argv* to the end; return its wall-clock seconds and stdout (an error if it fails)."""
    t = perf_counter()
    proc = subprocess.run(argv, env=env, capture_output=True, text=True, cwd=str(ROOT))
    seconds = perf_counter() - t
    if proc.returncode != 0:
        raise RuntimeError(f"{' '.join(argv)} exited with {proc.returncode}:\n{proc.stderr}")
    return seconds, proc.stdout


def _startup(ctx: Context, label: str, args: List[str], answer: Callable[[str], Any],
             compared: bool, notes: List[str]) -> Result:
    """Time ``enumerator ARGS`` against the peer process in interleaved rounds; medians.

    *answer* maps enumerator's stdout to its answer; with *compared* it must
    equal the peer's printed integer, else the outputs are different things
    and only enumerator's is checked (by *answer* raising).
    """
    import tempfile

    rounds = 5 if ctx.quick else 21
    with tempfile.TemporaryDirectory(prefix="enumerator-bench-startup-") as tmp:
        env = _process_env(str(Path(tmp) / "pycache"))
        ours_argv = _enumerator_argv([a.replace("{tmp}", tmp) for a in args])
        peer_argv = [sys.executable, "-c", _STARTUP_PEER]
        for _ in range(2):  # warm-up: bytecode written, the store filled, files in the page cache
            _, ours_out = _timed_process(ours_argv, env)
            _, peer_out = _timed_process(peer_argv, env)
        ours_times, peer_times = [], []
        for _ in range(rounds):
            ours_times.append(_timed_process(ours_argv, env)[0])
            peer_times.append(_timed_process(peer_argv, env)[0])
    mine = Measurement(label, min(ours_times), statistics.median(ours_times), rounds, 1,
                       agrees=True, answer=answer(ours_out))
    other = Measurement("python -c gmpy2.comb (process)", min(peer_times), statistics.median(peer_times),
                        rounds, 1, answer=int(peer_out))
    result = ProcessResult("", "", mine, [other], notes=list(notes))
    if compared:
        other.agrees = other.answer == mine.answer
        if not other.agrees:
            result.mismatches.append(f"the peer printed {describe(other.answer)}, "
                                     f"enumerator {describe(mine.answer)}")
    result.notes.append(f"whole processes, {rounds} interleaved rounds after 2 warm-up rounds; "
                        "the ratio is of the medians; bytecode cached as installed")
    return result


def _stored_configurations(text: str) -> int:
    """The configurations of ``enumerator count``'s table (in the table or spilled below it)."""
    found = re.search(r"^configurations = (\d+)$", text, re.M) or re.search(r"configurations\s*│\s*(\d+)", text)
    if found is None:
        raise RuntimeError(f"no configurations in the output of enumerator count:\n{text}")
    return int(found.group(1))


def _help_commands(text: str) -> str:
    """Check that ``enumerator --help`` lists every command; return a short description."""
    commands = ("count", "prob", "dist", "list", "gf", "coeff", "sample", "ways", "demo",
                "compare", "levels", "contact", "table", "cache")
    missing = [c for c in commands if not re.search(rf"\b{c}\b", text)]
    if "Usage:" not in text or missing:
        raise RuntimeError(f"enumerator --help does not list {', '.join(missing) or 'its usage'}:\n{text}")
    return f"help text listing all {len(commands)} commands"


@workload("startup-stored-count",
          "process: enumerator count -n 1000 -r 200 --store S, answered from the store, against a gmpy2 one-liner",
          target=at_most(4))
def _startup_stored_count(ctx):
    return _startup(ctx, "enumerator count (process)",
                    ["count", "-n", "1000", "-r", "200", "--store", "{tmp}/stored.sqlite"],
                    _stored_configurations, True,
                    ["both print C(1199, 1000), the configurations (stars and bars, common practice)"])


@workload("startup-help", "process: enumerator --help against a gmpy2 one-liner", target=at_most(3))
def _startup_help(ctx):
    return _startup(ctx, "enumerator --help (process)", ["--help"], _help_commands, False,
                    ["the outputs differ (help text, a number): enumerator's is checked to list every command"])


# ---------------------------------------------------------------------------
# energy levels (levels issue)
# ---------------------------------------------------------------------------

@workload("levels-trap-multiplicity", "Omega(N=100, E<=2000), bosons in the 3D harmonic trap (in seconds)")
def _levels_multiplicity(ctx):
    from enumerator.algorithms.levels import System, harmonic_trap, multiplicities

    def ours():
        counts = multiplicities(System.create(harmonic_trap(), 100, "BE"), 2000)
        return len(counts), counts[max(counts)] % (10 ** 12)

    return ctx.compare(Method("enumerator", ours), [])


@workload("levels-trap-canonical", "canonical occupations, N=1000 bosons in the trap at 20 temperatures (in seconds)")
def _levels_canonical(ctx):
    from enumerator.algorithms.levels import System, canonical_occupations, harmonic_trap

    def ours():
        system = System.create(harmonic_trap().through(30), 1000, "BE")
        points = canonical_occupations(system, [0.5 * (i + 1) for i in range(20)])
        return len(points)

    return ctx.compare(Method("enumerator", ours), [])


# ---------------------------------------------------------------------------
# main
# ---------------------------------------------------------------------------

# ---------------------------------------------------------------------------
# urn groups at hash-table sizes (issue 10)
# ---------------------------------------------------------------------------

def _refusable(ctx: Context, ours: Method, peers: List[Method], notes: Optional[List[str]] = None) -> Result:
    """:meth:`Context.compare`, unless the library refuses the work (TooLarge/Unsupported) up front.

    A refusal is a finding, not a crash: the enumerator row says so (with the
    library's one-line reason), the peers are still timed for reference, and
    their answers are not checked.
    """
    from enumerator.core.errors import TooLarge, Unsupported

    try:
        ours.run()
    except (TooLarge, Unsupported) as error:
        measured = []
        for peer in peers:
            m = ctx.measure(peer, guard=True)
            m.note = (m.note + "; " if m.note else "") + "answer not checked"
            measured.append(m)
        refused = Measurement("enumerator", skipped=True,
                              note=f"refused by the library: {type(error).__name__}: {str(error)[:160]}")
        return Result("", "", refused, measured, notes=list(notes or []))
    return ctx.compare(ours, peers, notes=notes)


def _no_collision_gmpy2(n: int, r: int):
    """P(no two of n keys share one of r buckets) as an mpq: prod (r - i) / r^n (plain gmpy2 products).

    The falling factorial is multiplied as a balanced tree of mpz products
    (one left-to-right pass would be quadratic in the digits).
    """
    factors = [mpz(r - i) for i in range(n)] or [mpz(1)]
    while len(factors) > 1:
        factors = [factors[i] * factors[i + 1] if i + 1 < len(factors) else factors[i]
                   for i in range(0, len(factors), 2)]
    return gmpy2.mpq(factors[0], mpz(r) ** n)


@workload("no-collision-2^64", "P(no collision), 10^5 keys in 2^64 buckets, against a plain gmpy2 product",
          target=at_most(1.2))
def _no_collision(ctx):
    n, r = 10 ** 5, 2 ** 64
    return _refusable(
        ctx,
        Method("enumerator", lambda: Occupancy(balls=n, urns=r).event_probability("max <= 1"),
               normalise=lambda v: _residues((v,))),
        [Method("gmpy2 product of (r - i) / r", lambda: _no_collision_gmpy2(n, r),
                scaled=lambda s: (lambda: _no_collision_gmpy2(_scale(n, s), r)),
                normalise=lambda v: _residues((v,)))],
        notes=["answers compared by numerator and denominator modulo 2^127 - 1 (millions of bits each)"],
    )


@workload("max-le-3-2^64", "P(max <= 3), 10^4 keys in 2^64 buckets (in seconds)")
def _max_at_most_3(ctx):
    return _refusable(ctx, Method("enumerator",
                                  lambda: Occupancy(balls=10 ** 4, urns=2 ** 64).event_probability("max <= 3")), [])


@workload("max-law-1024", "exact law of the maximum load, 10^4 keys in 1024 buckets (quick: 2,000 keys)")
def _max_law_1024(ctx):
    # about 4 CPU minutes at 10^4 keys (the plan of extremes.mb_max_cumulative), timed once; 1.8 s at 2,000
    keys = 2000 if ctx.quick else 10 ** 4
    return _refusable(ctx, Method("enumerator",
                                  lambda: len(Occupancy(balls=keys, urns=1024).distribution("max").pmf)),
                      [], notes=[f"answer: the support size ({keys} keys)"])


def _occupied_moments_gmpy2(n: int, r: int):
    """Mean and variance of the occupied buckets (MB), closed forms in exact mpq (Feller, vol. 1, IV.2)."""
    q1 = gmpy2.mpq(r - 1, r) ** n
    q2 = gmpy2.mpq(r - 2, r) ** n
    mean = r * (1 - q1)
    empty_mean = r * q1
    variance = r * (r - 1) * q2 + empty_mean - empty_mean * empty_mean
    return mean, variance


@workload("moments-occupied-2^32", "--moments-only occupied: mean and variance, 10^6 keys in 2^32 buckets",
          target=Target("<= 1 s", 1.0, on="value"))
def _moments_occupied(ctx):
    from enumerator.algorithms.statistics import statistic_moments

    n, r = 10 ** 6, 2 ** 32

    def ours():
        m = statistic_moments(Occupancy(balls=n, urns=r), "occupied")
        return m.mean, m.variance

    return _refusable(ctx, Method("enumerator", ours, normalise=_residues),
                      [Method("gmpy2 mpq closed forms", lambda: _occupied_moments_gmpy2(n, r),
                              scaled=lambda s: (lambda: _occupied_moments_gmpy2(_scale(n, s), r)),
                              normalise=_residues)],
                      notes=["answers compared by their numerators and denominators modulo 2^127 - 1 "
                             "(each has tens of millions of bits; writing them out would dominate)"])


def _residues(values):
    """Exact fractions as (numerator, denominator) residues modulo the prime 2^127 - 1 (a cheap exact digest)."""
    prime = (1 << 127) - 1
    return tuple((int(mpz(v.numerator) % prime), int(mpz(v.denominator) % prime)) for v in values)


@workload("threshold-three-birthdays", "least people for P(three share a birthday) >= 1/2 (88, OEIS A014088)",
          target=Target("<= 0.5 s", 0.5, on="value"))
def _threshold_three(ctx):
    from enumerator.algorithms.threshold import find_threshold
    from enumerator.core.model import UrnModel

    return _refusable(ctx, Method("enumerator", lambda: find_threshold(
        UrnModel(balls=0, urns=365), "balls", "max >= 3", "1/2").value), [])


@workload("weighted-max-law", "exact law of the maximum, MB 2000 balls in 1000 urns of 5 weights "
                              "(quick: 300 balls in 5 groups of 30)")
def _weighted_max_law(ctx):
    # about 4 CPU minutes at full size (estimated 3.3 min, was 9.4 before the block routes), timed once; 2 s under --quick
    balls, count = (300, 30) if ctx.quick else (2000, 200)
    weights = ",".join(f"{count}x{w}" for w in range(1, 6))
    return _refusable(ctx, Method("enumerator",
                                  lambda: len(Occupancy(balls=balls, weights=weights).distribution("max").pmf)),
                      [], notes=[f"answer: the support size ({balls} balls, 5 groups of {count} urns)"])


def _cli_digits(args: List[str]) -> int:
    """Run the command line in-process and return the number of digits of its microstates."""
    import io

    from enumerator.cli import app as cli_app

    out = io.StringIO()
    saved = sys.stdout
    sys.stdout = out
    try:
        from typer.main import get_command

        get_command(cli_app).main(args=args, standalone_mode=False)
    except SystemExit as stop:
        if stop.code not in (0, None):
            raise RuntimeError(f"enumerator {' '.join(args)} exited {stop.code}") from None
    finally:
        sys.stdout = saved
    text = out.getvalue()
    if "--json" in args:
        return len(json.loads(text)["microstates"])
    line = next(x for x in text.splitlines() if x.startswith("microstates"))
    if line.startswith("microstates = "):
        return len(line) - len("microstates = ")
    return int(line.split()[1].replace(",", ""))  # "microstates: 1,000,001 digits in all, ..."


@workload("million-digit-count-printed", "count -n 1000000 -r 10 printed whole (--json; the table rounds it)",
          target=Target("<= 0.5 s", 0.5, on="value"))
def _million_digits(ctx):
    args = ["count", "-n", "1000000", "-r", "10", "--no-cache"]
    return ctx.compare(
        Method("enumerator count --json", lambda: _cli_digits(args + ["--json"])),
        [Method("enumerator count (table)", lambda: _cli_digits(args)),
         Method("gmpy2 10^n digits", lambda: len((mpz(10) ** 10 ** 6).digits()))],
        notes=["answer: the number of digits of the count; --json writes them all, the table shows the value "
               "rounded with its digit count (values over 10,000 digits are not written out in tables)"],
    )


def run_one(ctx: Context, w: Workload) -> Result:
    try:
        result = w.run(ctx)
    except Exception:
        result = Result(w.name, w.description, Measurement("enumerator"), [], error=traceback.format_exc())
    result.name, result.description, result.target = w.name, w.description, w.target
    return result


def to_json(results: List[Result], ctx: Context, env: Dict[str, str]) -> Dict[str, Any]:
    def meas(m: Measurement):
        # measured figures are floats, so their names say approximation
        d = asdict(m)
        d.pop("answer")
        for key in ("best", "median", "estimate"):
            d[f"{key}_approx"] = d.pop(key)
        return d

    out = []
    for r in results:
        f = r.fastest
        out.append({
            "name": r.name,
            "description": r.description,
            "unit": "seconds" if r.unit == "s" else "megabytes",
            "enumerator": meas(r.enumerator),
            "peers": [meas(m) for m in r.peers],
            "fastest_peer": f.method if f else None,
            "ratio_approx": r.ratio,
            "items": r.items,
            "target": r.target.text if r.target else None,
            "met": r.met,
            "answer": None if r.error else describe(r.enumerator.answer),
            "notes": r.notes,
            "mismatches": r.mismatches,
            "error": r.error,
        })
    return {"mode": "quick" if ctx.quick else "full", "environment": env, "workloads": out}


def _import_everything() -> None:
    """Import every enumerator module and warm the store once before timing.

    Imports (SQLAlchemy among them) cost a few hundred milliseconds; paid
    here, they stay out of the first timed call, which --quick may use as
    its only sample for long workloads.
    """
    import importlib

    for name in ("algorithms.counting", "core.series", "algorithms.listing", "algorithms.statistics",
                 "algorithms.events", "algorithms.generating", "algorithms.sampling", "algorithms.levels",
                 "algorithms.asymptotics", "store", "store.tables"):
        importlib.import_module(f"enumerator.{name}")
    Occupancy(balls=3, urns=2, rule="BE", capacity=2).configurations()
    Occupancy(balls=3, urns=2, rule="MB", capacity=2).microstates()


def _load_extensions() -> None:
    """Register the workloads of every ``scripts/workloads_*.py`` beside this file.

    Each such module defines ``register(bench)``, which receives this module
    and declares its workloads with ``bench.workload``; one file per area of
    the library keeps the workloads of unrelated work apart.  Runs once.
    """
    import importlib.util

    me = sys.modules[__name__]
    if getattr(me, "_extensions_loaded", False):
        return
    me._extensions_loaded = True
    for path in sorted(Path(__file__).resolve().parent.glob("workloads_*.py")):
        spec = importlib.util.spec_from_file_location(f"_bench_{path.stem}", path)
        module = importlib.util.module_from_spec(spec)
        spec.loader.exec_module(module)
        module.register(me)


def main(argv: Optional[List[str]] = None) -> int:
    sys.set_int_max_str_digits(0)  # answers of thousands of digits are printed and compared
    _import_everything()
    _load_extensions()
    parser = argparse.ArgumentParser(description="Benchmark enumerator against general-purpose peers.")
    parser.add_argument("--quick", action="store_true", help="every workload in under a minute")
    parser.add_argument("--only", action="append", metavar="NAME", help="run only this workload (repeatable)")
    parser.add_argument("--list", action="store_true", help="list the workloads and exit")
    parser.add_argument("--json", metavar="FILE", help="also write the results to FILE as JSON")
    args = parser.parse_args(argv)

    if args.list:
        width = max(len(name) for name in WORKLOADS)
        for w in WORKLOADS.values():
            target = f"  [target {w.target.text}]" if w.target else ""
            print(f"{w.name:<{width}}  {w.description}{target}")
        return 0
    names = args.only or list(WORKLOADS)
    unknown = [name for name in names if name not in WORKLOADS]
    if unknown:
        print(f"unknown workload {', '.join(unknown)}; choose from: {', '.join(WORKLOADS)}", file=sys.stderr)
        return 2

    ctx = Context(quick=args.quick)
    env = environment()
    print(f"enumerator benchmarks ({'quick' if ctx.quick else 'full'}): "
          + ", ".join(f"{k} {v}" for k, v in env.items()))
    start = perf_counter()
    results = []
    for name in names:
        result = run_one(ctx, WORKLOADS[name])
        print_result(result)
        sys.stdout.flush()
        results.append(result)
    print_table(results)
    print(f"\ntotal {fmt_time(perf_counter() - start)}")
    if args.json:
        Path(args.json).write_text(json.dumps(to_json(results, ctx, env), indent=2) + "\n")
    failed = [r.name for r in results if r.mismatches or r.error]
    if failed:
        print(f"FAILED (answers differ or a workload raised): {', '.join(failed)}", file=sys.stderr)
        return 1
    return 0


if __name__ == "__main__":
    sys.exit(main())
