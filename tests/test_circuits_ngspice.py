"""pqcalc's steady-state solver against ngspice on the reference cases.

Source of the check values: ngspice (Berkeley SPICE3 descendant), transient analysis with
reltol 1e-4 and a 2 us step, last cycle after settling; netlists written by
``tests/ngspice/harness.py`` from the case description. Besides the issue's reference
cases, four cases of the bulk-capacitor lamp with its constant-power converter (ngspice: a
behavioural source ``i = P / v``; pqcalc: the chord interpolant of ``P / v``) check the
converter model from outside, and two of the sine-following lamp with its default parts
behind a leading edge (ngspice: a behavioural piecewise-linear regulator) check the exact
spectra: its input capacitor's charging pulse at each firing lasts about 10 us, under two
cells of a 4096-point grid. Both sides are integrated without a grid: ngspice's harmonics
and rms over the straight lines between its own time points
(:func:`tests.ngspice.harness.pwl_figures`), pqcalc's in closed form over its segments
(``Solution.current_phasors_a``, ``Solution.i_rms_a``). Acceptance: every harmonic 1..50
within 1 % of the fundamental, Irms within 1 % (the project's acceptance criterion; the
remaining differences are the exponential diode of ngspice against pqcalc's piecewise-linear
one, within about 15 mV between 10 mA and 0.5 A, and ngspice's switch ramps of 0.1 to 1 us).
"""

from __future__ import annotations

import numpy as np
import pytest

from pqcalc.circuits import DimmerSpec, LoadGroup, Supply, solve_circuit
from pqcalc.spectrum import spectrum
from tests.ngspice.harness import (  # noqa: F401
    CP_POWER_W,
    SF_POWER_W,
    all_cases,
    loads_for,
    ngspice_available,
    run_all,
)

#: cases where pqcalc and ngspice differ by more than the criterion, kept visible as
#: expected failures (strict: a fixed case fails until it is removed from here). Empty since
#: the reference diode's forward drop matches pqcalc's (see harness.DIODE_MODEL); measured
#: worst case now 0.89 % of I1 (bulk capacitor behind a 45 deg trailing edge, where
#: ngspice's switch ramps over 0.1 us and pqcalc's opens at once).
KNOWN_DEVIATIONS: set[str] = set()
CASES = [pytest.param(c, id=c.id, marks=pytest.mark.xfail(
    strict=True, reason="known deviation from ngspice, see KNOWN_DEVIATIONS"))
    if c.id in KNOWN_DEVIATIONS else pytest.param(c, id=c.id) for c in all_cases()]
POWER_W = {"resistive": 100.0, "bulk-cap": 5.0, "dropper": 2.0, "bulk-cap-cp": CP_POWER_W,
           "sine-follow": SF_POWER_W}


@pytest.fixture(scope="module")
def references(ngspice_available):  # noqa: F811
    return run_all(all_cases(), workers=2)


def _pqcalc(case):
    sup = Supply(case.v_rms, case.f_hz, case.source_r_ohm, case.source_l_h,
                 source_damping_ohm=case.damping_ohm)
    params = {"r_on_ohm": case.switch_r_on_ohm, "r_off_ohm": case.switch_r_off_ohm}
    if case.kind == "trailing-edge":
        params["turn_off_s"] = 0.0
    dim = DimmerSpec(case.kind, conduction_deg=case.conduction_deg, switch="transistor",
                     params=params)
    model = "bulk-cap" if case.model == "bulk-cap-cp" else case.model
    sol = solve_circuit(sup, dim, [LoadGroup(model, POWER_W[case.model],
                                             params=loads_for(case))], extras=False)
    return sol


def errors(case, sol, ref) -> tuple[float, int, float, float]:
    """Largest harmonic error 1..50 [fraction of I1] and its order, Irms and power errors
    [fraction] of pqcalc's exact figures against ngspice's integrated ones."""
    last = ref["last_exact"]
    i1 = last["i_h_a"][1]
    err = np.abs(np.abs(sol.current_phasors_a[1:51]) - last["i_h_a"][1:51]) / i1
    return (float(np.max(err)), int(np.argmax(err)) + 1, sol.i_rms_a / last["i_rms_a"] - 1,
            sol.p_w / last["p_w"] - 1)


@pytest.mark.ngspice
@pytest.mark.parametrize("case", CASES)
def test_against_ngspice(case, references):
    ref = references[case.id]
    sol = _pqcalc(case)
    assert sol.converged and sol.period_cycles == 1
    last, before = ref["last_exact"], ref["before_exact"]
    i1 = last["i_h_a"][1]
    # the reference itself has settled: its last two cycles agree to 0.5 % of I1 (half the
    # acceptance tolerance, so an unsettled reference cannot pass or fail a case by itself)
    assert np.max(np.abs(last["i_h_a"][1:51] - before["i_h_a"][1:51])) < 5e-3 * i1
    # ngspice: every harmonic 1..50 within 1 % of the fundamental (acceptance criterion)
    harm, order, irms, _p = errors(case, sol, ref)
    assert harm < 0.01, f"order {order}: {100 * harm:.2f} %"
    # ngspice: Irms within 1 %
    assert abs(irms) < 0.01, f"Irms {100 * irms:+.2f} %"
    # the sampled waveform agrees with the exact figures it carries: its DFT at orders
    # 0..50 (closed form: the correction added to the cell means), rms and power (the same
    # numbers, by construction of SolvedWaveform)
    s = spectrum(sol.waveform, 50)
    assert np.allclose(s.current_a, sol.current_phasors_a, rtol=0, atol=1e-9 * i1)
    assert s.i_rms_a == sol.i_rms_a and s.p_w == sol.p_w
