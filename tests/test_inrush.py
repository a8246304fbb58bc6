"""Inrush by pulse: the switch-on transient, cable impedance, breaker pulse withstand.

Sources of the check values are named beside each check: closed forms of an R-C circuit
switched on at the voltage crest, ngspice for an R-L-C case, published conductor
resistances (IEC 60228, NEC Chapter 9 Table 8), the IEC 60898-1 instantaneous bands.
"""

from __future__ import annotations

import math
import os
import subprocess
import tempfile

import numpy as np
import pytest

from pqcalc.circuits import DimmerSpec, LoadGroup, Supply, solve_circuit
from pqcalc.circuits.drivers import DIODE_R_ON_OHM, DIODE_V_ON_V
from pqcalc.circuits.inrush import (
    awg_area_mm2,
    cable_impedance,
    pulse_figures,
    switch_on_transient,
    worst_switch_deg,
)
from pqcalc.errors import InputError
from pqcalc.standards.breakers import (
    judge_pulse,
    table_from_data,
    withstand_table,
)
from tests.ngspice.harness import DIODE_MODEL, ngspice_available  # noqa: F401

V_PK = math.sqrt(2) * 230.0
#: the bulk-capacitor lamp's conducting path at the crest: two bridge diodes (piecewise
#: linear, 0.65 V + 0.08 ohm each) and the plain switch's on resistance (0.05 ohm)
V_DIODES = 2 * DIODE_V_ON_V
R_PATH = 2 * DIODE_R_ON_OHM + 0.05


def _bulk(count: int = 1, **params) -> LoadGroup:
    return LoadGroup("bulk-cap", 9.0, count, tuple(params.items()))


# ---------------------------------------------------------------------- pulse figures
def test_pulse_figures_of_closed_form_shapes():
    # closed forms: i = I e^{-t/tau} has width at half peak tau ln 2 and I2t = I^2 tau / 2
    # (to its end at 1 % of the peak: I^2 tau / 2 (1 - 1e-4)); a half sine from its crest
    # (i = I cos wt) has width at half peak T / 6 to the right of the crest
    tau, peak = 100e-6, 40.0
    t = np.linspace(0.0, 2e-3, 200001)
    p = pulse_figures(t, peak * np.exp(-t / tau))
    assert p.peak_a == pytest.approx(peak, rel=1e-12)
    assert p.width_s == pytest.approx(tau * math.log(2), rel=1e-6)
    assert p.i2t_a2s == pytest.approx(peak**2 * tau / 2 * (1 - 1e-4), rel=1e-6)
    T = 0.02
    p = pulse_figures(t * 5, -3.0 * np.cos(2 * np.pi * t * 5 / T))  # a negative lobe
    assert p.peak_a == pytest.approx(3.0, rel=1e-12)
    assert p.width_s == pytest.approx(T / 6, rel=1e-6)
    # a smooth peak between samples: the parabola finds it (sin peak at 1/4 of a period)
    tt = np.linspace(0.0, 0.01, 37)
    p = pulse_figures(tt, np.sin(2 * np.pi * 50 * tt))
    assert p.peak_a == pytest.approx(1.0, abs=2e-4)


# ---------------------------------------------------------------------- closed forms
def test_rc_switched_at_crest_against_closed_form():
    """A capacitor C switched on through R at the voltage peak: i = (V/R) e^{-t/RC}, peak
    V/R, width at half peak RC ln 2, I2t = V^2 C / (2R) (closed form of the first-order
    circuit with a step source). Here V is the crest less the two diodes' threshold and R
    the series resistor, the diodes' and the switch's resistance (the piecewise-linear
    model's exact path). The closed form holds the source at its crest; the mains falls by
    (w t)^2 / 2 over the pulse (wRC = 0.03): width and I2t agree to 0.5 %; the peak, at the
    switch-on itself, to 1e-6."""
    r_s, c = 10.0, 9e-6
    res = switch_on_transient(Supply(230.0, 50.0, 0.0, 0.0), [_bulk(r_series_ohm=r_s,
                                                                   c_bulk_f=c)])
    v, r = V_PK - V_DIODES, r_s + R_PATH + 1e-6  # 1e-6: the solver's link to an ideal source
    p = res.groups[0].pulse_one
    assert p.peak_a == pytest.approx(v / r, rel=1e-6)
    assert p.width_s == pytest.approx(r * c * math.log(2), rel=5e-3)
    assert p.i2t_a2s == pytest.approx(v * v * c / (2 * r), rel=5e-3)
    assert res.circuit.peak_a == pytest.approx(p.peak_a, rel=1e-9)  # one lamp: the circuit


