"""Dimming curves: closed forms of the resistive load, flags of the curve on known shapes,
behaviour that must emerge from the lamp circuits.

Sources: the closed forms of a resistive load behind an ideal phase cut (power fraction
1 - a/pi + sin(2a)/(2 pi), Fourier coefficients of the cut sine, derived in the comments);
the flag thresholds are common practice, defined once in ``pqcalc.circuits.curve``.
"""

from __future__ import annotations

import numpy as np
import pytest

from pqcalc.circuits import DimmerSpec, LoadGroup, Supply, dimming_curve, solve_circuit
from pqcalc.circuits.curve import (
    CURVE_FLAGS,
    DARK_LIGHT,
    NO_SOLUTION,
    TRIAC_CONDUCTION_RANGE_DEG,
    conduction_range_deg,
    curve_flags,
)
from pqcalc.errors import ConvergenceError, InputError

V, F = 230.0, 50.0
P_LAMP = 60.0
R = V * V / P_LAMP  # the resistive model's default hot resistance: rated power at rated volts
IDEAL = Supply(V, F, 0.0, 0.0)  # no source impedance: the closed forms hold exactly


def _power_fraction(cond_deg):
    # closed form: mean power of a resistive load behind an ideal cut at a = pi - conduction,
    # over V^2/R: 1 - a/pi + sin(2a)/(2 pi)
    a = np.pi - np.radians(cond_deg)
    return 1 - a / np.pi + np.sin(2 * a) / (2 * np.pi)


def _cut_sine_thd(cond_deg, max_order=40):
    # closed form: Fourier coefficients of sin(t) on (a, pi) (odd half-wave symmetry, odd n):
    # b_n = (2/pi) int_a^pi sin t sin nt dt, a_n = (2/pi) int_a^pi sin t cos nt dt
    a = np.pi - np.radians(cond_deg)

    def b(n):
        if n == 1:
            return (2 / np.pi) * ((np.pi - a) / 2 + np.sin(2 * a) / 4)
        return (2 / np.pi) * (-np.sin((n - 1) * a) / (2 * (n - 1))
                              + np.sin((n + 1) * a) / (2 * (n + 1)))

    def c(n):
        # sin t cos nt = (sin (n+1)t - sin (n-1)t) / 2; for odd n, cos((n +- 1) pi) = 1
        if n == 1:
            return (2 / np.pi) * (-np.sin(a) ** 2 / 2)
        return (1 / np.pi) * ((np.cos((n + 1) * a) - 1) / (n + 1)
                              - (np.cos((n - 1) * a) - 1) / (n - 1))

    mags = {n: np.hypot(b(n), c(n)) for n in range(1, max_order + 1, 2)}
    return np.sqrt(sum(m * m for n, m in mags.items() if n > 1)) / mags[1]


@pytest.fixture(scope="module")
def resistive_curve():
    # leading-edge transistor: an ideal cut at the set angle (no triac physics)
    return dimming_curve(IDEAL, "leading-edge", [LoadGroup("resistive", P_LAMP)], steps=5,
                         switch="transistor", conduction_range=(30.0, 150.0))


def test_resistive_curve_power_current_pf_closed_forms(resistive_curve):
    c = resistive_curve
    assert list(c.settings) == [30.0, 60.0, 90.0, 120.0, 150.0]
    frac = _power_fraction(c.settings)
    # closed form P = V^2/R x fraction. Tolerance: the sampled edges (two per cycle, each one
    # sample of 2 sin^2(a) V^2/R in 4096: up to sin^2(a)/1024 of V^2/R) and the switch's
    # 0.05 ohm (6e-5 of R)
    a = np.pi - np.radians(c.settings)
    tol = V * V / R * (np.sin(a) ** 2 / 1024 + 1e-4)
    assert np.all(np.abs(c.p_w - V * V / R * frac) <= tol)
    # closed form: I_rms = (V/R) sqrt(fraction); PF of a resistor = sqrt(fraction)
    assert np.allclose(c.i_rms_a, V / R * np.sqrt(frac), rtol=2e-3)
    assert np.allclose(c.pf, np.sqrt(frac), rtol=2e-3)
    # REFERENCES closed form at a = 90 deg: PF = 0.7071
    assert c.pf[2] == pytest.approx(0.7071, abs=2e-3)
    # the measured conduction equals the set one (one sample of 4096 per cycle: 0.09 deg)
    assert np.allclose(c.conduction_deg, c.settings, atol=0.2)


def test_resistive_curve_thd_closed_form(resistive_curve):
    c = resistive_curve
    # THD over orders 2..40 from the closed-form Fourier coefficients of the cut sine; the
    # sampled edge and the 0.05 ohm switch shift it by well under 0.5 % of the fundamental
    for k, cond in enumerate(c.settings):
        assert c.thd_i[k] == pytest.approx(_cut_sine_thd(cond), abs=5e-3), cond
    # sanity of the closed form itself against REFERENCES (a = 90 deg: I3/I1 = 53.70 %,
    # I5/I1 = I7/I1 = 17.90 %): THD to h40 is below the all-orders 65.05 %
    assert 0.60 < _cut_sine_thd(90.0) < 0.6505


