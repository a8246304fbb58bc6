"""Compiled inner loops of the solver (numba), with the same arithmetic as plain Python.

:func:`first_event` scans a segment's guards for the first one that rises through zero and
locates that root: the per-event work of :meth:`pqcalc.circuits.pwl.Engine.run`, where the
interpreter's overhead on a handful of small arrays used to dominate. numba compiles it on
first use and caches the machine code beside this file (``__pycache__``), so later processes
load it instead of compiling (see :data:`COMPILED`). Without numba the same functions run
as plain Python (slower, same results).

A guard ``i`` of a segment starting at ``t0`` is

    g_i(t) = Re(sum_m GVc[i, m] exp(lam[m] (t - t0))) + Re(sum_k GP[i, k] exp(jwh[k] t)) + g0[i].
"""

from __future__ import annotations

import cmath
import math

import numpy as np

try:  # pragma: no cover - exercised by whichever is installed
    from numba import njit

    COMPILED = True
except ImportError:  # pragma: no cover
    COMPILED = False

    def njit(*args, **kwargs):  # type: ignore[no-redef]
        def wrap(fn):
            return fn

        return wrap(args[0]) if args and callable(args[0]) else wrap

__all__ = ["first_event", "transfer_run", "COMPILED", "ROOT_TOL_S"]

#: event times are located to within 1 ps (2e-8 deg at 50 Hz)
ROOT_TOL_S = 1e-12


@njit(cache=True)
def _g(i, t, t0, GVc, lam, GP, jwh, g0):
    """Value and time derivative of guard ``i`` at ``t``."""
    v = g0[i]
    d = 0.0
    dt = t - t0
    for m in range(lam.size):
        e = GVc[i, m] * cmath.exp(lam[m] * dt)
        v += e.real
        d += (e * lam[m]).real
    for k in range(jwh.size):
        e = GP[i, k] * cmath.exp(jwh[k] * t)
        v += e.real
        d += (e * jwh[k]).real
    return v, d


@njit(cache=True)
def _root(i, t0, ta, tb, fa, fb, GVc, lam, GP, jwh, g0):
    """The first time in ``(ta, tb]`` where guard ``i`` rises through zero (``g(ta) <= 0 <
    g(tb)``), returned just past the root so the event has truly happened: Newton with the
    exact derivative, kept inside the bracket (regula falsi step when Newton leaves it)."""
    if fa > 0:
        return ta
    lo, hi, flo, fhi = ta, tb, fa, fb
    t = lo + (hi - lo) * (-flo) / (fhi - flo)
    for _ in range(60):
        ft, dft = _g(i, t, t0, GVc, lam, GP, jwh, g0)
        if ft > 0:
            hi, fhi = t, ft
        else:
            lo, flo = t, ft
        if hi - lo < ROOT_TOL_S:
            break
        tn = t - ft / dft if dft != 0 else math.nan
        if not (lo < tn < hi):
            tn = lo + (hi - lo) * (-flo) / (fhi - flo)
            if not (lo < tn < hi):
                tn = 0.5 * (lo + hi)
        if abs(tn - t) < 0.5 * ROOT_TOL_S:
            # converged: the returned time must lie past the root
            tn = min(tn + ROOT_TOL_S, hi)
            if tn == hi or _g(i, tn, t0, GVc, lam, GP, jwh, g0)[0] > 0:
                return tn
        t = tn
    return hi