def test_rc_switched_at_crest_against_exact_sine_solution():
    """The same circuit driven by the true mains from its crest, v = Vpk cos(w t) - Vd:
    R C dvc/dt + vc = v has the exact solution vc = Vpk (cos wt + wRC sin wt) / (1 + (wRC)^2)
    - Vd - K e^{-t/RC}, K = Vpk / (1 + (wRC)^2) - Vd (vc(0) = 0), and i = (v - vc) / R while
    the bridge conducts. The solver is exact per segment: the current agrees to 1e-6 of the
    peak and the I2t to the sampling grid's trapezoid error (below 1e-4)."""
    r_s, c = 10.0, 9e-6
    res = switch_on_transient(Supply(230.0, 50.0, 0.0, 0.0),
                              [_bulk(r_series_ohm=r_s, c_bulk_f=c, r_bleed_ohm=1e12)])
    r = r_s + R_PATH + 1e-6
    w = 2 * np.pi * 50.0
    a = w * r * c
    t = res.t_s
    vsrc = V_PK * np.cos(w * t) - V_DIODES
    K = V_PK / (1 + a * a) - V_DIODES
    vc = V_PK * (np.cos(w * t) + a * np.sin(w * t)) / (1 + a * a) - V_DIODES \
        - K * np.exp(-t / (r * c))
    i_exact = (vsrc - vc) / r
    on = t < 0.3e-3  # well inside the pulse (it ends near 0.4 ms)
    assert np.max(np.abs(res.i_a[on] - i_exact[on])) < 1e-6 * res.circuit.peak_a
    end = res.circuit.duration_s
    tt = np.linspace(0.0, end, 400001)
    ie = np.interp(tt, t, i_exact)
    ve = V_PK * np.cos(w * tt) - V_DIODES
    vce = V_PK * (np.cos(w * tt) + a * np.sin(w * tt)) / (1 + a * a) - V_DIODES \
        - K * np.exp(-tt / (r * c))
    ie = np.maximum((ve - vce) / r, 0.0)
    i2t = float(np.sum(np.diff(tt) * 0.5 * (ie[:-1] ** 2 + ie[1:] ** 2)))
    assert res.circuit.i2t_a2s == pytest.approx(i2t, rel=1e-4)


def test_crest_is_the_worst_instant():
    """worst_switch_deg (the geometry of the dimmer's conduction window) and the solver:
    over switch-on instants 60..120 deg the crest gives the largest peak for the bulk
    capacitor with and without loop inductance, over- and under-damped (10 lamps)."""
    for count, l_h in ((1, 0.0), (1, 50e-6), (10, 70e-6)):
        sup = Supply(230.0, 50.0, 0.3, l_h)
        peaks = {d: switch_on_transient(sup, [_bulk(count)], switch_deg=d).circuit.peak_a
                 for d in (60.0, 80.0, 85.0, 90.0, 95.0, 100.0, 120.0)}
        assert max(peaks, key=peaks.get) == 90.0, (count, l_h, peaks)
    assert worst_switch_deg(None) == 90.0
    assert worst_switch_deg(DimmerSpec("leading-edge", conduction_deg=60.0)) == 120.0
    assert worst_switch_deg(DimmerSpec("leading-edge", conduction_deg=150.0)) == 90.0
    assert worst_switch_deg(DimmerSpec("trailing-edge", conduction_deg=45.0)) == 45.0


def test_loop_impedance_lowers_the_peak_and_widens_the_pulse():
    """Physics: more series resistance, a lower and wider pulse; lamps sharing the loop draw
    less each (the circuit's sum is below count x a lamp alone)."""
    sup = Supply(230.0, 50.0)
    alone = switch_on_transient(sup, [_bulk(1)]).circuit
    cab = cable_impedance(20.0, 1.5)
    one = switch_on_transient(sup, [_bulk(1)], series_r_ohm=cab.r_ohm,
                              series_l_h=cab.l_h).circuit
    assert one.peak_a < alone.peak_a and one.width_s > alone.width_s
    many = switch_on_transient(sup, [_bulk(18)], series_r_ohm=cab.r_ohm, series_l_h=cab.l_h)
    assert many.circuit.peak_a < 18 * one.peak_a
    assert many.groups[0].pulse_one.peak_a * 18 == pytest.approx(many.circuit.peak_a,
                                                                  rel=1e-9)


