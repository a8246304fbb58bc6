"""The harmonic input admittance about a solved state (pqcalc.circuits.smallsignal).

Checks:
- resistive lamps: Ohm's law (closed form), ``Y_E = 1 / (Z_s(h) + R_lamps + r_on)`` seen by
  the source EMF, and ``1 / (R_lamps + r_on)`` at the terminals after the source impedance
  is taken out;
- nonlinear lamps (bulk capacitor, behind a triac that re-fires, sine-following behind a
  trailing edge): the definition of the diagonal of the harmonic transfer matrix, the
  solver's own response to a small voltage harmonic (1e-4 of V1, at two phases 90 deg
  apart; their mean is the diagonal term, the difference the conjugate one).
"""

from __future__ import annotations

import numpy as np
import pytest

from pqcalc.circuits import DimmerSpec, LoadGroup, Supply, solve_circuit
from pqcalc.circuits.smallsignal import at_terminals

SUP = Supply(230.0, 50.0, 0.3, 50e-6)


def test_resistive_lamps_follow_ohms_law():
    n, p = 5, 60.0
    sol = solve_circuit(SUP, DimmerSpec("none"), [LoadGroup("resistive", p, count=n)],
                        extras=False, admittance=True)
    r = 230.0**2 / (n * p) + dict(sol.dimmer_p)["r_on_ohm"]
    h = np.arange(51)
    zl = 1j * h * 2 * np.pi * 50.0 * SUP.source_l_h
    zs = SUP.source_r_ohm + zl * SUP.source_damping_ohm / (zl + SUP.source_damping_ohm)
    y = sol.input_admittance_s
    # Ohm's law through the source branch (R + L || R_damp, the solver's topology);
    # the resistive model's hot resistance is V^2 / P (its definition)
    assert np.allclose(y[2:], 1 / (zs[2:] + r), rtol=1e-6)
    yt = at_terminals(y, SUP.source_r_ohm, SUP.source_l_h, SUP.source_damping_ohm, 50.0)
    assert np.allclose(yt[2:], 1 / r, rtol=1e-6)


@pytest.mark.parametrize("model,power,count,dimmer", [
    ("bulk-cap", 9.0, 12, DimmerSpec("none")),
    ("bulk-cap", 9.0, 16, DimmerSpec("leading-edge", conduction_deg=150.0, switch="triac")),
    ("sine-follow", 10.0, 10, DimmerSpec("trailing-edge", conduction_deg=120.0)),
    ("pfc", 150.0, 6, DimmerSpec("none")),
], ids=["bulk-cap", "bulk-cap-triac", "sine-follow-trailing", "pfc"])
def test_nonlinear_lamps_match_the_perturbed_solve(model, power, count, dimmer):
    base = solve_circuit(SUP, dimmer, [LoadGroup(model, power, count=count)], extras=False,
                         admittance=True)
    y = base.input_admittance_s
    assert y is not None
    eps = 1e-4
    for h in (3, 11, 39):
        r = []
        for ang in (0.0, 90.0):
            s2 = Supply(230.0, 50.0, 0.3, 50e-6, voltage_harmonics=[(h, eps, ang)])
            pt = solve_circuit(s2, dimmer, [LoadGroup(model, power, count=count)],
                               extras=False)
            r.append((pt.current_phasors_a[h] - base.current_phasors_a[h])
                     / (eps * 230.0 * np.exp(1j * np.radians(ang))))
        fd = 0.5 * (r[0] + r[1])
        # 3 %: the perturbation's own second-order part and the event-time shifts the
        # linear model leaves out (a triac's drop-out below holding)
        assert abs(y[h] - fd) <= 0.03 * abs(fd), (h, y[h], fd)


def test_rectifier_mixes_orders_as_the_perturbed_solve_does():
    # The full harmonic transfer (A, B) of a bulk-capacitor rectifier against the solver's
    # own response to one small voltage harmonic (1e-4 of V1 at order 37, at 0 and 90 deg):
    # dI_k = A[k, h] dV + B[k, h] conj(dV) at the sidebands k = 35, 37, 39 (a rectifier
    # switching at 100 Hz mixes h into h +- 2m; the definition of the harmonic transfer
    # matrix of a periodically switched circuit)
    g = [LoadGroup("bulk-cap", 9.0, count=12)]
    base = solve_circuit(SUP, DimmerSpec("none"), g, extras=False, admittance=True)
    A, B = base.harmonic_transfer_s
    h, eps = 37, 1e-4
    dv = {}
    for ang in (0.0, 90.0):
        s2 = Supply(230.0, 50.0, 0.3, 50e-6, voltage_harmonics=[(h, eps, ang)])
        pt = solve_circuit(s2, DimmerSpec("none"), g, extras=False)
        dv[ang] = (pt.current_phasors_a - base.current_phasors_a,
                   eps * 230.0 * np.exp(1j * np.radians(ang)))
    for k in (35, 37, 39):
        for ang, (di, v) in dv.items():
            pred = A[k, h] * v + B[k, h] * np.conj(v)
            # 3 %: the perturbation's own second-order part
            assert abs(pred - di[k]) <= 0.03 * abs(di[k]), (k, ang, pred, di[k])
    # the sidebands are as large as the diagonal (why a diagonal model cannot stand for it)
    assert abs(A[35, h]) > 0.5 * abs(A[h, h]) and abs(A[39, h]) > 0.5 * abs(A[h, h])


def test_odd_orders_are_the_full_transfers_odd_part():
    # Consistency of the two ways to compute it (pqcalc.circuits.smallsignal): the transfer
    # on odd orders only equals the full transfer's odd rows and columns.
    import numpy as np

    from pqcalc.circuits import DimmerSpec, LoadGroup, Supply, solve_circuit

    sup = Supply(v_rms_v=230.0, frequency_hz=50.0, source_r_ohm=0.2, source_l_h=1e-4)
    loads = [LoadGroup(model="bulk-cap", power_w=9.0, count=8)]
    dim = DimmerSpec(kind="leading-edge", conduction_deg=120.0)
    full = solve_circuit(sup, dim, loads, extras=False, memo=False, admittance=True)
    odd = solve_circuit(sup, dim, loads, extras=False, memo=False, admittance="odd")
    a, b = full.harmonic_transfer_s
    ao, bo = odd.harmonic_transfer_s
    o = np.arange(1, 51, 2)
    scale = np.max(np.abs(a))
    assert np.max(np.abs(ao[np.ix_(o, o)] - a[np.ix_(o, o)])) < 1e-9 * scale
    assert np.max(np.abs(bo[np.ix_(o, o)] - b[np.ix_(o, o)])) < 1e-9 * scale
    e = np.arange(0, 51, 2)
    assert not ao[e].any() and not ao[:, e].any() and not bo[e].any()