@njit(cache=True)
def first_event(GVc, lam, GP, jwh, g0, t0, t_stop, dt_grid):
    """The first guard to rise through zero in ``(t0, t_stop]`` and its time: ``(index,
    time)``, or ``(-1, t_stop)`` when none does. The guards are watched on an even grid
    of at most ``dt_grid`` spacing (a guard already above zero at ``t0`` counts as zero
    there); in the first grid interval where some guard crosses, each crossing guard's
    root is located and the earliest wins (the later guard on a tie).

    A guard is evaluated only at the grid points where it could be above zero: from a value
    ``g <= 0`` at ``ta`` it cannot reach zero before ``ta + |g| / L``, ``L`` a bound on its
    rate of change from ``ta`` on (``sum_m |GVc_m e^{lam_m (ta - t0)} lam_m|`` over its
    modes, a growing mode bounded at ``t_stop``, plus ``sum_k |GP_k jwh_k|``), so the grid
    points before that are skipped. The grid intervals that hold a crossing are the same as
    when every point is evaluated, and so are the roots (to ``ROOT_TOL_S``); a guard far
    from its threshold costs a few evaluations per segment instead of one per grid point.
    """
    ng = g0.size
    span = t_stop - t0
    if ng == 0 or not span > 0:
        return -1, t_stop
    nstep = max(int(math.ceil(span / dt_grid)), 1)
    h = span / nstep
    n, nk = lam.size, jwh.size
    # the forced part's rate bound per guard, and each mode's growth to t_stop
    lf = np.zeros(ng)
    for i in range(ng):
        v = 0.0
        for k in range(nk):
            v += abs(GP[i, k]) * abs(jwh[k])
        lf[i] = v
    grow = np.empty(n)
    alam = np.empty(n)
    for m in range(n):
        alam[m] = abs(lam[m])
        grow[m] = math.exp(lam[m].real * span) if lam[m].real > 0 else 1.0
    em = np.empty(n, dtype=np.complex128)
    ek = np.empty(nk, dtype=np.complex128)
    due = np.empty(ng, dtype=np.int64)  # the next grid point each guard is evaluated at
    start_pos = np.zeros(ng, dtype=np.bool_)  # above zero at t0: counts as zero there
    cur = np.empty(ng)
    # t0: every guard once
    for m in range(n):
        em[m] = 1.0
    for k in range(nk):
        ek[k] = cmath.exp(jwh[k] * t0)
    for i in range(ng):
        v, rate = _g_and_rate(i, GVc, GP, g0, em, ek, alam, grow, lf)
        if v > 0:
            start_pos[i] = True
            due[i] = 1
        else:
            due[i] = _next_due(0, v, rate, h)
    step = 1
    while True:
        step = nstep + 1
        for i in range(ng):
            if due[i] < step:
                step = due[i]
        if step > nstep:
            return -1, t_stop
        tb = t0 + span * step / nstep
        for m in range(n):
            em[m] = cmath.exp(lam[m] * (tb - t0))
        for k in range(nk):
            ek[k] = cmath.exp(jwh[k] * tb)
        crossed = False
        for i in range(ng):
            if due[i] != step:
                continue
            v, rate = _g_and_rate(i, GVc, GP, g0, em, ek, alam, grow, lf)
            cur[i] = v
            if v > 0:
                crossed = True
            else:
                due[i] = _next_due(step, v, rate, h)
        if crossed:
            ta = t0 + span * (step - 1) / nstep
            best, bi = tb, -1
            for i in range(ng):
                if due[i] == step and cur[i] > 0:
                    if step == 1 and start_pos[i]:
                        fa = 0.0
                    else:
                        fa = min(_g(i, ta, t0, GVc, lam, GP, jwh, g0)[0], 0.0)
                    tr = _root(i, t0, ta, tb, fa, cur[i], GVc, lam, GP, jwh, g0)
                    if tr <= best:
                        best, bi = tr, i
            return bi, best


@njit(cache=True)
def _g_and_rate(i, GVc, GP, g0, em, ek, alam, grow, lf):
    """Guard ``i``'s value from the exponentials ``em``, ``ek`` at one time, and a bound on
    its rate of change from then on (see :func:`first_event`)."""
    v = g0[i]
    rate = lf[i]
    for m in range(em.size):
        e = GVc[i, m] * em[m]
        v += e.real
        rate += abs(e) * alam[m] * grow[m]
    for k in range(ek.size):
        v += (GP[i, k] * ek[k]).real
    return v, rate


@njit(cache=True)
def _next_due(step, v, rate, h):
    """The first grid point after ``step`` where a guard at ``v <= 0`` changing by at most
    ``rate`` could be above zero (one past the last point it provably cannot reach)."""
    if not v <= 0.0:  # not a number: watched at every point, as a value would be
        return step + 1
    if not rate > 0:
        return 1 << 62
    safe = -v / rate * (1.0 - 1e-9) / h  # grid intervals it cannot cross in
    if safe > 1e15:
        return 1 << 62
    return step + max(int(math.floor(safe)), 0) + 1