def test_resistive_curve_light_flicker_and_flags(resistive_curve):
    c = resistive_curve
    L = c.light[0]
    # a filament's light rises strictly with the setting (L ~ P^2.1, common practice)
    assert np.all(np.diff(L) > 0)
    # full-ish output: 150 deg gives most of the light; the light falls faster than power
    assert L[-1] > 0.8 and np.all(L <= _power_fraction(c.settings) + 1e-3)
    # ripple at twice mains frequency (common practice), smoothed by thermal inertia
    assert np.allclose(c.modulation_frequency_hz[0], 2 * F)
    # thermal inertia keeps a filament's percent flicker far below the 100 % of light that
    # would follow the instantaneous power; dimming deepens the cut, and the ripple
    assert np.all(c.percent_flicker[0] < 0.5)
    assert np.all(np.diff(c.percent_flicker[0]) < 0)
    # the smoothest load: no curve flags
    assert c.curve_flags == ()
    assert all(fl == () for fl in c.flags)
    assert c.period_cycles.tolist() == [1] * 5


def test_full_default_curve_shape_and_json():
    c = dimming_curve(Supply(120.0, 60.0), "trailing-edge", [LoadGroup("resistive", 40.0)])
    lo, hi = conduction_range_deg("trailing-edge")
    # 21 settings evenly spaced over the trailing-edge dimmer's trim range (its defaults)
    assert c.n_settings == 21 and c.settings[0] == lo and c.settings[-1] == hi
    assert np.allclose(np.diff(c.settings), (hi - lo) / 20)
    assert c.curve_flags == ()  # filament: smooth (see the thresholds' derivation)
    d = c.to_dict()
    assert len(d["settings"]) == 21 and d["axis"] == "conduction"
    row = d["settings"][-1]
    # at 60 Hz the ripple sits at 120 Hz (common practice: twice mains frequency)
    assert row["modulation_frequency_hz"] == [pytest.approx(120.0)]
    assert row["light_pct"][0] == pytest.approx(100 * c.light[0, -1])
    assert row["thd_i_pct"] == pytest.approx(100 * c.thd_i[-1])


def test_bulk_cap_keeps_full_output_then_drops_out():
    # behaviour that must emerge (issue): a bulk-capacitor lamp keeps full output over most
    # of the leading-edge range, then drops out. Converter model, ideal leading-edge cut.
    c = dimming_curve(Supply(V, F), "leading-edge", [LoadGroup("bulk-cap", 5.0)], steps=11,
                      switch="transistor")
    L = c.light[0]
    full = L > 0.95
    assert full.sum() >= 0.6 * L.size  # most of the range at (near) full output
    assert L[0] < DARK_LIGHT  # the lowest setting: the converter has locked out
    assert "drop-out" in c.curve_flags and "pop-on" in c.curve_flags
    assert "dead-travel" in c.curve_flags  # the knob does nothing over the full-output part
    assert any("drop-out" in f for f in c.flags)  # the solver saw the converter stop


def test_knob_axis_triac_curve():
    # knob positions 0..1 through the triac's RC network and trigger diode
    c = dimming_curve(Supply(V, F), "leading-edge", [LoadGroup("resistive", P_LAMP)],
                      steps=5, axis="knob")
    assert list(c.settings) == [0.0, 0.25, 0.5, 0.75, 1.0]
    # raising the knob lowers the timing resistance: the triac fires earlier, the
    # conduction grows (the firing network's physics, not an assumed map)
    assert np.all(np.diff(c.conduction_deg) > 0)
    assert np.all(np.diff(c.light[0]) >= -1e-9)
    assert c.conduction_deg[-1] > 150.0  # near full at the knob's top (r_min 3.3 kohm)


def test_triac_range_and_none():
    assert conduction_range_deg("leading-edge", "triac") == TRIAC_CONDUCTION_RANGE_DEG
    assert conduction_range_deg("leading-edge", "transistor",
                                dimmer_params_={"min_conduction_deg": 5.0}) == (5.0, 170.0)
    with pytest.raises(InputError, match="needs a dimmer"):
        dimming_curve(IDEAL, "none", [LoadGroup("resistive", 60.0)])


# ------------------------------------------------------------- flags on known shapes
S21 = np.linspace(20.0, 170.0, 21)


def test_flags_smooth_closed_form_curve_has_none():
    # a filament's light from the closed-form power, L = fraction^2.1 (common practice)
    L = _power_fraction(S21) ** 2.1
    assert curve_flags(S21, L) == ((), ())


def test_flags_step_curve():
    # dark below 50 deg, full from 50 deg: pop-on raising, drop-out lowering, the top and
    # the bottom are dead travel
    L = np.where(S21 >= 50.0, 1.0, 0.0)
    flags, notes = curve_flags(S21, L)
    assert flags == ("pop-on", "drop-out", "dead-travel")
    assert any("from 42.5 deg to 50 deg" in n for n in notes)
    assert sum(n.startswith("dead-travel") for n in notes) == 2


