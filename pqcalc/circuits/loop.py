"""The event loop of :meth:`pqcalc.circuits.pwl.Engine.run`, compiled (numba).

The same method as the Python loop of :mod:`pqcalc.circuits.pwl`, step for step: settle the
discrete state, find the next time event of the controllers, scan the segment's guards for
the first crossing (:func:`pqcalc.circuits.kernels.first_event`), advance the state exactly,
multiply the monodromy matrix, fire the event, settle again. The controllers it knows are
the ones the models use, their logic transcribed from their classes (:class:`WindowSwitch`
and :class:`Triac` of :mod:`.dimmers`, :class:`ConverterUVLO` and :class:`TapLevels` of
:mod:`.drivers`); a circuit with any other controller runs in Python.

Modes are built by the loop the first time it meets them (the arithmetic of
:meth:`Engine.mode_data`, compiled: :func:`pqcalc.circuits.kernels.assemble_mode` and
:func:`~pqcalc.circuits.kernels.modal`) and kept in arrays; segments and events are
recorded into arrays. When an array is full the loop returns (``FULL_MODES``, ``FULL``), the
engine enlarges it and calls the loop again, which continues where it stopped.

State encoding: diodes ``dio[j]`` 0/1; each controller one row ``aut[ia] = (a, b, c)``:
window switch ``(state, 0, 0)``; triac ``(code, t_end phase, sign)`` with code 0 off,
1 gate, 2 on, 3 low (off: ``(0, released, 0)``, released 1 after a release in this half
cycle when set to an angle; its pulse phases in ``aut_b``); converter ``(cell, 0, 0)``;
tapped regulator ``(segment, 0, 0)``.
"""

from __future__ import annotations

import cmath
import math

import numpy as np

from .kernels import assemble_mode, first_event, modal, njit

__all__ = ["run_loop", "DONE", "NEED_MODE", "FULL", "CHATTER", "TOO_MANY", "FULL_MODES", "WINDOW",
           "TRIAC", "CONVERTER", "TAPS"]

DONE, NEED_MODE, FULL, CHATTER, TOO_MANY, FULL_MODES = 0, 1, 2, 3, 4, 5
WINDOW, TRIAC, CONVERTER, TAPS = 0, 1, 2, 3
#: tags of the triac's events
T_LOW, T_RELEASE, T_RECOVER, T_FIRE_P, T_FIRE_N, T_GATE_END, T_FIRE = 0, 1, 2, 3, 4, 5, 6
#: tags of the converter's and the regulator's events
C_START, C_DOWN, C_UP = 0, 1, 2
P_UP, P_DOWN = 0, 1
#: istate slots
I_PHASE, I_GUARDS, I_NSEG, I_NEV, I_NMODES, I_KEY, I_MODE = 0, 1, 2, 3, 4, 5, 6
INF = math.inf


@njit(cache=True)
def _key(dio, aut, aut_type, aut_swpos, sw_mult, n_sw):
    """Integer code of the mode of a discrete state (diodes, then switch segments)."""
    k = 0
    for j in range(dio.size):
        k += np.int64(dio[j]) << j
    base = 1 << dio.size
    seg = np.zeros(n_sw, dtype=np.int64)
    for ia in range(aut_type.size):
        p = aut_swpos[ia]
        if p < 0:
            continue
        if aut_type[ia] == TRIAC:
            seg[p] = 0 if aut[ia, 0] == 0 else 1
        else:
            seg[p] = int(aut[ia, 0])
    for p in range(n_sw):
        k += base * sw_mult[p] * seg[p]
    return k


@njit(cache=True)
def _on(dio, aut, aut_type, aut_swpos, n_sw):
    """The mode's switch vector: diodes, then each switch element's segment."""
    on = np.zeros(dio.size + n_sw, dtype=np.int64)
    for j in range(dio.size):
        on[j] = dio[j]
    for ia in range(aut_type.size):
        p = aut_swpos[ia]
        if p < 0:
            continue
        if aut_type[ia] == TRIAC:
            on[dio.size + p] = 0 if aut[ia, 0] == 0 else 1
        else:
            on[dio.size + p] = int(aut[ia, 0])
    return on