# ---------------------------------------------------------------------- exact integrals
# One output over the segments s of a trajectory: y = Re(sum_m a[s, m] exp(mu[s, m] tau))
# + g[s], tau = t - t0[s] in [0, t1[s] - t0[s]] (see pqcalc.circuits.exact).


@njit(cache=True)
def _phi1(z):
    """``(exp(z) - 1) / z`` (series below ``|z| = 1e-5``)."""
    if abs(z) < 1e-5:
        return 1.0 + z * (0.5 + z * (1.0 / 6.0 + z / 24.0))
    return (cmath.exp(z) - 1.0) / z


@njit(cache=True)
def _phi1e(z, ez):
    """``(ez - 1) / z`` with ``ez = exp(z)`` given (series below ``|z| = 1e-5``)."""
    if abs(z) < 1e-5:
        return 1.0 + z * (0.5 + z * (1.0 / 6.0 + z / 24.0))
    return (ez - 1.0) / z


@njit(cache=True)
def seg_fourier(a, mu, g, t0, t1, omega, max_order):
    """``int y exp(-j h w t) dt`` over the segments, ``h = 0..max_order`` (not divided by
    the period)."""
    out = np.zeros(max_order + 1, dtype=np.complex128)
    S, M = mu.shape
    for s in range(S):
        d = t1[s] - t0[s]
        if not d > 0:
            continue
        step = cmath.exp(-1j * omega * d)  # exp(-j w d), raised to h by recurrence
        rstep = cmath.exp(-1j * omega * t0[s])
        eh = 1.0 + 0j  # exp(-j h w d)
        rot = 1.0 + 0j  # exp(-j h w t0)
        emu = np.empty(M, dtype=np.complex128)
        for m in range(M):
            emu[m] = cmath.exp(mu[s, m] * d)
        for h in range(max_order + 1):
            jhw = 1j * h * omega
            acc = g[s] * d * _phi1e(-jhw * d, eh)
            for m in range(M):
                za = (mu[s, m] - jhw) * d
                zc = (mu[s, m].conjugate() - jhw) * d
                acc += 0.5 * d * (a[s, m] * _phi1e(za, emu[m] * eh)
                                  + a[s, m].conjugate() * _phi1e(zc, emu[m].conjugate() * eh))
            out[h] += acc * rot
            eh *= step
            rot *= rstep
    return out


@njit(cache=True)
def seg_mean_products(a, mu, g, t0, t1, pairs):
    """``int y_r1 y_r2 dt`` over the segments (not divided by the period) for each pair
    ``(r1, r2)`` of rows of ``a`` (S, R, M) and ``g`` (S, R): (P,).

    With ``y = Re(sum_m a_m e^{mu_m tau}) + g`` on a segment of length ``d``, the product
    of two outputs meets ``e^{(mu_m + mu_k) tau}`` and ``e^{(mu_m + conj mu_k) tau}``,
    integrated as ``d phi1(z d)``. Each segment's pair integrals are computed once for every
    pair of outputs, and each once per unordered pair of exponents (the first is symmetric
    in ``m, k``, the second turns into its conjugate)."""
    S, R, M = a.shape
    P = pairs.shape[0]
    total = np.zeros(P)
    e = np.empty(M, dtype=np.complex128)
    lin = np.empty(M, dtype=np.complex128)
    ps = np.empty((M, M), dtype=np.complex128)
    pc = np.empty((M, M), dtype=np.complex128)
    for s in range(S):
        d = t1[s] - t0[s]
        if not d > 0:
            continue
        for m in range(M):
            e[m] = cmath.exp(mu[s, m] * d)
            lin[m] = d * _phi1e(mu[s, m] * d, e[m])
        for m in range(M):
            zm = mu[s, m] * d
            for k in range(m, M):
                zk = mu[s, k] * d
                v = _phi1e(zm + zk, e[m] * e[k])
                ps[m, k] = v
                ps[k, m] = v
                w = _phi1e(zm + zk.conjugate(), e[m] * e[k].conjugate())
                pc[m, k] = w
                pc[k, m] = w.conjugate()
        for p in range(P):
            r1, r2 = pairs[p, 0], pairs[p, 1]
            ga, gb = g[s, r1], g[s, r2]
            acc = ga * gb * d
            pair = 0j
            for m in range(M):
                am = a[s, r1, m]
                acc += gb * (am * lin[m]).real + ga * (a[s, r2, m] * lin[m]).real
                inner = 0j
                for k in range(M):
                    bk = a[s, r2, k]
                    inner += bk * ps[m, k] + bk.conjugate() * pc[m, k]
                pair += am * inner
            total[p] += acc + 0.5 * d * pair.real
    return total