def test_flags_non_monotonic_and_thresholds():
    L = np.linspace(0.02, 1.0, 21)
    # a smooth ramp of 4.9 % per step: nothing
    assert curve_flags(S21, L)[0] == ()
    # a dip of 3 % of full output below the light of a lower setting: non-monotonic
    Ld = L.copy()
    Ld[10] = Ld[9] - 0.03
    assert curve_flags(S21, Ld)[0] == ("non-monotonic",)
    # a dip of 1 % (under the 2 % threshold): not flagged
    Ld[10] = Ld[9] - 0.01
    assert curve_flags(S21, Ld)[0] == ()
    # a lowest lit step of 5 % from dark is not a pop-on (below 10 %); 12 % is
    Lp = np.concatenate([np.zeros(5), np.linspace(0.05, 1.0, 16)])
    assert "pop-on" not in curve_flags(S21, Lp)[0]
    Lp = np.concatenate([np.zeros(5), np.linspace(0.12, 1.0, 16)])
    assert "pop-on" in curve_flags(S21, Lp)[0]


def test_flags_coarse_curve_does_not_mistake_slope_for_a_jump():
    # five settings of the smooth filament curve: steps of 37.5 deg change the light by up to
    # 0.5; the thresholds grow with the step, so the smooth curve is not flagged
    s5 = np.linspace(20.0, 170.0, 5)
    assert curve_flags(s5, _power_fraction(s5) ** 2.1)[0] == ()


def test_flags_skip_unsolved_settings_and_use_solver_dropout():
    L = np.linspace(0.3, 1.0, 21)
    L[4] = np.nan
    assert curve_flags(S21, L)[0] == ()
    fl = [()] * 21
    fl[0] = ("drop-out",)
    assert curve_flags(S21, np.linspace(0.3, 1.0, 21), fl)[0] == ("drop-out",)
    assert set(CURVE_FLAGS) == {"pop-on", "drop-out", "dead-travel", "non-monotonic"}


def test_no_solution_setting_is_flagged(monkeypatch):
    # a setting whose solve fails is flagged and NaN; the others stay
    import pqcalc.circuits.curve as curve

    real = curve.solve_circuit

    def flaky(supply, spec, groups, spc):
        if spec.conduction_deg == 90.0:
            raise ConvergenceError("no periodic steady state (test)")
        return real(supply, spec, groups, spc)

    monkeypatch.setattr(curve, "solve_circuit", flaky)
    c = dimming_curve(IDEAL, "trailing-edge", [LoadGroup("resistive", P_LAMP)], steps=3,
                      conduction_range=(60.0, 120.0))
    assert c.flags[1] == (NO_SOLUTION,) and np.isnan(c.p_w[1]) and np.isfinite(c.p_w[0])
    assert c.to_dict()["settings"][1]["p_w"] is None
    assert any(NO_SOLUTION in n for n in c.notes)

    def never(*a):
        raise ConvergenceError("never")

    monkeypatch.setattr(curve, "solve_circuit", never)
    with pytest.raises(ConvergenceError, match="no setting converged"):
        dimming_curve(IDEAL, "trailing-edge", [LoadGroup("resistive", P_LAMP)], steps=3)


@pytest.mark.parametrize("kw,match", [
    (dict(steps=2), "steps"),
    (dict(steps=4.5), "steps"),
    (dict(axis="angle"), "axis"),
    (dict(conduction_range=(100.0, 50.0)), "conduction_range"),
    (dict(conduction_range=(0.0, 190.0)), "conduction_range"),
    (dict(dimmer_params={"bogus_ohm": 1.0}), "bogus_ohm"),
    (dict(switch="relay"), "switch"),
])
def test_bad_arguments(kw, match):
    with pytest.raises(InputError, match=match):
        dimming_curve(IDEAL, "trailing-edge", [LoadGroup("resistive", P_LAMP)], **kw)


def test_curve_matches_single_solves():
    # each setting is one steady-state solve: the curve holds exactly its figures
    c = dimming_curve(IDEAL, "trailing-edge", [LoadGroup("resistive", P_LAMP)], steps=3,
                      conduction_range=(60.0, 120.0))
    sol = solve_circuit(IDEAL, DimmerSpec("trailing-edge", conduction_deg=90.0),
                        [LoadGroup("resistive", P_LAMP)])
    assert c.p_w[1] == pytest.approx(sol.waveform.p_w, rel=1e-12)
    assert c.light[0, 1] == pytest.approx(np.mean(sol.groups[0].light), rel=1e-12)


def test_curve_as_dataset(resistive_curve):
    ds = resistive_curve.to_dataset()
    # the same numbers under named dimensions (setting last for per-group figures)
    assert ds["light"].dims == ("group", "setting") and ds.sizes["setting"] == 5
    assert np.array_equal(ds["p_w"].values, resistive_curve.p_w)
    assert ds["p_w"].attrs["units"] == "W" and ds["setting"].attrs["units"] == "deg"
    assert list(ds["ieee1789"].values[0]) == list(resistive_curve.ieee1789[0])