@njit(cache=True)
def _mode(dio, aut, aut_type, aut_swpos, sw_mult, n_sw, istate, mkeys, mon, mA, mB, mQ,
          mlam, mV, mVinv, mP, mp0, net_args, b_src_col, one_col, amps, orders, omega, dc):
    """The index of the current discrete state's mode, built and stored the first time it
    is met (the arithmetic of Engine._mode_data); -1 when the mode arrays are full."""
    key = _key(dio, aut, aut_type, aut_swpos, sw_mult, n_sw)
    mi = _find(mkeys, istate[I_NMODES], key)
    if mi >= 0:
        return mi
    k = istate[I_NMODES]
    if k >= mkeys.size:
        istate[I_KEY] = key
        return -1
    on = _on(dio, aut, aut_type, aut_swpos, n_sw)
    A, B, Q = assemble_mode(on, *net_args)
    lam, V, Vinv, P = modal(A, np.ascontiguousarray(B[:, b_src_col]), amps, orders, omega)
    bc = B[:, one_col] + B[:, b_src_col] * dc
    p0 = -np.linalg.solve(A, bc)
    mkeys[k] = key
    mon[k] = on
    mA[k] = A
    mB[k] = B
    mQ[k] = Q
    mlam[k] = lam
    mV[k] = V
    mVinv[k] = Vinv
    mP[k] = P
    mp0[k] = p0
    istate[I_NMODES] = k + 1
    return k


@njit(cache=True)
def _find(mkeys, nmodes, key):
    for i in range(nmodes):
        if mkeys[i] == key:
            return i
    return -1


@njit(cache=True)
def _u(t, amps, jwh, dc):
    v = dc
    for k in range(jwh.size):
        v += (amps[k] * cmath.exp(jwh[k] * t)).real
    return v


@njit(cache=True)
def _xp(mi, t, mP, mp0, jwh, out):
    n = out.size
    e = np.empty(jwh.size, dtype=np.complex128)
    for k in range(jwh.size):
        e[k] = cmath.exp(jwh[k] * t)
    for i in range(n):
        v = mp0[mi, i]
        for k in range(jwh.size):
            v += (mP[mi, i, k] * e[k]).real
        out[i] = v


@njit(cache=True)
def _guards(dio, aut, mi, mQ, ne, nx, diode_el, diode_von, aut_type, aut_f, aut_b, aut_nb,
            eps_i, eps_v):
    """Guard rows over ``[x, u]``, thresholds, weights and tags (kind, who, code) of the
    discrete state whose mode is ``mi``, in the Python engine's order."""
    nz = mQ.shape[2]
    cap = dio.size + 2 * aut_type.size
    G = np.zeros((cap, nz))
    th = np.zeros(cap)
    w = np.zeros(cap)
    tk = np.zeros((cap, 3), dtype=np.int64)
    n = 0
    for j in range(dio.size):
        k = diode_el[j]
        if dio[j]:
            for z in range(nz):
                G[n, z] = -mQ[mi, k, z]
            th[n] = eps_i
        else:
            for z in range(nz):
                G[n, z] = mQ[mi, ne + k, z]
            th[n] = diode_von[j] + eps_v
        w[n] = 1.0 / (abs(th[n]) + 1.0)
        tk[n, 0], tk[n, 1], tk[n, 2] = 0, j, 0
        n += 1
    for ia in range(aut_type.size):
        ty = aut_type[ia]
        f = aut_f[ia]
        if ty == TRIAC:
            code = int(aut[ia, 0])
            idx = int(f[9])
            if code == 2:  # on
                sgn = aut[ia, 2]
                for z in range(nz):
                    G[n, z] = -sgn * mQ[mi, idx, z]
                th[n] = -f[1]
                tk[n, 2] = T_LOW if (f[4] > 0 and f[1] > 0) else T_RELEASE
                w[n], tk[n, 0], tk[n, 1] = INF, 1, ia
                n += 1
            elif code == 3:  # low
                sgn = aut[ia, 2]
                for z in range(nz):
                    G[n, z] = sgn * mQ[mi, idx, z]
                    G[n + 1, z] = -sgn * mQ[mi, idx, z]
                th[n], th[n + 1] = f[1] + eps_i, 0.0
                tk[n, 2], tk[n + 1, 2] = T_RECOVER, T_RELEASE
                w[n], tk[n, 0], tk[n, 1] = INF, 1, ia
                w[n + 1], tk[n + 1, 0], tk[n + 1, 1] = INF, 1, ia
                n += 2
            elif code == 0 and f[8] >= 0:  # off, fired by its RC network
                jj = int(f[8])
                G[n, jj], G[n + 1, jj] = 1.0, -1.0
                th[n], th[n + 1] = f[5], f[5]
                tk[n, 2], tk[n + 1, 2] = T_FIRE_P, T_FIRE_N
                w[n], tk[n, 0], tk[n, 1] = INF, 1, ia
                w[n + 1], tk[n + 1, 0], tk[n + 1, 1] = INF, 1, ia
                n += 2
        elif ty == CONVERTER:
            s = int(aut[ia, 0])
            jj = int(f[0])
            if s == 0:
                G[n, jj] = 1.0
                th[n] = f[1]
                tk[n, 2] = C_START
                w[n], tk[n, 0], tk[n, 1] = INF, 1, ia
                n += 1
            else:
                G[n, jj] = -1.0
                th[n] = -aut_b[ia, s - 1] + eps_v
                tk[n, 2] = C_DOWN
                w[n], tk[n, 0], tk[n, 1] = INF, 1, ia
                n += 1
                if s < aut_nb[ia] - 1:
                    G[n, jj] = 1.0
                    th[n] = aut_b[ia, s] + eps_v
                    tk[n, 2] = C_UP
                    w[n], tk[n, 0], tk[n, 1] = INF, 1, ia
                    n += 1
        elif ty == TAPS:
            s = int(aut[ia, 0])
            vi = int(f[0])
            if s < aut_nb[ia]:
                for z in range(nz):
                    G[n, z] = mQ[mi, vi, z]
                th[n] = aut_b[ia, s] + eps_v
                tk[n, 2] = P_UP
                w[n], tk[n, 0], tk[n, 1] = INF, 1, ia
                n += 1
            if s > 0:
                for z in range(nz):
                    G[n, z] = -mQ[mi, vi, z]
                th[n] = -aut_b[ia, s - 1] + eps_v
                tk[n, 2] = P_DOWN
                w[n], tk[n, 0], tk[n, 1] = INF, 1, ia
                n += 1
    return G[:n], th[:n], w[:n], tk[:n]


