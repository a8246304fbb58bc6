"""Property-based fuzzing of the readers and the command line: whatever the input, the
promise holds (exit 0/1/2/3, one line on stderr for exit 2, no traceback, no non-finite
output, within a time bound). See DEVELOPERS.md, "Fuzzing".

Default: a few hundred generated cases in all (well under a minute). On demand:
``PQCALC_FUZZ_EXAMPLES=10000`` per test; with ``PQCALC_FUZZ_TALLY=file.jsonl`` broken
promises are recorded there instead of failing the test (``python -m tests.fuzz.tally
file.jsonl`` counts them).
"""

from __future__ import annotations

import json
import math
import os
import tempfile
from pathlib import Path

import pytest
from hypothesis import HealthCheck, Phase, given, settings

from .harness import run_cli
from .strategies import cli_numbers, comtrade_case, csv_case, installation_text

_LONG = os.environ.get("PQCALC_FUZZ_EXAMPLES")
_TALLY = os.environ.get("PQCALC_FUZZ_TALLY")


def _settings(default_examples: int):
    kw = dict(max_examples=int(_LONG) if _LONG else default_examples, deadline=None,
              suppress_health_check=list(HealthCheck), derandomize=not _LONG, database=None)
    if _TALLY:
        kw["phases"] = [Phase.generate]
    return settings(**kw)


def _folder() -> Path:
    """A private folder with a small capture (invented: a 9 W lamp's pulse current on a
    230 V 50 Hz sine, 5 kS/s, 10 cycles) that the generated installation files use."""
    d = Path(tempfile.mkdtemp(prefix="pqcalc-fuzz-"))
    fs, f = 5000.0, 50.0
    rows = ["time_s,voltage_v,current_a"]
    for k in range(int(10 * fs / f)):
        s = math.sin(2 * math.pi * f * k / fs)
        rows.append(f"{k / fs!r},{325.0 * s!r},{(0.4 * s if abs(s) > 0.85 else 0.0)!r}")
    (d / "cap.csv").write_text("\n".join(rows) + "\n")
    return d


_DIR = _folder()


def _check(kind: str, outcome, case_repr: str) -> None:
    if not outcome.violations:
        return
    if _TALLY:
        with open(_TALLY, "a", encoding="utf-8") as fh:
            fh.write(json.dumps({"reader": kind, "violations": outcome.violations,
                                 "exit": outcome.exit_code, "stderr": outcome.stderr[:400],
                                 "case": case_repr[:400]}) + "\n")
        return
    pytest.fail(f"{kind}: {outcome.describe()}\ncase: {case_repr[:2000]}")


def _count(kind: str, outcome) -> None:
    if _TALLY:
        with open(_TALLY + ".count", "a", encoding="utf-8") as fh:
            fh.write(f"{kind} {outcome.exit_code}\n")


@_settings(60)
@given(text=installation_text())
def test_installation_files_keep_the_promise(text):
    p = _DIR / "site.toml"
    p.write_text(text, encoding="utf-8", errors="surrogatepass")
    o = run_cli(["assess", str(p), "--json"])
    _count("installation", o)
    _check("installation", o, text)


@_settings(150)
@given(case=csv_case())
def test_csv_captures_keep_the_promise(case):
    p = _DIR / "capture.csv"
    p.write_bytes(case.data)
    o = run_cli(["analyze", str(p), "--json", *case.args])
    _count("csv", o)
    _check("csv", o, repr(case.args) + " " + repr(case.data[:300]))


@_settings(150)
@given(case=comtrade_case())
def test_comtrade_records_keep_the_promise(case):
    cfg = _DIR / "rec.cfg"
    cfg.write_bytes(case.cfg)
    (_DIR / "rec.dat").write_bytes(case.dat)
    o = run_cli(["analyze", str(cfg), "--json", *case.args])
    _count("comtrade", o)
    _check("comtrade", o, repr(case.args) + " " + repr(case.cfg))


@_settings(60)
@given(args=cli_numbers())
def test_cli_numbers_keep_the_promise(args):
    cap = str(_DIR / "cap.csv")
    argv = [cap if a == "{capture}" else a for a in args]
    o = run_cli(argv, json_out="--json" in argv)
    _count("cli-numbers", o)
    _check("cli-numbers", o, repr(argv))
