"""The compiled event loop (pqcalc.circuits.loop) against the Python one it transcribes.

Reference: ``Engine.run_python`` of pqcalc.circuits.pwl, the loop the ngspice comparison
(tests/test_circuits_ngspice.py) and the closed forms (tests/test_circuits_exact.py) were
first established on. Both run the same arithmetic step for step, so the figures agree to
rounding (1e-8 of I1 allows for a root placed one rounding apart), with the same flags,
period and measured conduction. The cases lie away from a change of the triac's latching
pattern: near one (the sine-following lamp behind an RC-fired triac at knob 0.7 or 0.9,
measured) a circuit has several stable orbits and a rounding apart decides which one the
shooting finds.
"""

from __future__ import annotations

import numpy as np
import pytest

from pqcalc.circuits import DimmerSpec, LoadGroup, Supply, pwl, solve_circuit
from pqcalc.circuits import solve as solve_module
from pqcalc.circuits.kernels import COMPILED
from pqcalc.errors import ConvergenceError

MODELS = [("resistive", 60.0), ("dropper", 5.0), ("bulk-cap", 9.0), ("sine-follow", 10.0),
          ("pfc", 40.0), ("pwm-detect", 20.0)]
DIMMERS = [DimmerSpec("none"),
           DimmerSpec("leading-edge", conduction_deg=120.0, switch="triac"),
           DimmerSpec("leading-edge", conduction_deg=120.0, switch="transistor"),
           DimmerSpec("trailing-edge", conduction_deg=120.0),
           DimmerSpec("leading-edge", knob=0.6, switch="triac")]


def _solve(model, power, dimmer, compiled: bool, monkeypatch):
    for obj in vars(solve_module).values():
        clear = getattr(obj, "cache_clear", None)
        if callable(clear):
            clear()
    if not compiled:
        monkeypatch.setattr(pwl._FastLoop, "make", classmethod(lambda cls, eng: None))
    try:
        return solve_circuit(Supply(), dimmer, [LoadGroup(model, power, count=10)])
    finally:
        monkeypatch.undo()


@pytest.mark.skipif(not COMPILED, reason="numba is not installed: nothing compiled to compare")
@pytest.mark.parametrize("model,power", MODELS, ids=[m for m, _ in MODELS])
@pytest.mark.parametrize("dimmer", DIMMERS, ids=["none", "triac-120", "transistor-120",
                                                 "trailing-120", "triac-knob-0.6"])
def test_compiled_loop_matches_python_loop(model, power, dimmer, monkeypatch):
    out = []
    for compiled in (True, False):
        try:
            out.append(_solve(model, power, dimmer, compiled, monkeypatch))
        except ConvergenceError as e:  # no periodic state: both loops must find none
            out.append(e)
    a, b = out
    if isinstance(a, ConvergenceError) or isinstance(b, ConvergenceError):
        assert isinstance(a, ConvergenceError) and isinstance(b, ConvergenceError)
        return
    if "long-transient" in a.flags or "long-transient" in b.flags:
        # no periodic state: both loops report a record of the same length; its latching
        # pattern is irregular (chaotic), so a rounding apart gives another record, and
        # only the kind of result is compared
        assert "long-transient" in a.flags and "long-transient" in b.flags
        assert a.record_cycles == b.record_cycles
        return
    unsettled = ["power loop did not settle" in " ".join(x.notes) for x in (a, b)]
    if any(unsettled):
        # a pfc driver whose power jumps with the dimmer's holding has several states; a
        # rounding apart picks another one: both loops must say so (the kind of result)
        assert all(unsettled)
        return
    i1 = abs(b.current_phasors_a[1])
    assert np.max(np.abs(a.current_phasors_a - b.current_phasors_a)) < 1e-8 * i1
    assert a.i_rms_a == pytest.approx(b.i_rms_a, rel=1e-8)
    assert a.flags == b.flags and a.period_cycles == b.period_cycles
    assert np.allclose(a.conduction_deg, b.conduction_deg, atol=1e-6)
    assert a.groups[0].light_mean == pytest.approx(b.groups[0].light_mean, rel=1e-8, abs=1e-9)
    assert a.groups[0].stresses.inrush_peak_a == pytest.approx(
        b.groups[0].stresses.inrush_peak_a, rel=1e-8)
