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

Every element is piecewise linear or piecewise affine, so no segment needs a numerical
integrator: a constant-power converter (``i = P / v``) is the chord interpolant of ``P / v``
on a geometric grid of voltages (:class:`pqcalc.circuits.drivers.ConverterUVLO`), each grid
cell one mode; its crossings are events like any other. Event roots are found by a
bracketed Newton iteration on the one guard that crossed (its time derivative is exact).

The periodic state is found by shooting: Newton's method on ``x(0) = x(T)``, the Jacobian
being the monodromy matrix (the product of the segments' transition matrices, exact where
the vector field is continuous across the switching surface: diodes turning on at their
threshold or off at zero current, the converter's chord cells). A period of several mains cycles
(a triac that fires every k-th half cycle) is searched when the one-cycle solution is not
consistent or not stable.

References
----------
T. J. Aprille, T. N. Trick, "Steady-state analysis of nonlinear circuits with periodic
inputs", Proc. IEEE 60(1), 1972 (shooting with the monodromy matrix).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..errors import ConvergenceError
from .kernels import ROOT_TOL_S, first_event, modal
from .network import CH_ONE, CH_SOURCE, Network

__all__ = ["Source", "Automaton", "Engine", "Trajectory", "EPS_I_A", "EPS_V_V", "ROOT_TOL_S"]

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

    def phasors(self, t: np.ndarray) -> np.ndarray:
        """``exp(j h w t)`` for every order (rows) and time (columns): one complex
        exponential per time, the orders by repeated multiplication (rounding grows as
        ``h`` times the machine epsilon, below 1e-14 for h <= 50)."""
        t = np.asarray(t, dtype=float)
        e1 = np.exp(1j * self.omega * t)
        hmax = int(self.orders.max())
        out = np.empty((hmax, t.size), dtype=complex)
        out[0] = e1
        for h in range(1, hmax):
            np.multiply(out[h - 1], e1, out=out[h])
        return out[self.orders - 1]


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

    def guards(self, s, net: Network, ms) -> list:
        return []

    def next_time(self, s, t: float) -> tuple[float, object]:
        return np.inf, None

    def fire(self, tag, s, t: float, x: np.ndarray, value) -> tuple[object, np.ndarray]:
        """React to an event; ``value(row)`` evaluates a row over ``[x, u]`` at ``t``."""
        return s, x

    def compiled_spec(self, net: Network) -> tuple | None:
        """The compiled loop's encoding of this controller (:mod:`pqcalc.circuits.loop`):
        ``(type, switch element name or None, f, b, b2)``, its states mapped to and from a
        row of three floats by :meth:`to_row` and :meth:`from_row`; None where it has none
        (the engine then runs in Python)."""
        return None

    def to_row(self, s) -> tuple[float, float, float]:
        return (float(s), 0.0, 0.0)

    def from_row(self, row) -> object:
        return int(row[0])

    def tag_name(self, code: int) -> object:
        return code


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
    c: np.ndarray | None = None  # modal coefficients


class Trajectory:
    """One simulated period: segments and the monodromy matrix. The compiled loop's
    segments and events are turned into Python objects when first read."""

    def __init__(self, x0: np.ndarray, xT: np.ndarray, s0: tuple, sT: tuple, phi: np.ndarray,
                 segments: list | None, events: list | None, lazy=None) -> None:
        self.x0, self.xT, self.s0, self.sT, self.phi = x0, xT, s0, sT, phi
        self._segments, self._events, self._lazy = segments, events, lazy

    @property
    def segments(self) -> list:
        if self._segments is None:
            self._segments = self._lazy.segments() if self._lazy is not None else []
        return self._segments

    def segment_table(self):
        """The segments as arrays: start and end times [s], the modes' arrays stacked
        ``(Q, V, P, p0, lam, consts)`` (``consts``: per mode, inputs held constant), each
        segment's index into them and its modal coefficients (S, n)."""
        if self._segments is None and self._lazy is not None:
            return self._lazy.table()
        segs = self.segments
        ids: dict[int, int] = {}
        mds: list[_ModeData] = []
        for sg in segs:
            if id(sg.md) not in ids:
                ids[id(sg.md)] = len(mds)
                mds.append(sg.md)
        n = self.x0.size
        stack = (np.array([md.Q for md in mds]), np.array([md.V for md in mds], dtype=complex),
                 np.array([md.P for md in mds], dtype=complex),
                 np.array([md.p0 for md in mds]).reshape(len(mds), n),
                 np.array([md.lam for md in mds], dtype=complex).reshape(len(mds), n),
                 [md.consts for md in mds])
        return (np.array([sg.t0 for sg in segs]), np.array([sg.t1 for sg in segs]), stack,
                np.array([ids[id(sg.md)] for sg in segs], dtype=np.int64),
                np.array([sg.c for sg in segs], dtype=complex).reshape(len(segs), n))

    def seg_times(self) -> tuple[np.ndarray, np.ndarray]:
        """Start and end times of the segments [s]."""
        if self._segments is None and self._lazy is not None:
            b, k = self._lazy.buf, self._lazy.nseg
            return b.seg_t[:k, 0], b.seg_t[:k, 1]
        return (np.array([sg.t0 for sg in self.segments]),
                np.array([sg.t1 for sg in self.segments]))

    def switch_on(self, pos: int) -> np.ndarray:
        """Per segment, entry ``pos`` of its mode's switch vector (diodes, then switch
        elements' segments) [int]."""
        if self._segments is None and self._lazy is not None:
            b, k = self._lazy.buf, self._lazy.nseg
            return self._lazy.fl.mon[b.seg_mode[:k], pos]
        return np.array([int(sg.md.key[pos]) for sg in self.segments], dtype=np.int64)

    def states(self, ia: int) -> list:
        """Per segment, the state of automaton ``ia``."""
        if self._segments is None and self._lazy is not None:
            b, k = self._lazy.buf, self._lazy.nseg
            a = self._lazy.fl.eng.automata[ia]
            rows = b.seg_aut[:k, ia, :]
            cache: dict[bytes, object] = {}
            out = []
            for r in rows:
                key = r.tobytes()
                st = cache.get(key)
                if st is None:
                    st = cache[key] = a.from_row(r)
                out.append(st)
            return out
        return [sg.disc[1][ia] for sg in self.segments]

    @property
    def events(self) -> list:
        if self._events is None:
            self._events = self._lazy.events() if self._lazy is not None else []
        return self._events


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
        self._gd: dict[tuple, tuple] = {}
        self._by_disc: dict[tuple, _ModeData] = {}
        self._sd: dict[tuple, tuple] = {}
        self._jwh = 1j * source.omega * source.orders
        self.n_events = 0
        self._fast = _FastLoop.make(self)

    # ------------------------------------------------------------------ modes
    def key_of(self, disc: tuple) -> tuple:
        diodes, autos = disc
        sw = {}
        for a, s in zip(self.automata, autos, strict=True):
            sw.update(a.switches(s))
        net = self.net
        key = tuple(diodes) + tuple(
            sw.get(net.elements[i].name, False if net.elements[i].kind == "S" else 0)
            for i in net.switches
        )
        return key, self._consts(disc)

    def _consts(self, disc) -> tuple:
        out = []
        for a, s in zip(self.automata, disc[1], strict=True):
            out.extend(a.constants(s))
        return tuple(out)

    def mode_data(self, disc: tuple) -> _ModeData:
        md = self._by_disc.get(disc)
        if md is None:
            md = self._by_disc[disc] = self._mode_data(disc)
        return md

    def _mode_data(self, disc: tuple) -> _ModeData:
        fullkey = self.key_of(disc)
        md = self._md.get(fullkey)
        if md is None:
            key, consts = fullkey
            ms = self.net.mode(key)
            A, B = ms.A, ms.B
            n = A.shape[0]
            if n:
                lam, V, Vinv, P = modal(np.ascontiguousarray(A),
                                        np.ascontiguousarray(B[:, CH_SOURCE]),
                                        self.src.amplitudes.astype(complex),
                                        self.src.orders.astype(float), float(self.src.omega))
            else:
                lam, V, Vinv = np.zeros(0, complex), np.zeros((0, 0), complex), \
                    np.zeros((0, 0), complex)
                P = np.zeros((0, self.src.orders.size), complex)
            bc = B[:, CH_ONE] + B[:, CH_SOURCE] * self.src.dc_v
            for ch, val in consts:
                bc = bc + B[:, ch] * val
            p0 = -np.linalg.solve(A, bc) if n else np.zeros(0)
            md = _ModeData(key, A, B, ms.Q, lam, V, Vinv, P, p0, consts)
            self._md[fullkey] = md
        return md

    def u_at(self, t, consts=()) -> np.ndarray:
        t = np.atleast_1d(np.asarray(t, dtype=float))
        U = np.zeros((self.net.n_u, t.size))
        U[CH_SOURCE] = self.src(t)
        U[CH_ONE] = 1.0
        for ch, v in consts:
            U[ch] = v
        return U

    def _u1(self, t: float, consts=()) -> np.ndarray:
        """The inputs at the one time ``t``: :meth:`u_at` without its array set-up."""
        u = np.zeros(self.net.n_u)
        u[CH_SOURCE] = self.src.dc_v + np.real(np.exp(self._jwh * t) @ self.src.amplitudes)
        u[CH_ONE] = 1.0
        for ch, v in consts:
            u[ch] = v
        return u

    def xp(self, md: _ModeData, t) -> np.ndarray:
        t = np.atleast_1d(np.asarray(t, dtype=float))
        ph = np.exp(1j * self.src.omega * np.multiply.outer(self.src.orders, t))
        return np.real(md.P @ ph) + md.p0[:, None]

    def _x1(self, md: _ModeData, t0: float, c: np.ndarray | None, t: float) -> np.ndarray:
        """The state at the one time ``t`` (the particular solution alone if ``c`` is
        None): :meth:`x_lin` without its array set-up."""
        xp = np.real(md.P @ np.exp(self._jwh * t)) + md.p0
        if c is None:
            return xp
        return xp + np.real(md.V @ (np.exp(md.lam * (t - t0)) * c))

    def x_lin(self, md: _ModeData, t0: float, c: np.ndarray, t) -> np.ndarray:
        t = np.atleast_1d(np.asarray(t, dtype=float))
        hom = np.real(md.V @ (np.exp(np.multiply.outer(md.lam, t - t0)) * c[:, None]))
        return self.xp(md, t) + hom

    # ------------------------------------------------------------------ guards
    def guards(self, disc: tuple, md: _ModeData) -> list:
        net = self.net
        out: list[tuple] = []
        diodes, autos = disc
        ms = net.mode(md.key)
        for j, k in enumerate(net.diodes):
            e = net.elements[k]
            if diodes[j]:
                out.append((-ms.Q[k], EPS_I_A, ("D", j)))
            else:
                out.append((ms.Q[net.n_e + k], e.v_on + EPS_V_V, ("D", j)))
        for ia, (a, s) in enumerate(zip(self.automata, autos, strict=True)):
            for row, th, tag in a.guards(s, net, ms):
                out.append((row, th, ("A", ia, tag)))
        return out

    def _value_fn(self, md, t, x):
        z = np.concatenate([x, self._u1(t, md.consts)])
        return lambda row: float((row(md) if callable(row) else row) @ z)

    def _fire(self, tag, disc, t, x, md):
        diodes, autos = disc
        if tag[0] == "D":
            d = list(diodes)
            d[tag[1]] = not d[tag[1]]
            return (tuple(d), autos), x
        _, ia, atag = tag
        s_new, x_new = self.automata[ia].fire(atag, autos[ia], t, x,
                                              self._value_fn(md, t, x))
        a2 = list(autos)
        a2[ia] = s_new
        return (diodes, tuple(a2)), x_new

    def _settle_data(self, disc):
        """The guards of a discrete state as a matrix over ``[x, u]``, their thresholds,
        tags and firing priorities (cached)."""
        sd = self._sd.get(disc)
        if sd is None:
            md = self.mode_data(disc)
            gl = self.guards(disc, md)
            if gl:
                G = np.array([g[0] for g in gl])
                th = np.array([g[1] for g in gl])
                # diodes: the most violated first (relative to the threshold); automaton
                # events before diodes
                w = np.array([np.inf if g[2][0] == "A" else 1.0 / (abs(g[1]) + 1.0)
                              for g in gl])
                sd = (md, G, th, w, [g[2] for g in gl])
            else:
                sd = (md, None, None, None, [])
            self._sd[disc] = sd
        return sd

    def settle(self, disc, t, x, events=None):
        """Fire every guard already violated at ``t`` until the discrete state is consistent."""
        for _ in range(64):
            md, G, th, w, tags = self._settle_data(disc)
            if G is None:
                return disc, x
            z = np.concatenate([x, self._u1(t, md.consts)])
            gv = G @ z - th
            viol = gv > 0
            if not viol.any():
                return disc, x
            with np.errstate(invalid="ignore"):
                score = np.where(viol, w * gv, -np.inf)
            wtag = tags[int(np.argmax(score))]
            disc, x = self._fire(wtag, disc, t, x, md)
            if events is not None:
                events.append((t, wtag))
        raise ConvergenceError(
            f"switching did not settle at t = {t * 1e3:.4f} ms (components chatter); "
            "tried 64 consistent-mode iterations"
        )

    # ------------------------------------------------------------------ one run
    def run(self, t_start: float, t_end: float, x0: np.ndarray, disc0: tuple,
            record: bool = False) -> Trajectory:
        """Simulate from ``t_start`` to ``t_end``: the compiled loop where the controllers
        have one (:mod:`pqcalc.circuits.loop`), else :meth:`run_python`."""
        if self._fast is not None:
            return self._fast.run(float(t_start), float(t_end), x0, disc0)
        return self.run_python(t_start, t_end, x0, disc0, record)

    def run_python(self, t_start: float, t_end: float, x0: np.ndarray, disc0: tuple,
                   record: bool = False) -> Trajectory:
        """:meth:`run` in Python (the reference of the compiled loop)."""
        t, x = t_start, np.array(x0, dtype=float)
        events: list = []
        disc, x = self.settle(disc0, t, x, events)
        s0 = disc
        n = x.size
        phi = np.eye(n)
        segs = []
        guard_count = 0
        while t < t_end - 1e-15:
            md = self.mode_data(disc)
            t_time, ttag, tia = np.inf, None, -1
            for ia, (a, s) in enumerate(zip(self.automata, disc[1], strict=True)):
                tt, tg = a.next_time(s, t)
                if tt < t_time:
                    t_time, ttag, tia = tt, tg, ia
            t_stop = min(t_end, t_time)
            t_hit, gtag, x_new, seg = self._advance_lin(md, disc, t, x, t_stop)
            dt = (t_hit if gtag is not None else t_stop) - t
            phi = np.real(md.V @ (np.exp(md.lam * dt)[:, None] * md.Vinv)) @ phi
            if record:
                segs.append(seg)
            if gtag is not None:
                t, x = t_hit, x_new
                events.append((t, gtag))
                disc, x = self._fire(gtag, disc, t, x, md)
                guard_count += 1
            else:
                t, x = t_stop, x_new
                if ttag is not None and t_time <= t_end + 1e-15 and t_stop == t_time:
                    events.append((t, ("T", tia, ttag)))
                    a2 = list(disc[1])
                    a2[tia], x = self.automata[tia].fire(
                        ttag, disc[1][tia], t, x, self._value_fn(md, t, x))
                    disc = (disc[0], tuple(a2))
            disc, x = self.settle(disc, t, x, events)
            if guard_count > 4000 * max(1, round((t_end - t_start) / self.T1)):
                raise ConvergenceError(
                    "more than 4000 switching events in one period: the circuit chatters; "
                    "check the component values"
                )
        self.n_events += len(events)
        return Trajectory(np.array(x0, float), x, s0, disc, phi, segs, events)

    def _guard_data(self, disc, md):
        """The guards of a discrete state as arrays over the modal and harmonic bases:
        ``g(t) = Re(GV (exp(lam (t - t0)) c)) + Re(GP exp(j h w t)) + g0`` (cached)."""
        gd = self._gd.get(disc)
        if gd is None:
            gl = self.guards(disc, md)
            if not gl:
                gd = (gl, None, None, None)
            else:
                G = np.array([g[0] for g in gl])
                th = np.array([g[1] for g in gl])
                nx = self.net.n_x
                Gx, Gu = G[:, :nx], G[:, nx:]
                GV = Gx @ md.V
                GP = Gx @ md.P + np.outer(Gu[:, CH_SOURCE], self.src.amplitudes)
                g0 = Gx @ md.p0 + Gu[:, CH_ONE] + Gu[:, CH_SOURCE] * self.src.dc_v - th
                for ch, val in md.consts:
                    g0 = g0 + Gu[:, ch] * val
                gd = ([g[2] for g in gl], GV, GP, g0)
            self._gd[disc] = gd
        return gd

    def _advance_lin(self, md, disc, t0, x0, t_stop):
        c = md.Vinv @ (x0 - self._x1(md, t0, None, t0))
        seg = _Segment(t0, t_stop, disc, md, x0, c=c)
        tags, GV, GP, g0 = self._guard_data(disc, md)
        if tags and t_stop > t0:
            i, t_hit = first_event(GV * c[None, :], md.lam, GP, self._jwh, g0, t0, t_stop,
                                   self.dt_grid)
            if i >= 0:
                seg.t1 = t_hit
                return t_hit, tags[i], self._x1(md, t0, c, t_hit), seg
        x1 = self._x1(md, t0, c, t_stop)
        return t_stop, None, x1, seg

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
        hist: list[float] = []
        for it in range(1, max_iter + 1):
            tr = self.run(0.0, T, x, disc, record=True)
            r = tr.xT - x
            scale = np.maximum(np.abs(tr.xT), np.abs(x)) + self._floor
            rn = float(np.max(np.abs(r) / scale)) if n else 0.0
            if rn < tol and tr.sT == tr.s0:
                return tr, it, True
            hist.append(rn)
            if len(hist) >= 5 and min(hist[-2:]) > 0.5 * min(hist[:-2]):
                # stalled: the switching sequence keeps changing (no orbit of this period
                # near here); the caller tries the next period from where this one ended
                return tr, it, False
            try:
                dx = np.linalg.solve(np.eye(n) - tr.phi, r)
            except np.linalg.LinAlgError:
                dx = r
            if rn > last_r * 1.5 and it > 3:
                dx = 0.5 * dx  # damp when the switching sequence jumps between iterations
            # a step far beyond the state's scale (a near-singular I - phi, or a switching
            # sequence that changed) is shortened to twice that scale
            lim = 2.0 * np.maximum(np.abs(x), 1e4 * self._floor)
            big = float(np.max(np.abs(dx) / lim)) if n else 0.0
            if big > 1.0:
                dx = dx / big
            last_r = min(rn, last_r)
            x = x + dx
            disc = tr.sT
        return self.run(0.0, T, x, disc, record=True), max_iter, False

    _floor: np.ndarray = np.zeros(0)  # per-state absolute scale, set by the caller

    def sample(self, tr: Trajectory, ts: np.ndarray, outputs: list[tuple[str, str]]):
        """Element currents ('i') or voltages ('v') at the ascending times ``ts`` [A, V]."""
        net = self.net
        rows = [(net.index[name] if kind == "i" else net.n_e + net.index[name])
                for name, kind in outputs]
        Y = np.zeros((len(outputs), ts.size))
        X = np.zeros((net.n_x, ts.size))
        E = self.src.phasors(ts)
        vs = self.src.dc_v + np.real(self.src.amplitudes @ E)
        edges = np.array([sg.t0 for sg in tr.segments[1:]])
        which = np.searchsorted(edges, ts, side="right")
        bounds = np.searchsorted(which, np.arange(len(tr.segments) + 1))
        for k in range(len(tr.segments)):
            a, b = bounds[k], bounds[k + 1]
            if b <= a:
                continue
            sg, md = tr.segments[k], tr.segments[k].md
            tt = ts[a:b]
            hom = np.real(md.V @ (np.exp(np.multiply.outer(md.lam, tt - sg.t0)) * sg.c[:, None]))
            xs = hom + np.real(md.P @ E[:, a:b]) + md.p0[:, None]
            U = np.zeros((net.n_u, b - a))
            U[CH_SOURCE] = vs[a:b]
            U[CH_ONE] = 1.0
            for ch, v in md.consts:
                U[ch] = v
            Y[:, a:b] = md.Q[rows] @ np.vstack([xs, U])
            X[:, a:b] = xs
        return Y, X


class _FastLoop:
    """The compiled event loop's arrays for one engine: the controllers' encoding, the
    modes met so far, the record buffers (see :mod:`pqcalc.circuits.loop`)."""

    @classmethod
    def make(cls, eng: Engine) -> _FastLoop | None:
        from . import loop
        from .kernels import COMPILED

        net = eng.net
        if not COMPILED or net.n_x == 0 or net.n_u != 2:
            return None
        specs = [a.compiled_spec(net) for a in eng.automata]
        if any(sp is None or a.constants(a.initial) for a, sp in zip(eng.automata, specs,
                                                                       strict=True)):
            return None
        return cls(eng, loop, specs)

    def __init__(self, eng: Engine, loop, specs: list) -> None:
        self.eng, self.loop = eng, loop
        net = eng.net
        self.nd = len(net.diodes)
        sw_names = [net.elements[i].name for i in net.switches]
        radix = [2 if net.elements[i].kind == "S" else len(net.elements[i].table)
                 for i in net.switches]
        mult, acc = [], 1
        for r in radix:
            mult.append(acc)
            acc *= r
        if acc * (1 << self.nd) >= 2 ** 62:
            raise ValueError("internal: too many switch states for the compiled loop")
        self.sw_mult = np.array(mult, dtype=np.int64)
        na = len(specs)
        nf = max([len(sp[2]) for sp in specs] + [1])
        nb = max([len(sp[3]) for sp in specs] + [1])
        self.aut_type = np.array([sp[0] for sp in specs], dtype=np.int64)
        self.aut_swpos = np.array([sw_names.index(sp[1]) if sp[1] is not None else -1
                                   for sp in specs], dtype=np.int64)
        self.aut_f = np.zeros((na, nf))
        self.aut_b = np.zeros((na, nb))
        self.aut_b2 = np.zeros((na, nb))
        self.aut_nb = np.zeros(na, dtype=np.int64)
        for ia, sp in enumerate(specs):
            self.aut_f[ia, :len(sp[2])] = sp[2]
            self.aut_b[ia, :len(sp[3])] = sp[3]
            self.aut_b2[ia, :len(sp[4])] = sp[4]
            self.aut_nb[ia] = len(sp[3])
        self.diode_el = np.array(net.diodes, dtype=np.int64)
        self.diode_von = np.array([net.elements[k].v_on for k in net.diodes])
        self.amps = np.ascontiguousarray(eng.src.amplitudes, dtype=complex)
        self.jwh = np.ascontiguousarray(eng._jwh, dtype=complex)
        self.dc = float(eng.src.dc_v)
        n, K = net.n_x, self.amps.size
        self.net_args = net.compiled_args()
        self.orders = np.ascontiguousarray(eng.src.orders, dtype=float)
        self.omega = float(eng.src.omega)
        cap = 32
        nu = net.n_u
        self.mkeys = np.zeros(cap, dtype=np.int64)
        self.mon = np.zeros((cap, self.nd + len(net.switches)), dtype=np.int64)
        self.mA = np.zeros((cap, n, n))
        self.mB = np.zeros((cap, n, nu))
        self.mQ = np.zeros((cap, 2 * net.n_e, n + nu))
        self.mlam = np.zeros((cap, n), dtype=complex)
        self.mV = np.zeros((cap, n, n), dtype=complex)
        self.mVinv = np.zeros((cap, n, n), dtype=complex)
        self.mP = np.zeros((cap, n, K), dtype=complex)
        self.mp0 = np.zeros((cap, n))
        self.nmodes = 0
        self.mds: list[_ModeData] = []
        self._decoded: dict[tuple, tuple] = {}

    _MODE_ARRAYS = ("mkeys", "mon", "mA", "mB", "mQ", "mlam", "mV", "mVinv", "mP", "mp0")

    def _grow_modes(self) -> None:
        for name in self._MODE_ARRAYS:
            a = getattr(self, name)
            setattr(self, name, np.concatenate([a, np.zeros_like(a)]))

    def _mode_objects(self) -> None:
        """Mode data objects (as :meth:`Engine.mode_data` makes) of the modes the loop
        built since the last call."""
        nd = self.nd
        for k in range(len(self.mds), self.nmodes):
            on = self.mon[k]
            key = tuple(bool(v) for v in on[:nd]) + tuple(int(v) for v in on[nd:])
            self.mds.append(_ModeData(key, self.mA[k], self.mB[k], self.mQ[k], self.mlam[k],
                                      self.mV[k], self.mVinv[k], self.mP[k], self.mp0[k], ()))

    # ------------------------------------------------------------------ states
    def encode(self, disc) -> tuple[np.ndarray, np.ndarray]:
        dio = np.array([1 if d else 0 for d in disc[0]], dtype=np.int8)
        aut = np.array([a.to_row(s) for a, s in zip(self.eng.automata, disc[1], strict=True)],
                       dtype=float).reshape(len(disc[1]), 3)
        return dio, aut

    def decode(self, dio, aut) -> tuple:
        key = (dio.tobytes(), aut.tobytes())
        disc = self._decoded.get(key)
        if disc is None:
            disc = self._decoded[key] = (
                tuple(bool(d) for d in dio),
                tuple(a.from_row(aut[ia]) for ia, a in enumerate(self.eng.automata)))
        return disc

    # ------------------------------------------------------------------ one run
    def run(self, t_start: float, t_end: float, x0, disc0) -> Trajectory:
        eng, L = self.eng, self.loop
        x = np.array(x0, dtype=float)
        xin = x.copy()
        dio, aut = self.encode(disc0)
        n = x.size
        phi = np.eye(n)
        cycles = max(1, round((t_end - t_start) / eng.T1))
        nseg = 64 * cycles
        buf = _Buffers(nseg, n, dio.size, aut.shape[0])
        fstate = np.array([t_start])
        istate = np.zeros(7, dtype=np.int64)
        istate[L.I_NMODES] = self.nmodes
        s0 = None
        for stop in (t_start, t_end):
            while True:
                st = L.run_loop(stop, fstate, istate, x, dio, aut, phi, self.mkeys, self.mon,
                                self.mA, self.mB, self.mQ, self.mlam, self.mV, self.mVinv,
                                self.mP, self.mp0, self.net_args, self.orders, self.omega,
                                eng.net.n_e, self.diode_el, self.diode_von, self.aut_type,
                                self.aut_swpos, self.aut_f, self.aut_b, self.aut_b2,
                                self.aut_nb, self.sw_mult, self.sw_mult.size, self.amps,
                                self.jwh, self.dc, eng.dt_grid, EPS_I_A, EPS_V_V,
                                4000 * cycles, buf.seg_t, buf.seg_mode, buf.seg_c,
                                buf.seg_x0, buf.seg_dio, buf.seg_aut, buf.ev_t, buf.ev_tag)
                self.nmodes = int(istate[L.I_NMODES])
                if st == L.DONE:
                    break
                if st == L.FULL_MODES:
                    self._grow_modes()
                elif st == L.FULL:
                    buf.grow()
                elif st == L.CHATTER:
                    raise ConvergenceError(
                        f"switching did not settle at t = {fstate[0] * 1e3:.4f} ms (components "
                        "chatter); tried 64 consistent-mode iterations")
                else:
                    raise ConvergenceError(
                        "more than 4000 switching events in one period: the circuit chatters; "
                        "check the component values")
            if s0 is None:
                s0 = self.decode(dio, aut)
        eng.n_events += int(istate[L.I_NEV])
        sT = self.decode(dio, aut)
        assert s0 is not None
        lazy = _LazyRecord(self, buf, int(istate[L.I_NSEG]), int(istate[L.I_NEV]))
        return Trajectory(xin, x, s0, sT, phi, None, None, lazy)


class _Buffers:
    """Record buffers of one compiled run (enlarged on demand)."""

    def __init__(self, nseg: int, n: int, nd: int, na: int) -> None:
        self.seg_t = np.zeros((nseg, 2))
        self.seg_mode = np.zeros(nseg, dtype=np.int64)
        self.seg_c = np.zeros((nseg, n), dtype=complex)
        self.seg_x0 = np.zeros((nseg, n))
        self.seg_dio = np.zeros((nseg, nd), dtype=np.int8)
        self.seg_aut = np.zeros((nseg, na, 3))
        self.ev_t = np.zeros(2 * nseg)
        self.ev_tag = np.zeros((2 * nseg, 3), dtype=np.int64)

    def grow(self) -> None:
        for name, a in list(vars(self).items()):
            setattr(self, name, np.concatenate([a, np.zeros_like(a)]))


class _LazyRecord:
    """A compiled run's segments and events as the Python engine's objects, made when read."""

    def __init__(self, fl: _FastLoop, buf: _Buffers, nseg: int, nev: int) -> None:
        self.fl, self.buf, self.nseg, self.nev = fl, buf, nseg, nev

    def table(self):
        b, k, fl = self.buf, self.nseg, self.fl
        m = fl.nmodes
        stack = (fl.mQ[:m], fl.mV[:m], fl.mP[:m], fl.mp0[:m], fl.mlam[:m], [()] * m)
        return (b.seg_t[:k, 0].copy(), b.seg_t[:k, 1].copy(), stack, b.seg_mode[:k].copy(),
                b.seg_c[:k].copy())

    def segments(self) -> list:
        fl, b = self.fl, self.buf
        fl._mode_objects()
        out = []
        for k in range(self.nseg):
            disc = fl.decode(b.seg_dio[k], b.seg_aut[k])
            out.append(_Segment(float(b.seg_t[k, 0]), float(b.seg_t[k, 1]), disc,
                                fl.mds[b.seg_mode[k]], b.seg_x0[k], c=b.seg_c[k]))
        return out

    def events(self) -> list:
        fl, b = self.fl, self.buf
        out: list[tuple] = []
        for k in range(self.nev):
            kind, who, code = (int(v) for v in b.ev_tag[k])
            t = float(b.ev_t[k])
            if kind == 0:
                out.append((t, ("D", who)))
            else:
                name = fl.eng.automata[who].tag_name(code)
                out.append((t, ("A" if kind == 1 else "T", who, name)))
        return out
