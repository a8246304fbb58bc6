"""A circuit's harmonic transfer about its periodic steady state (a Norton model).

A small harmonic ``dV_h`` added to the source voltage of a solved circuit changes its line
current. Along the solved period the circuit is linear between events, so the change
``xi`` of the state obeys, on each segment (mode ``A``, source column ``b``),

    xi' = A xi + b exp(j h w t),

solved exactly: ``xi(t) = pi_h exp(j h w t) + V exp(Lambda (t - t0)) V^-1 (xi(t0) - pi_h
exp(j h w t0))`` with ``pi_h = (j h w - A)^-1 b`` (the same modal form the steady state
uses, :mod:`pqcalc.circuits.pwl`). The periodic response follows from the monodromy matrix
``Phi`` of the steady state: ``xi(0) = (I - Phi)^-1 xi_T`` where ``xi_T`` is the end state
of a run from zero. The line current's change at every order ``k`` over ``dV_h`` is a column
of the circuit's harmonic transfer matrix (:func:`harmonic_transfer`, with the response to
the conjugate); its diagonal is the input admittance ``Y_h`` [S].

It is the Norton admittance a network harmonic study needs beside the load's harmonic
currents (the currents at the solved state are the Norton source): how the fixture's
current answers a harmonic voltage at its terminals. What it leaves out: the shift of event
times (exact for diodes, whose vector field is continuous across their switching surface,
and for time events such as a dimmer's firing instant; approximate at a triac's drop-out
below its holding current and at a converter's lock-out). The diagonal alone leaves out
the mixing of orders: a rectifier's sidebands ``h +- 2m`` are as large as its diagonal.

References
----------
E. Mollerstedt, B. Bernhardsson, "Out of control because of harmonics: an analysis of the
harmonic response of an inverter locomotive", IEEE Control Systems 20(4), 70-81, 2000
(harmonic transfer matrices of periodically switched systems); T. J. Aprille, T. N. Trick,
Proc. IEEE 60(1), 1972 (the monodromy matrix of the periodic steady state).
"""

from __future__ import annotations

import numpy as np

from .kernels import transfer_run
from .network import CH_SOURCE

__all__ = ["harmonic_transfer", "at_terminals"]


def harmonic_transfer(eng, tr, row: int, max_order: int, odd: bool = False
                      ) -> tuple[np.ndarray, np.ndarray] | None:
    """The harmonic transfer of output ``row`` (an element current, the line's) from the
    source voltage about the solved state: ``dI_k = A[k, h] dV_h + B[k, h] conj(dV_h)`` for
    orders ``k = 0..max_order`` out and ``h = 1..max_order`` in (column 0 zero), RMS
    phasors of the project's convention [S]. ``A``'s diagonal is the input admittance; off
    it, the orders a switching circuit mixes (a rectifier's ``h +- 2m``); ``B`` the response
    to the conjugate. None when the source has no fundamental to recover the modes' input
    vectors from, or the periodic problem is singular. Every column holds the events' times
    fixed (see the module's note); for the fundamental's column that is its magnitude's
    effect with the firing instants kept, while a change of its angle moves every time
    event with it (the whole state turns: ``dI_k = j k I_k d(angle)``), which the caller
    composes (:meth:`pqcalc.installation.cases.CaseResult` does).

    With ``eta_h`` the output's response to ``exp(j h w t)`` and ``F_k`` the Fourier
    coefficient of order ``k``: ``A[k, h] = F_k(eta_h)``, ``B[k, h] = -conj(F_-k(eta_h))``
    (a real input ``Re(U exp(j h w t))`` excites ``eta_h`` and its conjugate; the sign of
    ``B`` is the sine-basis phasor's factor ``j``, conjugated).

    ``odd``: the odd orders only, in and out (the rest zero), a quarter of the work: what a
    network study's Jacobian needs where the voltages carry odd harmonics (a half-wave
    symmetric circuit maps odd orders to odd orders; an asymmetric one's even answer is
    then left out of the Jacobian, which slows a Newton iteration, not its result).
    """
    net, src = eng.net, eng.src
    nx = net.n_x
    t0, t1, (Q, V, P, _p0, lam, _consts), idx, _C = tr.segment_table()
    orders = np.asarray(src.orders)
    at1 = np.nonzero(orders == 1)[0]
    if not at1.size or abs(src.amplitudes[at1[0]]) == 0:
        return None
    k1 = int(at1[0])
    w = float(src.omega)
    step = 2 if odd else 1
    h = np.arange(1, max_order + 1, step)
    jhw = 1j * w * h  # (H,)
    kpos = np.arange(1 if odd else 0, max_order + 1, step)
    kk = np.concatenate([-kpos[::-1], kpos[1:] if kpos[0] == 0 else kpos])  # both signs
    jkw = 1j * w * kk  # (K,)
    if nx == 0:
        # no state: the current answers the voltage at once, with each segment's gain
        return _compose(_static(Q, idx, t0, t1, row, jhw, jkw), kk, h, max_order)
    Vinv = np.linalg.inv(V)  # (modes, n, n)
    # the modes' input vectors in modal coordinates, from the fundamental's particular
    # solution P_1 = V diag(1 / (j w - lam)) beta S_1
    beta = (1j * w - lam) * np.einsum("mij,mj->mi", Vinv, P[:, :, k1]) \
        / src.amplitudes[k1]  # (modes, n)
    # pi_h per mode: V diag(1 / (j h w - lam)) beta, (modes, nx, H)
    pim = beta[:, :, None] / (jhw[None, None, :] - lam[:, :, None])
    pi = np.einsum("mij,mjh->mih", V, pim)
    T = float(t1[-1])
    # the passes over the segments, compiled (pqcalc.circuits.kernels.transfer_run): a run
    # from zero gives the end state xi_T; the periodic start state, and a second run
    # collecting the output's Fourier integrals
    qrow = np.ascontiguousarray(Q[:, row, :])
    args = (np.ascontiguousarray(t0, dtype=float), np.ascontiguousarray(t1, dtype=float),
            np.ascontiguousarray(idx, dtype=np.int64), np.ascontiguousarray(Vinv),
            np.ascontiguousarray(V, dtype=complex), np.ascontiguousarray(lam, dtype=complex),
            np.ascontiguousarray(pi), np.ascontiguousarray(qrow[:, :nx], dtype=float),
            np.ascontiguousarray(qrow[:, nx + CH_SOURCE], dtype=float), jhw, jkw,
            _integral(jhw, jkw)[2])
    xi_T, _ = transfer_run(np.zeros((nx, h.size), dtype=complex), False, *args)
    try:
        xi0 = np.linalg.solve(np.eye(nx) - tr.phi, xi_T)
    except np.linalg.LinAlgError:
        return None
    _, acc = transfer_run(np.ascontiguousarray(xi0), True, *args)
    return _compose(acc / T, kk, h, max_order)