@njit(cache=True)
def seg_integral_to(a, mu, g, t0, t1, ts):
    """``int_0^t y dt`` at the ascending times ``ts`` (``t0[0] = 0``). The exponentials
    advance by recurrence between neighbouring times of a segment (re-anchored on exact
    values every 32 times)."""
    S, M = mu.shape
    out = np.empty(ts.size)
    e = np.empty(M, dtype=np.complex128)
    st = np.empty(M, dtype=np.complex128)
    s = 0
    base = 0.0
    run = 0  # times so far on the current segment
    for n in range(ts.size):
        t = ts[n]
        moved = False
        while s < S - 1 and t > t1[s]:
            d = t1[s] - t0[s]
            acc = g[s] * d
            for m in range(M):
                acc += (a[s, m] * d * _phi1(mu[s, m] * d)).real
            base += acc
            s += 1
            moved = True
        if moved:
            run = 0
        tau = t - t0[s]
        if run % 32 == 0 or n < 2 or abs((ts[n] - ts[n - 1]) - (ts[n - 1] - ts[n - 2])) > \
                1e-9 * (ts[n] - ts[n - 1]):
            for m in range(M):
                e[m] = cmath.exp(mu[s, m] * tau)
                if n >= 1:
                    st[m] = cmath.exp(mu[s, m] * (ts[n] - ts[n - 1]))
        else:
            for m in range(M):
                e[m] *= st[m]
        run += 1
        acc = g[s] * tau
        for m in range(M):
            z = mu[s, m] * tau
            if abs(z) < 1e-5:
                acc += (a[s, m] * tau * (1.0 + z * (0.5 + z / 6.0))).real
            else:
                acc += (a[s, m] * (e[m] - 1.0) / mu[s, m]).real
        out[n] = base + acc
    return out


@njit(cache=True)
def _val(a, mu, g, s, tau):
    v = g[s]
    for m in range(mu.shape[1]):
        v += (a[s, m] * cmath.exp(mu[s, m] * tau)).real
    return abs(v)


@njit(cache=True)
def seg_peak(a, mu, g, t0, t1, n_even, n_geom):
    """Largest ``|y|``: on each segment ``n_even`` even points and ``n_geom`` geometric ones
    from its start (a transient decays from the event that starts it), the best refined by
    golden-section search between its neighbours."""
    S = mu.shape[0]
    npt = n_even + n_geom
    u = np.empty(npt)
    for k in range(n_even):
        u[k] = k / (n_even - 1)
    for k in range(n_geom):
        u[n_even + k] = 10.0 ** (-6.0 + 6.0 * k / (n_geom - 1))
    u.sort()
    best = 0.0
    gr = (math.sqrt(5.0) - 1.0) / 2.0
    for s in range(S):
        d = t1[s] - t0[s]
        if not d >= 0:
            continue
        kb, vb = 0, -1.0
        for k in range(npt):
            v = _val(a, mu, g, s, d * u[k])
            if v > vb:
                kb, vb = k, v
        if vb > best:
            best = vb
        if d > 0 and vb >= 0.98 * best:
            lo = d * u[max(kb - 1, 0)]
            hi = d * u[min(kb + 1, npt - 1)]
            x1, x2 = hi - gr * (hi - lo), lo + gr * (hi - lo)
            f1, f2 = _val(a, mu, g, s, x1), _val(a, mu, g, s, x2)
            for _ in range(32):
                if f1 > f2:
                    hi, x2, f2 = x2, x1, f1
                    x1 = hi - gr * (hi - lo)
                    f1 = _val(a, mu, g, s, x1)
                else:
                    lo, x1, f1 = x1, x2, f2
                    x2 = lo + gr * (hi - lo)
                    f2 = _val(a, mu, g, s, x2)
            best = max(best, f1, f2)
    return best