# ---------------------------------------------------------------------- ngspice
def _ngspice_rlc(count: int, r_loop: float, l_loop: float, damping: float) -> np.ndarray:
    """ngspice: ``count`` bulk-capacitor lamps (10 ohm, 9 uF, 1 Mohm bleed, bridge of the
    harness's diode) behind a 0.05 ohm switch and a loop R-L (damped by ``damping``),
    switched on at the crest of 230 V 50 Hz with the capacitors discharged."""
    m = count
    net = "\n".join([
        "* inrush R-L-C at the crest",
        f"Vs src 0 SIN(0 {V_PK:.9g} 50 0 0 90)",
        f"Rs src a {r_loop:g}",
        f"Ls a b {l_loop:g}",
        f"Rd a b {damping:g}",
        "Vsense b c DC 0",
        "Rsw c d 0.05",
        f"Rf d ac {10.0 / m:.9g}",
        f"D1 ac p DR m={m}", f"D2 0 p DR m={m}", f"D3 n ac DR m={m}", f"D4 n 0 DR m={m}",
        "Rshp p 0 1e9", "Rshn n 0 1e9", DIODE_MODEL,
        f"Cb p n {9e-6 * m:.9g} IC=0",
        f"Rbl p n {1e6 / m:.9g}",
        ".options reltol=1e-5",
        ".control", "set wr_singlescale",
        "tran 0.05u 2m 0 0.05u uic",
        "wrdata OUT i(vsense)", "quit", ".endc", ".end", ""])
    with tempfile.TemporaryDirectory() as d:
        out = os.path.join(d, "out.txt")
        cir = os.path.join(d, "c.cir")
        with open(cir, "w") as fh:
            fh.write(net.replace("OUT", out))
        subprocess.run(["ngspice", "-b", cir], capture_output=True, text=True, timeout=120)
        return np.loadtxt(out)


def test_rlc_switch_on_against_ngspice(ngspice_available):  # noqa: F811
    """An under-damped R-L-C (ten lamps behind 0.3 ohm and 70 uH) switched on at the crest:
    pqcalc against ngspice (transient, 0.05 us step, reltol 1e-5). Acceptance 2 % on peak,
    width and I2t: ngspice's exponential diode differs from the piecewise-linear one by
    about 15 mV, and its 1 pF junction and 1 Gohm shunts are absent in pqcalc."""
    count, r_loop, l_loop = 10, 0.3, 70e-6
    data = _ngspice_rlc(count, r_loop, l_loop, 100.0)
    t, first = np.unique(data[:, 0], return_index=True)  # breakpoints repeat a time
    ref = pulse_figures(t, data[first, 1])
    res = switch_on_transient(Supply(230.0, 50.0, r_loop, l_loop), [_bulk(count)])
    p = res.circuit
    assert p.peak_a == pytest.approx(ref.peak_a, rel=5e-3)
    assert p.width_s == pytest.approx(ref.width_s, rel=5e-3)
    assert p.i2t_a2s == pytest.approx(ref.i2t_a2s, rel=5e-3)
    assert ref.width_s < 1e-3  # a pulse of a fraction of a millisecond