def _integral(jhw: np.ndarray, jkw: np.ndarray):
    """``t0, t1 -> int_t0^t1 exp((j h w - j k w) t) dt`` for every (k, h) [s]: the difference
    of an outer product of exponentials over the exponent (K + H exponentials, not K H), the
    segment's length where the exponent is zero (h = k)."""
    dk = jhw[None, :] - jkw[:, None]
    same = dk == 0
    inv_dk = np.where(same, 0.0, 1.0 / np.where(same, 1.0, dk))

    def outer(t: float) -> np.ndarray:
        return np.exp(-jkw * t)[:, None] * np.exp(jhw * t)[None, :]

    return outer, same, inv_dk


def _static(Q, idx, t0, t1, row: int, jhw: np.ndarray, jkw: np.ndarray) -> np.ndarray:
    """Fourier coefficients ``F_k`` of a stateless circuit's answer to ``exp(j h w t)``: the
    output's gain on the source, per segment, integrated against ``exp(-j k w t)``."""
    outer, same, inv_dk = _integral(jhw, jkw)
    acc = np.zeros((jkw.size, jhw.size), dtype=complex)
    for s in range(t0.size):
        qu = Q[idx[s], row][CH_SOURCE]
        if qu != 0:
            acc += qu * np.where(same, t1[s] - t0[s], (outer(float(t1[s])) - outer(float(t0[s])))
                                 * inv_dk)
    return acc / float(t1[-1])


def _compose(F: np.ndarray, kk: np.ndarray, h: np.ndarray, max_order: int
             ) -> tuple[np.ndarray, np.ndarray] | None:
    """``A[k, h] = F_k``, ``B[k, h] = -conj(F_-k)`` from ``F`` on the output orders ``kk``
    (ascending, both signs) and the input orders ``h``."""
    A = np.zeros((max_order + 1, max_order + 1), dtype=complex)
    B = np.zeros_like(A)
    kpos = kk[kk >= 0]
    A[np.ix_(kpos, h)] = F[np.searchsorted(kk, kpos)]
    B[np.ix_(kpos, h)] = -np.conj(F[np.searchsorted(kk, -kpos)])
    if not (np.all(np.isfinite(A)) and np.all(np.isfinite(B))):
        return None
    return A, B


def at_terminals(y_e: np.ndarray, source_r_ohm: float, source_l_h: float,
                 source_damping_ohm: float, frequency_hz: float) -> np.ndarray:
    """The admittance seen at the circuit's terminals from the one seen by the source EMF
    [S]: the source impedance ``Z_s(h) = R + (j h w L || R_damp)`` (the solver's source
    branch) taken out, ``Y_t = Y_E / (1 - Z_s Y_E)`` (from ``E = V + Z_s I``)."""
    h = np.arange(y_e.size)
    if source_l_h > 0:
        zl = 1j * h * 2 * np.pi * frequency_hz * source_l_h
        zs = source_r_ohm + zl * source_damping_ohm / (zl + source_damping_ohm)
    else:  # the solver's 1 uohm link resistor in place of the inductance
        zs = np.full(h.size, source_r_ohm + 1e-6, dtype=complex)
    return y_e / (1 - zs * y_e)