# ---------------------------------------------------------------------- modes
@njit(cache=True)
def _norm1(M):
    """Largest column sum of absolute values."""
    best = 0.0
    for j in range(M.shape[1]):
        acc = 0.0
        for i in range(M.shape[0]):
            acc += abs(M[i, j])
        best = max(best, acc)
    return best


@njit(cache=True)
def modal(A, b_src, amps, orders, omega):
    """Eigen-decomposition ``A = V diag(lam) V^-1`` (a (nearly) defective ``A``, whose
    eigenvector matrix has a condition number above 1e9 (1-norm), has its eigenvalues
    nudged apart by 1e-9 of its largest diagonal entry) and the particular-solution phasors
    ``P[:, k] = (j h_k w I - A)^-1 b_src amps[k]`` of the source harmonics."""
    n = A.shape[0]
    Ac = A.astype(np.complex128)
    lam, V = np.linalg.eig(Ac)
    Vinv = np.linalg.inv(V)
    # condition number in the 1-norm, ||V|| ||V^-1|| (within a factor n of the 2-norm's)
    if _norm1(V) * _norm1(Vinv) > 1e9:
        big = 0.0
        for i in range(n):
            big = max(big, abs(A[i, i]))
        for i in range(n):
            Ac[i, i] += 1e-9 * big * (i + 1)
        lam, V = np.linalg.eig(Ac)
        Vinv = np.linalg.inv(V)
    P = np.empty((n, orders.size), dtype=np.complex128)
    for k in range(orders.size):
        M = -A.astype(np.complex128)
        for i in range(n):
            M[i, i] += 1j * orders[k] * omega
        P[:, k] = np.linalg.solve(M, b_src.astype(np.complex128) * amps[k])
    return lam, V, Vinv, P


@njit(cache=True)
def assemble_mode(on, M0, Rhs0, g_cond, inc, ds_on, ds_pos, ds_g_on, ds_g_off, ds_v_on,
                  gs_j, gs_pos, gs_g, gs_i0, cond, g_all, Q0, vsrc, a, b, caps, inds, c_val,
                  l_val, nn, nx, one):
    """The state equations ``x' = A x + B u`` and output matrix ``Q`` of one mode: the
    arithmetic of :meth:`pqcalc.circuits.network.Network._build` (modified nodal analysis
    with the mode's conductances stamped), compiled. Returns (A, B, Q)."""
    g_c = g_cond.copy()
    i0_c = np.zeros(g_c.size)
    for q in range(ds_on.size):
        if on[ds_on[q]] != 0:
            g = ds_g_on[q]
            g_c[ds_pos[q]] = g
            i0_c[ds_pos[q]] = -g * ds_v_on[q]
        else:
            g_c[ds_pos[q]] = ds_g_off[q]
            i0_c[ds_pos[q]] = 0.0
    for q in range(gs_j.size):
        seg = on[gs_j[q]]
        g_c[gs_pos[q]] = gs_g[q, seg]
        i0_c[gs_pos[q]] = gs_i0[q, seg]
    M = M0 + (inc * g_c.reshape(1, g_c.size)) @ inc.T
    Rhs = Rhs0.copy()
    Rhs[:, one] -= inc @ i0_c
    ncol = Rhs.shape[1]
    ne = Q0.shape[0]
    Z = np.linalg.solve(M, Rhs)  # singular (a floating node): LinAlgError, see the caller
    Vn = np.zeros((nn + 1, ncol))
    Vn[1:] = Z[:nn]
    Vel = np.empty((ne, ncol))
    for e in range(ne):
        Vel[e] = Vn[a[e]] - Vn[b[e]]
    g_of = g_all.copy()
    i_one = np.zeros(ne)
    for k in range(cond.size):
        g_of[cond[k]] = g_c[k]
        i_one[cond[k]] = i0_c[k]
    cur = Q0.copy()
    for k in range(cond.size):
        e = cond[k]
        cur[e] = g_of[e] * Vel[e]
    for e in range(ne):
        cur[e, one] += i_one[e]
    for k in range(vsrc.size):
        cur[vsrc[k]] = Z[nn + k]
    Q = np.empty((2 * ne, ncol))
    Q[:ne] = cur
    Q[ne:] = Vel
    AB = np.empty((caps.size + inds.size, ncol))
    for k in range(caps.size):
        AB[k] = cur[caps[k]] / c_val[k]
    for k in range(inds.size):
        AB[caps.size + k] = Vel[inds[k]] / l_val[k]
    return np.ascontiguousarray(AB[:, :nx]), np.ascontiguousarray(AB[:, nx:]), Q


