"""pqcalc's steady-state solver against ngspice on the reference cases.

Source of the check values: ngspice (Berkeley SPICE3 descendant), transient analysis with
reltol 1e-4 and a 2 us step, last cycle after settling; netlists written by
``tests/ngspice/harness.py`` from the case description. Besides the issue's reference
cases, four cases of the bulk-capacitor lamp with its constant-power converter (ngspice: a
behavioural source ``i = P / v``; pqcalc: the chord interpolant of ``P / v``) check the
converter model from outside. Acceptance: every harmonic 1..40
within 1 % of the fundamental, Irms within 1 % (the project's acceptance criterion; the
remaining differences are the exponential diode of ngspice against pqcalc's piecewise-linear
one, within about 15 mV between 10 mA and 0.5 A, and ngspice's switch ramps of 0.1 to 1 us).
"""

from __future__ import annotations

import numpy as np
import pytest

from pqcalc.circuits import DimmerSpec, LoadGroup, Supply, solve_circuit
from pqcalc.spectrum import spectrum
from pqcalc.waveform import Waveform
from tests.ngspice.harness import (  # noqa: F401
    CP_POWER_W,
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
POWER_W = {"resistive": 100.0, "bulk-cap": 5.0, "dropper": 2.0, "bulk-cap-cp": CP_POWER_W}


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


@pytest.mark.ngspice
@pytest.mark.parametrize("case", CASES)
def test_against_ngspice(case, references):
    ref = references[case.id]
    sol = _pqcalc(case)
    assert sol.converged and sol.period_cycles == 1
    n = ref["last"][0].size
    w_ref = Waveform(ref["last"][0], n * case.f_hz, case.f_hz, ref["last"][1], 1)
    w_prev = Waveform(ref["before"][0], n * case.f_hz, case.f_hz, ref["before"][1], 1)
    s_ref, s_prev, s = spectrum(w_ref, 40), spectrum(w_prev, 40), spectrum(sol.waveform, 40)
    i1 = s_ref.i1_a
    # the reference itself has settled: its last two cycles agree to 0.5 % of I1 (half the
    # acceptance tolerance, so an unsettled reference cannot pass or fail a case by itself)
    assert np.max(np.abs(s_ref.i_h_a[1:41] - s_prev.i_h_a[1:41])) < 5e-3 * i1
    # ngspice: every harmonic 1..40 within 1 % of the fundamental (acceptance criterion)
    err = np.abs(s.i_h_a[1:41] - s_ref.i_h_a[1:41]) / i1
    assert np.max(err) < 0.01, f"order {int(np.argmax(err)) + 1}: {100 * np.max(err):.2f} %"
    # ngspice: Irms within 1 %
    assert sol.waveform.i_rms_a == pytest.approx(w_ref.i_rms_a, rel=0.01)
