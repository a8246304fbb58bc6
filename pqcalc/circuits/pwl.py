"""Periodic steady state of a piecewise-linear circuit driven by a periodic source.

Method
------
In each mode the circuit is linear, ``x' = A x + B u(t)``, and the source is a finite sum of
sinusoids. The solution over a segment is exact:

    x(t) = x_p(t) + V exp(Lambda (t - t0)) V^-1 (x(t0) - x_p(t0)),

with the particular periodic solution ``x_p`` from the harmonic phasors
``X_h = (j h w I - A)^-1 B_s S_h`` and the eigen-decomposition ``A = V Lambda V^-1``. Switching
events are sign changes of linear functionals of ``[x, u]`` (a diode current falling through
zero, a blocked diode's voltage rising through its threshold, a triac's current falling below
holding, a timing capacitor reaching the trigger voltage); they are bracketed on a grid of
the dense solution and located by Brent's method. Time events (a transistor dimmer's edges)
are hit exactly.

Segments with a nonlinear element (a constant-power converter, ``i = P / v``) are integrated
with the implicit Radau IIA method of order 5 (:func:`scipy.integrate.solve_ivp`) with the
same event functions.

The periodic state is found by shooting: Newton's method on ``x(0) = x(T)``, the Jacobian
being the monodromy matrix (the product of the segments' transition matrices; for
nonlinear segments finite differences of the period map). A period of several mains cycles
(a triac that fires every k-th half cycle) is searched when the one-cycle solution is not
consistent or not stable.

References
----------
T. J. Aprille, T. N. Trick, "Steady-state analysis of nonlinear circuits with periodic
inputs", Proc. IEEE 60(1), 1972 (shooting with the monodromy matrix).
E. Hairer, G. Wanner, *Solving Ordinary Differential Equations II*, Springer, 1996 (Radau IIA).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
from scipy.integrate import solve_ivp
from scipy.optimize import brentq

from ..errors import ConvergenceError
from .network import CH_ONE, CH_SOURCE, Network

__all__ = ["Source", "Automaton", "Engine", "Trajectory", "EPS_I_A", "EPS_V_V"]

#: event hysteresis of diodes: a conducting diode blocks when its current falls below
#: -EPS_I_A, a blocking one conducts when its voltage exceeds v_on + EPS_V_V. Far below any
#: current or voltage of interest; they only stop a just-switched diode from switching back.
EPS_I_A = 1e-7
EPS_V_V = 1e-5


@dataclass(frozen=True)
class Source:
    """A periodic source voltage ``v(t) = S0 + Re(sum_h S_h exp(j h w t))`` [V]."""

    frequency_hz: float
    orders: np.ndarray  # int, >= 1
    amplitudes: np.ndarray  # complex [V peak]
    dc_v: float = 0.0

    @classmethod
    def from_sines(cls, frequency_hz, terms, dc_v: float = 0.0) -> Source:
        """From ``(order, peak_v, phase_rad)`` terms, each ``peak sin(h w t + phase)``."""
        h = np.array([t[0] for t in terms], dtype=int)
        s = np.array([t[1] * np.exp(1j * (t[2] - np.pi / 2)) for t in terms], dtype=complex)
        return cls(float(frequency_hz), h, s, float(dc_v))

    @property
    def omega(self) -> float:
        return 2 * np.pi * self.frequency_hz

    def __call__(self, t) -> np.ndarray:
        t = np.asarray(t, dtype=float)
        ph = np.exp(1j * self.omega * np.multiply.outer(t, self.orders))
        return self.dc_v + np.real(ph @ self.amplitudes)


class Automaton:
    """Discrete logic of a controller (dimmer, converter). Subclasses override what they use.

    The discrete state ``s`` is any hashable value. Guards are ``(row, threshold, tag)``: the
    event happens when ``row @ [x, u]`` rises above ``threshold``.
    """

    initial: object = None

    def switches(self, s) -> dict[str, bool]:
        return {}

    def constants(self, s) -> list:
        """Inputs held constant in this state: ``(channel, value)``."""
        return []

    def nonlinear(self, s) -> list:
        """Active nonlinear channels: ``(channel, f(x) -> value, df(x) -> row over x)``."""
        return []

    def guards(self, s, net: Network, ms) -> list:
        return []

    def next_time(self, s, t: float) -> tuple[float, object]:
        return np.inf, None

    def fire(self, tag, s, t: float, x: np.ndarray, value) -> tuple[object, np.ndarray]:
        """React to an event; ``value(row)`` evaluates a row over ``[x, u]`` at ``t``."""
        return s, x


@dataclass
class _ModeData:
    key: tuple
    A: np.ndarray
    B: np.ndarray
    Q: np.ndarray
    lam: np.ndarray
    V: np.ndarray
    Vinv: np.ndarray
    P: np.ndarray  # n_x x H, complex particular-solution phasors
    p0: np.ndarray  # n_x, DC particular solution
    consts: tuple = ()  # (channel, value) inputs held constant in this mode


@dataclass
class _Segment:
    t0: float
    t1: float
    disc: tuple
    md: _ModeData
    x0: np.ndarray
    c: np.ndarray | None = None  # modal coefficients (linear segment)
    sol: object = None  # dense output (nonlinear segment)
    nl: list = field(default_factory=list)


@dataclass
class Trajectory:
    """One simulated period: segments and the monodromy matrix."""

    x0: np.ndarray
    xT: np.ndarray
    s0: tuple
    sT: tuple
    phi: np.ndarray
    segments: list
    nonlinear: bool
    events: list


class Engine:
    """Simulate and find the periodic steady state of ``net`` under ``source`` and
    ``automata`` (each with a discrete state; diodes are handled here)."""

    def __init__(self, net: Network, source: Source, automata: list[Automaton],
                 grid_per_cycle: int = 2048) -> None:
        self.net = net
        self.src = source
        self.automata = automata
        self.T1 = 1.0 / source.frequency_hz
        self.dt_grid = self.T1 / grid_per_cycle
        self._md: dict[tuple, _ModeData] = {}
        self.n_events = 0

    # ------------------------------------------------------------------ modes
    def key_of(self, disc: tuple) -> tuple:
        diodes, autos = disc
        sw = {}
        for a, s in zip(self.automata, autos):
            sw.update(a.switches(s))
        net = self.net
        key = tuple(diodes) + tuple(
            sw.get(net.elements[i].name, False if net.elements[i].kind == "S" else 0)
            for i in net.switches
        )
        return key, self._consts(disc)

    def _consts(self, disc) -> tuple:
        out = []
        for a, s in zip(self.automata, disc[1]):
            out.extend(a.constants(s))
        return tuple(out)

    def mode_data(self, disc: tuple) -> _ModeData:
        fullkey = self.key_of(disc)
        md = self._md.get(fullkey)
        if md is None:
            key, consts = fullkey
            ms = self.net.mode(key)
            A, B = ms.A, ms.B
            n = A.shape[0]
            lam, V = np.linalg.eig(A)
            if n and np.linalg.cond(V) > 1e9:  # (nearly) defective: nudge the eigenvalues apart
                lam, V = np.linalg.eig(A + np.diag(1e-9 * np.abs(np.diag(A)).max()
                                                   * np.arange(1, n + 1)))
            Vinv = np.linalg.inv(V)
            w = self.src.omega
            P = np.zeros((n, self.src.orders.size), dtype=complex)
            for k, (h, s) in enumerate(zip(self.src.orders, self.src.amplitudes)):
                P[:, k] = np.linalg.solve(1j * h * w * np.eye(n) - A, B[:, CH_SOURCE] * s)
            bc = B[:, CH_ONE] + B[:, CH_SOURCE] * self.src.dc_v
            for ch, val in consts:
                bc = bc + B[:, ch] * val
            p0 = -np.linalg.solve(A, bc) if n else np.zeros(0)
            md = _ModeData(key, A, B, ms.Q, lam, V, Vinv, P, p0, consts)
            self._md[fullkey] = md
        return md

    def u_at(self, t, nl_vals=None, consts=()) -> np.ndarray:
        t = np.atleast_1d(np.asarray(t, dtype=float))
        U = np.zeros((self.net.n_u, t.size))
        U[CH_SOURCE] = self.src(t)
        U[CH_ONE] = 1.0
        for ch, v in consts:
            U[ch] = v
        if nl_vals:
            for ch, v in nl_vals:
                U[ch] = v
        return U

    def xp(self, md: _ModeData, t) -> np.ndarray:
        t = np.atleast_1d(np.asarray(t, dtype=float))
        ph = np.exp(1j * self.src.omega * np.multiply.outer(self.src.orders, t))
        return np.real(md.P @ ph) + md.p0[:, None]

    def x_lin(self, md: _ModeData, t0: float, c: np.ndarray, t) -> np.ndarray:
        t = np.atleast_1d(np.asarray(t, dtype=float))
        hom = np.real(md.V @ (np.exp(np.multiply.outer(md.lam, t - t0)) * c[:, None]))
        return self.xp(md, t) + hom

    # ------------------------------------------------------------------ guards
    def guards(self, disc: tuple, md: _ModeData) -> list:
        net = self.net
        out = []
        diodes, autos = disc
        ms = net.mode(md.key)
        for j, k in enumerate(net.diodes):
            e = net.elements[k]
            if diodes[j]:
                out.append((-ms.Q[k], EPS_I_A, ("D", j)))
            else:
                out.append((ms.Q[net.n_e + k], e.v_on + EPS_V_V, ("D", j)))
        for ia, (a, s) in enumerate(zip(self.automata, autos)):
            for row, th, tag in a.guards(s, net, ms):
                out.append((row, th, ("A", ia, tag)))
        return out

    def _nl_list(self, disc):
        out = []
        for a, s in zip(self.automata, disc[1]):
            out.extend(a.nonlinear(s))
        return out

    def _value_fn(self, md, t, x, nl):
        z = np.concatenate([x, self.u_at(t, [(ch, f(x)) for ch, f, _ in nl], md.consts)[:, 0]])
        return lambda row: float((row(md) if callable(row) else row) @ z)

    def _fire(self, tag, disc, t, x, md, nl):
        diodes, autos = disc
        if tag[0] == "D":
            d = list(diodes)
            d[tag[1]] = not d[tag[1]]
            return (tuple(d), autos), x
        _, ia, atag = tag
        s_new, x_new = self.automata[ia].fire(atag, autos[ia], t, x,
                                              self._value_fn(md, t, x, nl))
        a2 = list(autos)
        a2[ia] = s_new
        return (diodes, tuple(a2)), x_new

    def settle(self, disc, t, x, events=None):
        """Fire every guard already violated at ``t`` until the discrete state is consistent."""
        for _ in range(64):
            md = self.mode_data(disc)
            nl = self._nl_list(disc)
            val = self._value_fn(md, t, x, nl)
            worst, wtag = 0.0, None
            for row, th, tag in self.guards(disc, md):
                g = val(row) - th
                if g > 0:
                    # diodes: the most violated first; automaton events before diodes
                    score = np.inf if tag[0] == "A" else g / (abs(th) + 1.0)
                    if score > worst:
                        worst, wtag = score, tag
            if wtag is None:
                return disc, x
            disc, x = self._fire(wtag, disc, t, x, md, nl)
            if events is not None:
                events.append((t, wtag))
        raise ConvergenceError(
            f"switching did not settle at t = {t * 1e3:.4f} ms (components chatter); "
            "tried 64 consistent-mode iterations"
        )

    # ------------------------------------------------------------------ one run
    def run(self, t_start: float, t_end: float, x0: np.ndarray, disc0: tuple,
            record: bool = False) -> Trajectory:
        t, x = t_start, np.array(x0, dtype=float)
        events: list = []
        disc, x = self.settle(disc0, t, x, events)
        s0 = disc
        n = x.size
        phi = np.eye(n)
        segs = []
        nonlinear = False
        guard_count = 0
        while t < t_end - 1e-15:
            md = self.mode_data(disc)
            nl = self._nl_list(disc)
            t_time, ttag, tia = np.inf, None, None
            for ia, (a, s) in enumerate(zip(self.automata, disc[1])):
                tt, tg = a.next_time(s, t)
                if tt < t_time:
                    t_time, ttag, tia = tt, tg, ia
            t_stop = min(t_end, t_time)
            gl = self.guards(disc, md)
            if nl:
                nonlinear = True
                t_hit, gtag, x_new, seg = self._advance_nl(md, disc, nl, t, x, t_stop, gl)
            else:
                t_hit, gtag, x_new, seg = self._advance_lin(md, disc, t, x, t_stop, gl)
                dt = (t_hit if gtag is not None else t_stop) - t
                phi = np.real(md.V @ (np.exp(md.lam * dt)[:, None] * md.Vinv)) @ phi
            if record:
                segs.append(seg)
            if gtag is not None:
                t, x = t_hit, x_new
                events.append((t, gtag))
                disc, x = self._fire(gtag, disc, t, x, md, nl)
                guard_count += 1
            else:
                t, x = t_stop, x_new
                if ttag is not None and t_time <= t_end + 1e-15 and t_stop == t_time:
                    events.append((t, ("T", tia, ttag)))
                    a2 = list(disc[1])
                    a2[tia], x = self.automata[tia].fire(
                        ttag, disc[1][tia], t, x, self._value_fn(md, t, x, nl))
                    disc = (disc[0], tuple(a2))
            disc, x = self.settle(disc, t, x, events)
            if guard_count > 4000:
                raise ConvergenceError(
                    "more than 4000 switching events in one period: the circuit chatters; "
                    "check the component values"
                )
        self.n_events += len(events)
        return Trajectory(np.array(x0, float), x, s0, disc, phi, segs, nonlinear, events)

    def _advance_lin(self, md, disc, t0, x0, t_stop, gl):
        c = md.Vinv @ (x0 - self.xp(md, t0)[:, 0])
        seg = _Segment(t0, t_stop, disc, md, x0, c=c)
        if gl and t_stop > t0:
            G = np.array([g[0] for g in gl])
            th = np.array([g[1] for g in gl])
            nx = self.net.n_x
            Gx, Gu = G[:, :nx], G[:, nx:]
            GV = Gx @ md.V
            GP = Gx @ md.P + np.outer(Gu[:, CH_SOURCE], self.src.amplitudes)
            g0 = Gx @ md.p0 + Gu[:, CH_ONE] + Gu[:, CH_SOURCE] * self.src.dc_v - th
            for ch, val in md.consts:
                g0 = g0 + Gu[:, ch] * val
            w = self.src.omega
            hs = self.src.orders

            def gval(ts):
                ts = np.atleast_1d(ts)
                hom = np.real(GV @ (np.exp(np.multiply.outer(md.lam, ts - t0)) * c[:, None]))
                part = np.real(GP @ np.exp(1j * w * np.multiply.outer(hs, ts)))
                return hom + part + g0[:, None]

            span = t_stop - t0
            nstep = max(int(np.ceil(span / self.dt_grid)), 1)
            chunk = 256
            prev_t, prev_g = t0, np.minimum(gval(t0)[:, 0], 0.0)
            k = 0
            while k < nstep:
                kk = np.arange(k + 1, min(k + chunk, nstep) + 1)
                ts = t0 + span * kk / nstep
                gv = gval(ts)
                allg = np.concatenate([prev_g[:, None], gv], axis=1)
                cross = (allg[:, 1:] > 0) & (allg[:, :-1] <= 0)
                if cross.any():
                    col = int(np.argmax(cross.any(axis=0)))
                    ta = prev_t if col == 0 else ts[col - 1]
                    tb = ts[col]
                    best, btag = tb, None
                    for i in np.flatnonzero(cross[:, col]):
                        def f(tt, i=i):
                            return float(gval(tt)[i, 0])
                        fa = f(ta)
                        tr = ta if fa > 0 else brentq(f, ta, tb, xtol=1e-13, rtol=1e-14)
                        # step just past the root so the event has truly happened
                        while f(tr) <= 0 and tr < tb:
                            tr = min(tb, tr + 1e-13 + 1e-15 * abs(tr))
                        if tr <= best:
                            best, btag = tr, gl[i][2]
                    x1 = self.x_lin(md, t0, c, best)[:, 0]
                    seg.t1 = best
                    return best, btag, x1, seg
                prev_t, prev_g = ts[-1], gv[:, -1]
                k = kk[-1]
        x1 = self.x_lin(md, t0, c, t_stop)[:, 0]
        return t_stop, None, x1, seg

    def _advance_nl(self, md, disc, nl, t0, x0, t_stop, gl):
        A, B = md.A, md.B
        nx = self.net.n_x

        def rhs(t, x):
            u = self.u_at(t, [(ch, f(x)) for ch, f, _ in nl], md.consts)[:, 0]
            return A @ x + B @ u

        def jac(t, x):
            J = A.copy()
            for ch, _, df in nl:
                J = J + np.outer(B[:, ch], df(x))
            return J

        evs = []
        for row, th, _tag in gl:
            def ev(t, x, row=row, th=th):
                u = self.u_at(t, [(ch, f(x)) for ch, f, _ in nl], md.consts)[:, 0]
                return float(row[:nx] @ x + row[nx:] @ u - th)
            ev.terminal = True
            ev.direction = 1
            evs.append(ev)
        sol = solve_ivp(rhs, (t0, t_stop), x0, method="Radau", jac=jac, events=evs or None,
                        rtol=1e-9, atol=1e-9, dense_output=True,
                        max_step=self.T1 / 64)
        if sol.status < 0:
            raise ConvergenceError(f"the ODE solver failed at t = {t0 * 1e3:.3f} ms: {sol.message}")
        seg = _Segment(t0, t_stop, disc, md, x0, sol=sol.sol, nl=nl)
        if sol.status == 1:
            hits = [(te[0], i) for i, te in enumerate(sol.t_events) if te.size]
            te, i = min(hits)
            seg.t1 = te
            xe = sol.y_events[i][0]
            return te, gl[i][2], xe, seg
        return t_stop, None, sol.y[:, -1], seg

    # ------------------------------------------------------------------ steady state
    def periodic(self, cycles: int, x0: np.ndarray, disc0: tuple, tol: float = 1e-9,
                 max_iter: int = 40) -> tuple[Trajectory, int, bool]:
        """Shooting over ``cycles`` mains periods. Returns (recorded trajectory, iterations,
        converged)."""
        T = cycles * self.T1
        x = np.array(x0, dtype=float)
        disc = disc0
        n = x.size
        last_r = np.inf
        for it in range(1, max_iter + 1):
            tr = self.run(0.0, T, x, disc)
            r = tr.xT - x
            scale = np.maximum(np.abs(tr.xT), np.abs(x)) + self._floor
            rn = float(np.max(np.abs(r) / scale)) if n else 0.0
            if rn < tol and tr.sT == tr.s0:
                return self.run(0.0, T, x, tr.s0, record=True), it, True
            if tr.nonlinear:
                J = np.zeros((n, n))
                for j in range(n):
                    d = 1e-6 * scale[j]
                    xd = x.copy()
                    xd[j] += d
                    trd = self.run(0.0, T, xd, tr.s0)
                    J[:, j] = (trd.xT - tr.xT) / d
                phi = J
            else:
                phi = tr.phi
            try:
                dx = np.linalg.solve(np.eye(n) - phi, r)
            except np.linalg.LinAlgError:
                dx = r
            if rn > last_r * 1.5 and it > 3:
                dx = 0.5 * dx  # damp when the switching sequence jumps between iterations
            last_r = min(rn, last_r)
            x = x + dx
            disc = tr.sT
        return self.run(0.0, T, x, disc, record=True), max_iter, False

    _floor = None  # per-state absolute scale, set by the caller

    def sample(self, tr: Trajectory, ts: np.ndarray, outputs: list[tuple[str, str]]):
        """Element currents ('i') or voltages ('v') at the times ``ts`` [A, V]."""
        net = self.net
        rows = [(net.index[name] if kind == "i" else net.n_e + net.index[name])
                for name, kind in outputs]
        Y = np.zeros((len(outputs), ts.size))
        X = np.zeros((net.n_x, ts.size))
        for k, sg in enumerate(tr.segments):
            last = k == len(tr.segments) - 1
            m = (ts >= sg.t0) & ((ts < sg.t1) | (last & (ts <= sg.t1 + 1e-12)))
            if not m.any():
                continue
            tt = ts[m]
            if sg.sol is None:
                xs = self.x_lin(sg.md, sg.t0, sg.c, tt)
                U = self.u_at(tt, None, sg.md.consts)
            else:
                xs = sg.sol(tt)
                U = self.u_at(tt, None, sg.md.consts)
                for ch, f, _ in sg.nl:
                    U[ch] = [f(xs[:, i]) for i in range(tt.size)]
            Z = np.vstack([xs, U])
            Y[:, m] = sg.md.Q[rows] @ Z
            X[:, m] = xs
        return Y, X