@njit(cache=True)
def seg_at(a, mu, g, t0, t1, ts):
    """Point values ``y(t)`` at the ascending times ``ts`` (a time on a segment boundary
    takes the earlier segment's value). The exponentials advance by recurrence between
    neighbouring times of a segment (re-anchored on exact values every 32 times)."""
    S, M = mu.shape
    out = np.empty(ts.size)
    e = np.empty(M, dtype=np.complex128)
    st = np.empty(M, dtype=np.complex128)
    s = 0
    run = 0
    for n in range(ts.size):
        t = ts[n]
        moved = False
        while s < S - 1 and t > t1[s]:
            s += 1
            moved = True
        if moved:
            run = 0
        tau = t - t0[s]
        if run % 32 == 0 or n < 2 or abs((ts[n] - ts[n - 1]) - (ts[n - 1] - ts[n - 2])) > \
                1e-9 * (ts[n] - ts[n - 1]):
            for m in range(M):
                e[m] = cmath.exp(mu[s, m] * tau)
                if n >= 1:
                    st[m] = cmath.exp(mu[s, m] * (ts[n] - ts[n - 1]))
        else:
            for m in range(M):
                e[m] *= st[m]
        run += 1
        v = g[s]
        for m in range(M):
            v += (a[s, m] * e[m]).real
        out[n] = v
    return out


# ---------------------------------------------------------------------- several outputs
# The same sums for outputs r of one trajectory (a[s, r, m], g[s, r]): the exponentials
# depend on the segment and the time only, and are shared by the outputs.


@njit(cache=True)
def rows_integral_to(a, mu, g, t0, t1, ts):
    """``int_0^t y_r dt`` at the ascending times ``ts`` (``t0[0] = 0``): (R, len(ts))."""
    S, R, M = a.shape
    out = np.empty((R, ts.size))
    e = np.empty(M, dtype=np.complex128)
    st = np.empty(M, dtype=np.complex128)
    w = np.empty(M, dtype=np.complex128)
    inv = np.empty(M, dtype=np.complex128)  # 1 / mu of the current segment
    base = np.zeros(R)
    s = 0
    run = 0
    for m in range(M):
        inv[m] = 1.0 / mu[0, m] if mu[0, m] != 0 else 0.0
    for n in range(ts.size):
        t = ts[n]
        moved = False
        while s < S - 1 and t > t1[s]:
            d = t1[s] - t0[s]
            for m in range(M):
                w[m] = d * _phi1(mu[s, m] * d)
            for r in range(R):
                acc = g[s, r] * d
                for m in range(M):
                    acc += (a[s, r, m] * w[m]).real
                base[r] += acc
            s += 1
            moved = True
        if moved:
            run = 0
            for m in range(M):
                inv[m] = 1.0 / mu[s, m] if mu[s, m] != 0 else 0.0
        tau = t - t0[s]
        if run % 32 == 0 or n < 2 or abs((ts[n] - ts[n - 1]) - (ts[n - 1] - ts[n - 2])) > \
                1e-9 * (ts[n] - ts[n - 1]):
            for m in range(M):
                e[m] = cmath.exp(mu[s, m] * tau)
                if n >= 1:
                    st[m] = cmath.exp(mu[s, m] * (ts[n] - ts[n - 1]))
        else:
            for m in range(M):
                e[m] *= st[m]
        run += 1
        for m in range(M):  # int_0^tau exp(mu u) du
            z = mu[s, m] * tau
            if abs(z) < 1e-5:
                w[m] = tau * (1.0 + z * (0.5 + z / 6.0))
            else:
                w[m] = (e[m] - 1.0) * inv[m]
        for r in range(R):
            acc = base[r] + g[s, r] * tau
            for m in range(M):
                acc += (a[s, r, m] * w[m]).real
            out[r, n] = acc
    return out