@njit(cache=True)
def _row_value(row, x, us):
    nx = x.size
    v = 0.0
    for i in range(nx):
        v += row[i] * x[i]
    v += row[nx] * us + row[nx + 1]
    return v


@njit(cache=True)
def _fire(kind, who, code, t, x, dio, aut, mi, mQ, aut_type, aut_f, aut_b, aut_nb, us):
    """Fire one event: a diode toggles; a controller reacts (its class's ``fire``)."""
    if kind == 0:
        dio[who] = 1 - dio[who]
        return
    ia = who
    ty = aut_type[ia]
    f = aut_f[ia]
    if ty == WINDOW:
        aut[ia, 0] = code
    elif ty == TRIAC:
        H = f[0]
        st = int(aut[ia, 0])
        if code == T_FIRE_P or code == T_FIRE_N or code == T_FIRE:
            if st != 0:
                return
            if code == T_FIRE:
                sgn = 1.0 if (t % (2 * H)) < H else -1.0
            else:
                sgn = 1.0 if code == T_FIRE_P else -1.0
                x[int(f[8])] -= sgn * f[6]
            aut[ia, 0], aut[ia, 1], aut[ia, 2] = 1.0, (t + f[3]) % (2 * H), sgn
        elif code == T_GATE_END:
            i = _row_value(mQ[mi, int(f[9])], x, us)
            if abs(i) >= f[2]:
                aut[ia, 0], aut[ia, 1], aut[ia, 2] = 2.0, 0.0, (1.0 if i >= 0 else -1.0)
            else:
                aut[ia, 0], aut[ia, 1], aut[ia, 2] = 0.0, 0.0, 0.0
        elif code == T_LOW:
            aut[ia, 0], aut[ia, 1] = 3.0, (t + f[4]) % (2 * H)
        elif code == T_RECOVER:
            aut[ia, 0], aut[ia, 1] = 2.0, 0.0
        elif code == T_RELEASE:
            # set to an angle: released after latching, no re-fire in this half cycle
            aut[ia, 0], aut[ia, 1], aut[ia, 2] = 0.0, (0.0 if math.isnan(f[7]) else 1.0), 0.0
    elif ty == CONVERTER:
        s = int(aut[ia, 0])
        v = x[int(f[0])]
        nb = aut_nb[ia]
        if v < aut_b[ia, 0]:
            k = 0
        else:
            k = np.searchsorted(aut_b[ia, :nb], v, side="right")
            k = min(max(k, 1), nb - 1)
        if code == C_UP:
            aut[ia, 0] = max(k, s + 1)
        elif code == C_DOWN:
            aut[ia, 0] = min(k, s - 1)
        else:
            aut[ia, 0] = max(k, 1)
    elif ty == TAPS:
        aut[ia, 0] += 1.0 if code == P_UP else -1.0


