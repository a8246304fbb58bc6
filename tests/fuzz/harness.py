"""Run one command line in-process and hold it against the promise made to users.

The promise (DEVELOPERS.md, "Errors" and "Fuzzing"): whatever the input, a command ends
with exit code 0, 1, 2 or 3; exit 2 (bad input) prints exactly one line on stderr; no
traceback ever reaches the user and no "internal error" is reported (exit 3 is only for a
solve that could not be done); no NaN or infinity is printed; and it ends within a time
bound.
"""

from __future__ import annotations

import json
import os
import re
import signal
import time
from collections.abc import Sequence
from dataclasses import dataclass, field

from click.testing import CliRunner

from pqcalc.cli import main

#: Seconds one generated case may take before it counts as a hang. The slowest honest case
#: (an installation with a dozen circuits on a loaded 2-core machine) takes a few seconds.
TIME_BOUND_S = float(os.environ.get("PQCALC_FUZZ_TIME_BOUND_S", "30"))

#: Kinds of broken promise, in the order they are reported.
VIOLATIONS = ("traceback", "hang", "multi-line error", "non-finite output", "bad exit code")

_NONFINITE_JSON = re.compile(r"\b(NaN|-?Infinity)\b")
_NONFINITE_TEXT = re.compile(r"(?<![\w.])-?(nan|inf|infinity)(?![\w.])", re.IGNORECASE)


class Hang(BaseException):
    """Raised by the alarm when a case outlives :data:`TIME_BOUND_S` (a BaseException, so
    that no ``except Exception`` of the code under test swallows it)."""


@dataclass
class Outcome:
    args: list[str]
    exit_code: int | None
    stdout: str
    stderr: str
    seconds: float
    hung: bool = False
    error: BaseException | None = None
    violations: list[str] = field(default_factory=list)

    def describe(self) -> str:
        return (f"pqcalc {' '.join(self.args)[:300]} -> exit {self.exit_code} in "
                f"{self.seconds:.1f} s; violations {self.violations}; stderr "
                f"{self.stderr[:600]!r}; error {self.error!r}")


def _alarm(signum, frame):
    raise Hang()


def run_cli(args: Sequence[str], stdin: bytes | str | None = None,
            time_bound_s: float = TIME_BOUND_S, json_out: bool | None = None) -> Outcome:
    """Run ``pqcalc ARGS`` in this process and check the promise; never raises for a
    broken promise (the violations are listed in the outcome)."""
    args = [str(a) for a in args]
    runner = CliRunner()
    old = signal.signal(signal.SIGALRM, _alarm)
    signal.setitimer(signal.ITIMER_REAL, time_bound_s)
    t0 = time.perf_counter()
    hung, err = False, None
    try:
        r = runner.invoke(main, args, input=stdin, catch_exceptions=True)
        code, out, errtxt = r.exit_code, r.stdout, r.stderr
        if r.exception is not None and not isinstance(r.exception, SystemExit):
            err = r.exception
    except Hang:
        hung, code, out, errtxt = True, None, "", ""
    finally:
        signal.setitimer(signal.ITIMER_REAL, 0)
        signal.signal(signal.SIGALRM, old)
    o = Outcome(args, code, out, errtxt, time.perf_counter() - t0, hung, err)
    o.violations = violations(o, json_out if json_out is not None else "--json" in args)
    return o


def violations(o: Outcome, json_out: bool) -> list[str]:
    """The broken promises of one outcome (empty when it kept them all)."""
    v = []
    if o.hung:
        return ["hang"]
    err = o.stderr
    if (o.error is not None or "Traceback (most recent call last)" in err + o.stdout
            or "internal error" in err):
        v.append("traceback")
    if o.exit_code not in (0, 1, 2, 3):
        v.append("bad exit code")
    if o.exit_code == 3 and "a solve could not be done" not in err and "traceback" not in v:
        v.append("traceback")
    if o.exit_code == 2:
        lines = [ln for ln in err.splitlines() if ln.strip()]
        errors = [ln for ln in lines if not ln.startswith("warning: ")]
        if len(errors) != 1 or not errors[0].startswith("error: "):
            v.append("multi-line error")
    if o.exit_code in (0, 1):
        text = o.stdout
        if json_out and text.strip():
            if _NONFINITE_JSON.search(text):
                v.append("non-finite output")
            else:
                try:
                    json.loads(text)
                except ValueError:
                    pass  # a table after a JSON object: not the promise tested here
        elif _NONFINITE_TEXT.search(text):
            v.append("non-finite output")
        if _NONFINITE_TEXT.search(err):
            v.append("non-finite output")
    return v