@njit(cache=True)
def rows_at(a, mu, g, t0, t1, ts):
    """Point values at the ascending times ``ts``: (R, len(ts))."""
    S, R, M = a.shape
    out = np.empty((R, ts.size))
    e = np.empty(M, dtype=np.complex128)
    st = np.empty(M, dtype=np.complex128)
    s = 0
    run = 0
    for n in range(ts.size):
        t = ts[n]
        moved = False
        while s < S - 1 and t > t1[s]:
            s += 1
            moved = True
        if moved:
            run = 0
        tau = t - t0[s]
        if run % 32 == 0 or n < 2 or abs((ts[n] - ts[n - 1]) - (ts[n - 1] - ts[n - 2])) > \
                1e-9 * (ts[n] - ts[n - 1]):
            for m in range(M):
                e[m] = cmath.exp(mu[s, m] * tau)
                if n >= 1:
                    st[m] = cmath.exp(mu[s, m] * (ts[n] - ts[n - 1]))
        else:
            for m in range(M):
                e[m] *= st[m]
        run += 1
        for r in range(R):
            v = g[s, r]
            for m in range(M):
                v += (a[s, r, m] * e[m]).real
            out[r, n] = v
    return out


@njit(cache=True)
def rows_fourier(a, mu, g, t0, t1, omega, max_order):
    """``int y_r exp(-j h w t) dt`` over the segments, ``h = 0..max_order``: (R, H).

    An exponent that is a whole harmonic of ``omega`` (``mu = j q w``, the source's
    harmonics) meets ``exp(-j h w t)`` in an integral that depends on ``q - h`` or
    ``q + h`` alone: those are taken from a table of ``d phi1(j k w d)`` per segment
    instead of computed per order and exponent."""
    S, R, M = a.shape
    out = np.zeros((R, max_order + 1), dtype=np.complex128)
    pa = np.empty(M, dtype=np.complex128)
    pc = np.empty(M, dtype=np.complex128)
    emu = np.empty(M, dtype=np.complex128)
    q = np.full(M, -1, dtype=np.int64)  # the harmonic an exponent is, or -1
    for s in range(S):
        d = t1[s] - t0[s]
        if not d > 0:
            continue
        qmax = 0
        for m in range(M):
            q[m] = -1
            z = mu[s, m]
            if z.real == 0.0 and omega > 0:
                r = z.imag / omega
                k = round(r)
                if k >= 0 and abs(r - k) < 1e-9 * max(1.0, abs(r)):
                    q[m] = k
                    qmax = max(qmax, k)
        # table[kk + K] = d phi1(j kk w d), kk = -K..K
        K = max_order + qmax
        table = np.empty(2 * K + 1, dtype=np.complex128)
        ew = cmath.exp(1j * omega * d)
        ek = 1.0 + 0j
        for kk in range(K + 1):
            z = 1j * kk * omega * d
            table[K + kk] = d * _phi1e(z, ek)
            table[K - kk] = d * _phi1e(-z, ek.conjugate())
            ek *= ew
        step = cmath.exp(-1j * omega * d)
        rstep = cmath.exp(-1j * omega * t0[s])
        eh = 1.0 + 0j
        rot = 1.0 + 0j
        for m in range(M):
            emu[m] = cmath.exp(mu[s, m] * d)
        for h in range(max_order + 1):
            jhw = 1j * h * omega
            pg = table[K - h]
            for m in range(M):
                if q[m] >= 0:
                    pa[m] = 0.5 * table[K + q[m] - h]
                    pc[m] = 0.5 * table[K - q[m] - h]
                else:
                    pa[m] = 0.5 * d * _phi1e((mu[s, m] - jhw) * d, emu[m] * eh)
                    pc[m] = 0.5 * d * _phi1e((mu[s, m].conjugate() - jhw) * d,
                                             emu[m].conjugate() * eh)
            for r in range(R):
                acc = g[s, r] * pg
                for m in range(M):
                    acc += a[s, r, m] * pa[m] + a[s, r, m].conjugate() * pc[m]
                out[r, h] += acc * rot
            eh *= step
            rot *= rstep
    return out


