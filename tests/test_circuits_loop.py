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


def _guards_dense(GVc, lam, GP, jwh, g0, t0, ts):
    """Every guard at every time, evaluated directly (numpy): the closed form the event scan
    works on."""
    nat = np.real(GVc[:, :, None] * np.exp(lam[None, :, None] * (ts - t0)[None, None, :]))
    forced = np.real(GP[:, :, None] * np.exp(jwh[None, :, None] * ts[None, None, :]))
    return nat.sum(axis=1) + forced.sum(axis=1) + g0[:, None]


@pytest.mark.parametrize("seed", range(40))
def test_event_scan_finds_the_first_crossing_of_a_dense_grid(seed):
    """The event scan skips grid points where a guard provably stays below zero (a bound on
    its rate of change). Reference: every guard evaluated at every grid point (numpy) and
    the first crossing's root by Brent's method (scipy.optimize.brentq): the same guard
    and, to 1 ns, the same time. Random guards: decaying and fast modes, a fundamental
    and up to 24 source harmonics (odd orders to 49, 50 Hz), offsets near and far from
    zero."""
    from scipy.optimize import brentq

    from pqcalc.circuits.kernels import first_event

    rng = np.random.default_rng(seed)
    w = 2 * np.pi * 50.0
    ng, n = int(rng.integers(1, 7)), int(rng.integers(1, 5))
    orders = np.r_[1, rng.choice(np.arange(3, 50, 2), size=int(rng.integers(0, 24)),
                                 replace=False)]
    jwh = 1j * w * orders
    lam = -10.0 ** rng.uniform(1, 6, n) + 1j * rng.normal(0, 2e3, n)
    GVc = (rng.normal(size=(ng, n)) + 1j * rng.normal(size=(ng, n))) * 10.0 ** rng.uniform(
        -1, 2, (ng, 1))
    amp = np.r_[1.0, 10.0 ** rng.uniform(-4, -1.5, orders.size - 1)]
    GP = (rng.normal(size=(ng, orders.size)) + 1j * rng.normal(size=(ng, orders.size))) \
        * amp * 10.0 ** rng.uniform(0, 2.5, (ng, 1))
    g0 = -np.abs(GP).sum(axis=1) * rng.uniform(0.2, 1.6, ng)
    t0 = rng.uniform(0, 0.02)
    t_stop = t0 + rng.uniform(1e-4, 0.02)
    dt_grid = 0.02 / 2048
    got_i, got_t = first_event(GVc, lam, GP, jwh, g0, t0, t_stop, dt_grid)

    nstep = max(int(np.ceil((t_stop - t0) / dt_grid)), 1)
    ts = t0 + (t_stop - t0) * np.arange(nstep + 1) / nstep
    g = _guards_dense(GVc, lam, GP, jwh, g0, t0, ts)
    g[:, 0] = np.minimum(g[:, 0], 0.0)  # a guard above zero at t0 counts as zero there
    up = (g[:, :-1] <= 0) & (g[:, 1:] > 0)
    if not up.any():
        assert got_i == -1 and got_t == t_stop
        return
    k = int(np.nonzero(up.any(axis=0))[0][0])

    def root(i):
        if g[i, k] == 0 and k == 0 and _guards_dense(GVc, lam, GP, jwh, g0, t0,
                                                     np.array([t0]))[i, 0] > 0:
            return t0
        return brentq(lambda t: _guards_dense(GVc, lam, GP, jwh, g0, t0, np.array([t]))[i, 0],
                      ts[k], ts[k + 1], xtol=1e-14)

    roots = {int(i): root(int(i)) for i in np.nonzero(up[:, k])[0]}
    want = min(roots.values())
    assert got_i in roots and roots[got_i] == pytest.approx(want, abs=1e-9)
    assert got_t == pytest.approx(want, abs=1e-9)


def test_an_orbit_of_two_identical_cycles_is_reported_as_one_cycle(monkeypatch):
    """Where the one-cycle shooting stalls (an event at a rounding's edge changes the
    switching sequence between iterations) the two-cycle shooting finds the same orbit
    twice over: it is reported as the one-cycle orbit it is, not as a subharmonic.
    Reference: the same circuit's one-cycle solve (the stall forced here by making the
    one-cycle shooting report no convergence)."""
    sup, dim = Supply(), DimmerSpec("leading-edge", conduction_deg=90.0, switch="triac")
    loads = [LoadGroup("dropper", 5.0, count=10)]
    want = solve_circuit(sup, dim, loads, extras=False, memo=False)
    real = pwl.Engine.periodic

    def stalls_at_one_cycle(self, cycles, x0, disc0, *a, **k):
        tr, it, ok = real(self, cycles, x0, disc0, *a, **k)
        return tr, it, ok and cycles > 1

    monkeypatch.setattr(pwl.Engine, "periodic", stalls_at_one_cycle)
    got = solve_circuit(sup, dim, loads, extras=False, memo=False)
    assert got.period_cycles == 1 and "subharmonic" not in got.flags
    i1 = abs(want.current_phasors_a[1])
    assert np.max(np.abs(got.current_phasors_a - want.current_phasors_a)) < 1e-6 * i1