@njit(cache=True)
def _next_time(t, aut, aut_type, aut_f, aut_b, aut_b2, aut_nb):
    """The earliest time event of the controllers after ``t``: (time, controller, code)."""
    best, bia, bcode = INF, -1, -1
    for ia in range(aut_type.size):
        ty = aut_type[ia]
        f = aut_f[ia]
        tt, code = INF, -1
        if ty == WINDOW:
            if f[1] < 0:  # not always on or off
                H = f[0]
                k = math.floor(t / H)
                for kk in (k, k + 1):
                    for e in range(aut_nb[ia]):
                        te = kk * H + aut_b[ia, e]
                        if te > t + 1e-13 and te < tt:
                            tt, code = te, int(aut_b2[ia, e])
        elif ty == TRIAC:
            H = f[0]
            st = int(aut[ia, 0])
            if st == 1 or st == 3:
                T = 2 * H
                te = math.floor(t / T) * T + aut[ia, 1]
                if te <= t + 1e-13:
                    te += T
                tt, code = te, (T_GATE_END if st == 1 else T_RELEASE)
            elif st == 0 and not math.isnan(f[7]):
                # the pulse train (Triac.next_time): after a release in this half cycle
                # (aut[ia, 1] != 0) only the next half cycle's set pulse
                done = aut[ia, 1] != 0.0
                k = math.floor(t / H)
                for kk in (k, k + 1):
                    for e in range(max(aut_nb[ia], 1)):
                        if e > 0 and (done or kk != k):
                            break
                        te = kk * H + (aut_b[ia, e] if aut_nb[ia] > 0 else f[7])
                        if te > t + 1e-13:
                            tt, code = te, T_FIRE
                            break
                    if code >= 0:
                        break
        if tt < best:
            best, bia, bcode = tt, ia, code
    return best, bia, bcode