@njit(cache=True)
def rc_crossing(a, phi, k0, w, tau, t0, half, level, steps):
    """First time in ``[t0, half]`` at which ``a sin(w t - phi) + k0 exp(-(t - t0) / tau)``
    reaches ``level``: bracketed on ``steps`` equal steps, then bisected 60 times (to far
    below a picosecond); -1 when it does not (the firing network of
    :func:`pqcalc.circuits.dimmers.network_delay_s`)."""
    dt = (half - t0) / steps
    prev = t0
    for i in range(steps + 1):
        t = t0 + i * dt
        if a * math.sin(w * t - phi) + k0 * math.exp(-(t - t0) / tau) >= level:
            if i == 0:
                return t0
            lo, hi = prev, t
            for _ in range(60):
                mid = 0.5 * (lo + hi)
                if a * math.sin(w * mid - phi) + k0 * math.exp(-(mid - t0) / tau) >= level:
                    hi = mid
                else:
                    lo = mid
            return hi
        prev = t
    return -1.0


# ------------------------------------------------------------------- harmonic transfer
@njit(cache=True)
def transfer_run(xi0, collect, t0, t1, idx, Vinv, V, lam, pi, qx, qu, jhw, jkw, inv_dk):
    """One pass of :func:`pqcalc.circuits.smallsignal.harmonic_transfer` over the
    segments: the state's answer ``xi`` (n, H) to ``exp(j h w t)`` carried from ``xi0`` at
    the period's start to its end, and with ``collect`` the output's Fourier integrals
    ``acc[k, h]`` (not divided by the period). The same arithmetic as the module's
    description: per segment, the modal coefficients ``c = V^-1 (xi - pi_h e^{j h w t0})``,
    the output ``qx xi + qu e^{j h w t}`` integrated against ``e^{-j k w t}`` exactly, and
    ``xi(t1) = pi_h e^{j h w t1} + V e^{Lambda d} c``. ``inv_dk[k, h]`` is
    ``1 / (j h w - j k w)``, zero where ``h = k``."""
    n, H = xi0.shape
    K = jkw.size
    xi = xi0.copy()
    acc = np.zeros((K, H), dtype=np.complex128)
    c = np.empty((n, H), dtype=np.complex128)
    e0 = np.empty(H, dtype=np.complex128)
    e1 = np.empty(H, dtype=np.complex128)
    ek0 = np.empty(K, dtype=np.complex128)
    ek1 = np.empty(K, dtype=np.complex128)
    a = np.empty(H, dtype=np.complex128)
    qv = np.empty(n, dtype=np.complex128)
    el = np.empty(n, dtype=np.complex128)
    for s in range(t0.size):
        m = idx[s]
        ta, tb = t0[s], t1[s]
        d = tb - ta
        for h in range(H):
            e0[h] = cmath.exp(jhw[h] * ta)
            e1[h] = cmath.exp(jhw[h] * tb)
        for i in range(n):
            el[i] = cmath.exp(lam[m, i] * d)
            for h in range(H):
                v = 0j
                for j in range(n):
                    v += Vinv[m, i, j] * (xi[j, h] - pi[m, j, h] * e0[h])
                c[i, h] = v
        if collect:
            for h in range(H):
                v = qu[m] + 0j
                for j in range(n):
                    v += qx[m, j] * pi[m, j, h]
                a[h] = v
            for i in range(n):
                v = 0j
                for j in range(n):
                    v += qx[m, j] * V[m, j, i]
                qv[i] = v
            for k in range(K):
                ek0[k] = cmath.exp(-jkw[k] * ta)
                ek1[k] = cmath.exp(-jkw[k] * tb)
            for k in range(K):
                for h in range(H):
                    if inv_dk[k, h] == 0:
                        acc[k, h] += a[h] * d
                    else:
                        acc[k, h] += a[h] * (ek1[k] * e1[h] - ek0[k] * e0[h]) * inv_dk[k, h]
                rk = ek1[k] * ek0[k].conjugate()  # exp(-j k w d): jkw is imaginary
                for i in range(n):
                    p = ek0[k] * d * _phi1e((lam[m, i] - jkw[k]) * d, el[i] * rk) * qv[i]
                    for h in range(H):
                        acc[k, h] += p * c[i, h]
        for j in range(n):
            for h in range(H):
                v = pi[m, j, h] * e1[h]
                for i in range(n):
                    v += V[m, j, i] * el[i] * c[i, h]
                xi[j, h] = v
    return xi, acc