# ---------------------------------------------------------------------- cables
def test_cable_resistance_against_published_values():
    # IEC 60228 class 1/2 plain copper 1.5 mm2: at most 12.1 ohm/km at 20 degC (from
    # memory); the resistivity of annealed copper (IEC 60028, 1.7241e-8 ohm m) on the
    # nominal area gives 11.49: below the standard's maximum, within 6 % of it (the
    # standard's value allows for stranding and area tolerance)
    c = cable_impedance(10.0, 1.5)
    assert c.r_conductor_ohm_per_m * 1e3 == pytest.approx(1.7241e-8 / 1.5e-6 * 1e3, rel=1e-9)
    assert 0.94 * 12.1 < c.r_conductor_ohm_per_m * 1e3 < 12.1
    assert c.r_ohm == pytest.approx(2 * 10.0 * c.r_conductor_ohm_per_m)  # line + neutral
    t = cable_impedance(10.0, 1.5, basis="iec60228", temperature_c=70.0)
    assert t.r_conductor_ohm_per_m * 1e3 == pytest.approx(12.1 * (1 + 0.00393 * 50), rel=1e-9)
    # NEC Chapter 9 Table 8, uncoated copper, solid, at 75 degC [ohm/kft] (from memory):
    # 14 AWG 3.07, 12 AWG 1.93, 10 AWG 1.21
    for awg, ohm_kft in ((14, 3.07), (12, 1.93), (10, 1.21)):
        c = cable_impedance(1000 * 0.3048, awg=awg, temperature_c=75.0)
        assert c.r_conductor_ohm_per_m * 304.8 == pytest.approx(ohm_kft, rel=0.01), awg
    # AWG areas (ASTM B258 formula; NEC Chapter 9 Table 8 lists 2.08, 3.31, 5.261 mm2)
    assert awg_area_mm2(14) == pytest.approx(2.08, rel=2e-3)
    assert awg_area_mm2(12) == pytest.approx(3.31, rel=2e-3)
    assert awg_area_mm2("10") == pytest.approx(5.261, rel=1e-3)
    # loop inductance: twice 0.08 mohm/m of one conductor at 50 Hz (common practice)
    assert cable_impedance(1.0, 2.5).l_h == pytest.approx(2 * 0.08e-3 / (2 * np.pi * 50))
    # aluminium: resistivity 2.8264e-8 ohm m (IEC 60889, from memory), 16 mm2 -> 1.77 ohm/km,
    # below IEC 60228's 1.91 ohm/km maximum for class 2 aluminium 16 mm2 (from memory)
    al = cable_impedance(1.0, 16.0, material="aluminium")
    assert 0.9 * 1.91 < al.r_conductor_ohm_per_m * 1e3 < 1.91


def test_cable_bad_input():
    with pytest.raises(InputError, match="length_m"):
        cable_impedance(None, 1.5)  # type: ignore[arg-type]
    with pytest.raises(InputError, match="length_m"):
        cable_impedance(0.0, 1.5)
    with pytest.raises(InputError, match="size_mm2 or awg"):
        cable_impedance(10.0)
    with pytest.raises(InputError, match="material"):
        cable_impedance(10.0, 1.5, material="silver")
    with pytest.raises(InputError, match="awg"):
        cable_impedance(10.0, awg="fourteen")
    with pytest.raises(InputError, match="iec60228"):
        cable_impedance(10.0, 1.7, basis="iec60228")


# ---------------------------------------------------------------------- withstand tables
def test_shipped_tables_follow_their_derivation():
    """IEC 60898-1 bands B 3-5, C 5-10, D 10-20 In (seen): each curve's last point is the
    lower band edge as a peak, sqrt(2) k_lo In; the shorter widths follow the equal-I2t law
    peak ~ width^-1/2 written in the file (computed), to its 4 printed digits."""
    for b, k_lo in (("B", 3.0), ("C", 5.0), ("D", 10.0)):
        t = withstand_table(b)
        assert t.unit == "x_in" and t.certainty == "computed"
        wa = t.width_s[-1]
        assert wa == pytest.approx(1 / 180)  # a 60 Hz half wave's width at half peak, T/3
        for w, p in zip(t.width_s, t.peaks, strict=True):
            assert p == pytest.approx(math.sqrt(2) * k_lo * math.sqrt(wa / w), rel=5e-4)
        # read back: at the anchor the peak-only rule's figure, e.g. B10: 42.4 A
        assert t.allowed_peak_a(wa, 10.0)[0] == pytest.approx(math.sqrt(2) * k_lo * 10,
                                                              rel=5e-4)


def test_interpolation_and_clamping():
    t = table_from_data({"width_s": [1e-4, 1e-3], "peak_a": [400.0, 100.0]})
    # log-log interpolation: a power law through both points, peak ~ w^(-log10 4)
    mid, how = t.allowed_peak_a(math.sqrt(1e-4 * 1e-3), 10.0)
    assert mid == pytest.approx(200.0, rel=1e-12) and how.startswith("interpolated")
    assert t.allowed_peak_a(1e-5, 10.0)[0] == 400.0  # narrower: the first width's peak
    assert t.allowed_peak_a(1e-2, 10.0)[0] == 100.0  # wider: the last width's peak