@njit(cache=True)
def run_loop(t_end, fstate, istate, x, dio, aut, phi,
             mkeys, mon, mA, mB, mQ, mlam, mV, mVinv, mP, mp0, net_args, orders, omega,
             ne, diode_el, diode_von, aut_type, aut_swpos, aut_f, aut_b, aut_b2, aut_nb,
             sw_mult, n_sw, amps, jwh, dc, dt_grid, eps_i, eps_v, max_guards,
             seg_t, seg_mode, seg_c, seg_x0, seg_dio, seg_aut, ev_t, ev_tag):
    """Run from ``fstate[0]`` to ``t_end`` (see the module's docstring); returns a status.

    ``istate``: [phase (0 settle next, 1 advance next), guard events, segments, events,
    modes, the key of a missing mode, -]."""
    nx = x.size
    xn = np.empty(nx)
    xp = np.empty(nx)
    c = np.empty(nx, dtype=np.complex128)
    el = np.empty(nx, dtype=np.complex128)
    trans = np.empty((nx, nx))
    phi2 = np.empty((nx, nx))
    while True:
        t = fstate[0]
        if istate[I_PHASE] == 0:
            # settle: fire every guard already violated at t
            us = _u(t, amps, jwh, dc)
            it = 0
            while True:
                mi = _mode(dio, aut, aut_type, aut_swpos, sw_mult, n_sw, istate, mkeys, mon,
                           mA, mB, mQ, mlam, mV, mVinv, mP, mp0, net_args, 0, 1, amps,
                           orders, omega, dc)
                if mi < 0:
                    return FULL_MODES
                G, th, w, tk = _guards(dio, aut, mi, mQ, ne, nx, diode_el, diode_von,
                                       aut_type, aut_f, aut_b, aut_nb, eps_i, eps_v)
                bi, bs = -1, -INF
                for g in range(th.size):
                    gv = _row_value(G[g], x, us) - th[g]
                    if gv > 0:
                        sc = w[g] * gv
                        if sc > bs:
                            bi, bs = g, sc
                if bi < 0:
                    break
                if it >= 64:
                    return CHATTER
                if istate[I_NEV] >= ev_t.size:
                    return FULL
                _fire(tk[bi, 0], tk[bi, 1], tk[bi, 2], t, x, dio, aut, mi, mQ, aut_type,
                      aut_f, aut_b, aut_nb, us)
                e = istate[I_NEV]
                ev_t[e] = t
                ev_tag[e, 0], ev_tag[e, 1], ev_tag[e, 2] = tk[bi, 0], tk[bi, 1], tk[bi, 2]
                istate[I_NEV] += 1
                it += 1
            istate[I_PHASE] = 1
            if istate[I_GUARDS] > max_guards:
                return TOO_MANY
        if not t < t_end - 1e-15:
            return DONE
        # one segment
        mi = _mode(dio, aut, aut_type, aut_swpos, sw_mult, n_sw, istate, mkeys, mon, mA, mB,
                   mQ, mlam, mV, mVinv, mP, mp0, net_args, 0, 1, amps, orders, omega, dc)
        if mi < 0:
            return FULL_MODES
        if istate[I_NSEG] >= seg_t.shape[0] or istate[I_NEV] + 1 >= ev_t.size:
            return FULL
        t_time, tia, tcode = _next_time(t, aut, aut_type, aut_f, aut_b, aut_b2, aut_nb)
        t_stop = min(t_end, t_time)
        # modal coefficients of the segment (explicit loops: the matrices are a few states
        # wide, where a library product costs more in its call than in its arithmetic)
        _xp(mi, t, mP, mp0, jwh, xp)
        for i in range(nx):
            v = 0j
            for j in range(nx):
                v += mVinv[mi, i, j] * (x[j] - xp[j])
            c[i] = v
        G, th, w, tk = _guards(dio, aut, mi, mQ, ne, nx, diode_el, diode_von, aut_type,
                               aut_f, aut_b, aut_nb, eps_i, eps_v)
        gi, t_hit = -1, t_stop
        ng = th.size
        if ng and t_stop > t:
            GVc = np.empty((ng, nx), dtype=np.complex128)
            GP = np.empty((ng, jwh.size), dtype=np.complex128)
            g0 = np.empty(ng)
            for g in range(ng):
                for m in range(nx):
                    v = 0j
                    for i in range(nx):
                        v += G[g, i] * mV[mi, i, m]
                    GVc[g, m] = v * c[m]
                for k in range(jwh.size):
                    v = G[g, nx] * amps[k]
                    for i in range(nx):
                        v += G[g, i] * mP[mi, i, k]
                    GP[g, k] = v
                v = G[g, nx] * dc + G[g, nx + 1] - th[g]
                for i in range(nx):
                    v += G[g, i] * mp0[mi, i]
                g0[g] = v
            gi, t_hit = first_event(GVc, mlam[mi], GP, jwh, g0, t, t_stop, dt_grid)
        t1 = t_hit if gi >= 0 else t_stop
        # the state at t1 and the segment's transition matrix
        _xp(mi, t1, mP, mp0, jwh, xp)
        for m in range(nx):
            el[m] = cmath.exp(mlam[mi, m] * (t1 - t))
        for i in range(nx):
            v = xp[i]
            for m in range(nx):
                v += (mV[mi, i, m] * (el[m] * c[m])).real
            xn[i] = v
        for i in range(nx):
            for j in range(nx):
                v = 0j
                for m in range(nx):
                    v += mV[mi, i, m] * el[m] * mVinv[mi, m, j]
                trans[i, j] = v.real
        for i in range(nx):
            for j in range(nx):
                v = 0.0
                for m in range(nx):
                    v += trans[i, m] * phi[m, j]
                phi2[i, j] = v
        phi[:, :] = phi2
        s = istate[I_NSEG]
        seg_t[s, 0], seg_t[s, 1] = t, t1
        seg_mode[s] = mi
        seg_c[s] = c
        seg_x0[s] = x
        seg_dio[s] = dio
        seg_aut[s] = aut
        istate[I_NSEG] += 1
        us1 = _u(t1, amps, jwh, dc)
        if gi >= 0:
            x[:] = xn
            fstate[0] = t1
            ev = istate[I_NEV]
            ev_t[ev] = t1
            ev_tag[ev, 0], ev_tag[ev, 1], ev_tag[ev, 2] = tk[gi, 0], tk[gi, 1], tk[gi, 2]
            istate[I_NEV] += 1
            _fire(tk[gi, 0], tk[gi, 1], tk[gi, 2], t1, x, dio, aut, mi, mQ, aut_type,
                  aut_f, aut_b, aut_nb, us1)
            istate[I_GUARDS] += 1
        else:
            x[:] = xn
            fstate[0] = t_stop
            if tia >= 0 and t_time <= t_end + 1e-15 and t_stop == t_time:
                ev = istate[I_NEV]
                ev_t[ev] = t_stop
                ev_tag[ev, 0], ev_tag[ev, 1], ev_tag[ev, 2] = 2, tia, tcode
                istate[I_NEV] += 1
                _fire(1, tia, tcode, t_stop, x, dio, aut, mi, mQ, aut_type, aut_f, aut_b,
                      aut_nb, us1)
        istate[I_PHASE] = 0