def test_table_validation_names_the_field():
    with pytest.raises(InputError, match=r"peak_a\[2\]: expected the allowed peak "
                                         r"non-increasing with width \(monotonic\)"):
        table_from_data({"width_s": [1e-4, 2e-4, 5e-4], "peak_a": [300, 200, 250]})
    with pytest.raises(InputError, match=r"width_s\[1\]: expected widths strictly increasing"):
        table_from_data({"width_s": [2e-4, 1e-4], "peak_a": [300, 200]})
    with pytest.raises(InputError, match=r"width_s\[0\]: expected a positive number"):
        table_from_data({"width_s": [-1e-4, 1e-4], "peak_a": [300, 200]})
    with pytest.raises(InputError, match=r"peak_x_in\[1\]: expected a positive number"):
        table_from_data({"width_s": [1e-4, 2e-4], "peak_x_in": [30, 0]})
    with pytest.raises(InputError, match=r"peak_a: expected 2 values"):
        table_from_data({"width_s": [1e-4, 2e-4], "peak_a": [300]})
    with pytest.raises(InputError, match="one of peak_a"):
        table_from_data({"width_s": [1e-4], "peak_a": [3], "peak_x_in": [3]})
    with pytest.raises(InputError, match=r"^plan.toml:12: circuit CL-1: width_s"):
        table_from_data({"width_s": "short", "peak_a": [3]}, "plan.toml:12: circuit CL-1: ")


def test_breaker_types():
    with pytest.raises(InputError, match="expected one of B, C, D, UL489"):
        withstand_table("K")
    with pytest.raises(InputError, match="instantaneous_pickup"):
        withstand_table("UL489")
    ul = judge_pulse("UL489", 20.0, 10.0, 1e-4, pickup_x_in=8.0)
    # derived like the IEC curves from the pickup: sqrt(2) 8 x 20 A at the anchor width
    assert ul.instantaneous_peak_a == pytest.approx(math.sqrt(2) * 8 * 20)
    assert ul.allowed_peak_a == pytest.approx(math.sqrt(2) * 8 * 20 * math.sqrt(1 / 180 / 1e-4))
    # a maker's table passed in replaces the shipped one
    mk = judge_pulse("B", 10.0, 20.0, 2e-4, table={"width_s": [1e-4, 1e-3],
                                                   "peak_a": [600.0, 300.0]})
    assert mk.table == "maker's table" and mk.max_drivers == int(mk.allowed_peak_a // 20.0)


def test_downlight_count_on_b10_by_pulse_against_peak_only():
    """The 9 W bulk-capacitor downlight (the school demo's classroom fixture, model
    'bulk-cap'), 18 on a 10 A type-B breaker behind a 20 m run of 1.5 mm2 copper. Today's
    rule (the summed peak against the lower edge of the IEC 60898-1 band, sqrt(2) 3 In =
    42.4 A, per-lamp peak from the steady-state solve's inrush figure) allows 3; judged by
    peak and width the same lamps allow several times more (expected by the breaker
    makers' published driver counts: common practice)."""
    sup = Supply(230.0, 50.0)
    today = solve_circuit(sup, DimmerSpec("leading-edge", conduction_deg=180.0),
                          [_bulk(18)]).groups[0].stresses.inrush_peak_a
    assert today is not None
    n_today = int(math.sqrt(2) * 3 * 10 // today)
    assert n_today == 3
    cab = cable_impedance(20.0, 1.5)
    res = switch_on_transient(sup, [_bulk(18)], DimmerSpec("leading-edge",
                                                           conduction_deg=180.0),
                              series_r_ohm=cab.r_ohm, series_l_h=cab.l_h)
    one = res.groups[0].pulse_one
    j = judge_pulse("B", 10.0, one.peak_a, one.width_s)
    assert j.peak_only_drivers is not None and j.peak_only_drivers >= n_today
    assert j.max_drivers is not None and j.max_drivers >= 3 * n_today
    # the circuit itself (its summed pulse) within the allowance at its own width
    assert res.circuit.peak_a <= j.allowed_peak_a
    # without the cable (the generic source alone) the pulse is judged the same way and
    # the same lamp still allows several times the peak-only count
    bare = switch_on_transient(sup, [_bulk(18)]).groups[0].pulse_one
    jb = judge_pulse("B", 10.0, bare.peak_a, bare.width_s)
    assert bare.peak_a == pytest.approx(today, rel=1e-6)  # same solver, same impedance
    assert jb.max_drivers >= 3 * n_today
