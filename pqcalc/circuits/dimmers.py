"""Phase-cut dimmers: the switch between the line and the lamps, and its firing logic.

- **leading edge, triac**: fired by an RC timing network and a bidirectional trigger diode
  (breakover about 32 V, breakback a few volts; common practice) when the setting is a knob
  position; when the setting is an angle, by a trigger at ``180 - conduction_deg`` (at most
  its ``max_conduction_deg``, the top the firing network reaches) followed, while the triac
  has not latched, by the pulses of that network as its timing capacitor recharges
  (:func:`refire_phases`). The triac conducts during the gate pulse; it stays on only if
  its current has reached the latching current by the pulse's end, and turns off when its
  current has stayed below the holding current for the recovery time (at once when the
  current passes through zero).
  With both currents 0 it is an ideal switch that opens at current zero.
  A snubber and the dimmer's own supply (a two-wire electronic dimmer draws it through the
  load while off) leak current into the lamps.
- **leading edge, transistor**: conducts from the firing angle to the zero crossing.
- **trailing edge** (transistor): conducts from the zero crossing to the set angle, then
  turns off along a ramp (``turn_off_s``; the switch conductance falls in three steps).
- **none**: the line straight to the lamps.

Misfires, re-firing within a half cycle, asymmetric half cycles and firing every few half
cycles come out of the simulation (:mod:`pqcalc.circuits.pwl`), they are not assumed.
"""

from __future__ import annotations

import functools
import math

import numpy as np

from ..errors import InputError
from .kernels import rc_crossing
from .network import Network
from .pwl import EPS_I_A, Automaton
from .ranges import check_component
from .spec import DimmerSpec, Supply

__all__ = ["dimmer_params", "resolve_dimmer", "build_dimmer", "conduction_from_knob",
           "network_delay_s", "triac_max_conduction_deg", "refire_phases", "MAX_PULSES"]

SWITCH = "dim.S"
#: at most this many trigger pulses per half cycle in the conduction-angle mode (the set
#: one and its re-fires); the train ends earlier where the network cannot recharge before
#: the zero crossing
MAX_PULSES = 400


@functools.lru_cache(maxsize=8192)
def network_delay_s(r_ohm: float, c_f: float, v_pk_v: float, frequency_hz: float,
                    breakover_v: float, t0_s: float = 0.0, v0_v: float = 0.0) -> float | None:
    """First time [s] in ``[t0_s, 1/(2f))`` at which the timing capacitor of an RC firing
    network reaches the trigger diode's breakover voltage, or None when it does not in the
    half cycle.

    The network (``r_ohm`` in series with ``c_f``) is driven by ``v_pk_v sin(2 pi f t)``
    (the voltage across the off triac taken as the line voltage: the lamp draws no current
    while the triac is off) from ``v0_v`` at ``t0_s``. Closed form of the first-order
    circuit: ``v(t) = A sin(w t - phi) + (v0 - A sin(w t0 - phi)) exp(-(t - t0) / RC)``,
    ``A = Vpk / sqrt(1 + (w RC)^2)``, ``phi = atan(w RC)``; the crossing is bracketed on a
    grid of 4096 steps per half cycle and bisected.

    References
    ----------
    Any circuits text on the RC circuit driven by a sinusoid (particular solution plus the
    decaying homogeneous one), e.g. Hayt, Kemmerly, Durbin, *Engineering Circuit
    Analysis*, ch. 8 and 10 (from memory).
    """
    w = 2.0 * np.pi * frequency_hz
    tau = r_ohm * c_f
    half = 0.5 / frequency_hz
    if t0_s >= half:
        return None
    a = v_pk_v / math.sqrt(1.0 + (w * tau) ** 2)
    phi = math.atan(w * tau)
    k0 = v0_v - a * math.sin(w * t0_s - phi)
    t = rc_crossing(a, phi, k0, w, tau, float(t0_s), half, float(breakover_v), 4096)
    return None if t < 0 else float(t)


def _top_deg(r_min, c, v_pk, f, vbo) -> float:
    d = network_delay_s(r_min, c, v_pk, f, vbo)
    if d is None:
        raise InputError(f"dimmer breakover_v: the firing network never reaches {vbo:g} V on "
                         f"a {v_pk / np.sqrt(2):g} V supply; expected a breakover below the "
                         "line's peak")
    return 180.0 - d * 360.0 * f


def triac_max_conduction_deg(p: dict, supply: Supply) -> float:
    """The largest conduction angle [deg] of a triac dimmer: 180 less the smallest delay of
    its firing network, the knob at 1 (timing resistance ``r_min_ohm``), the capacitor
    starting discharged at the zero crossing (it discharged through the conducting triac
    in the half cycle before), the line voltage driving it (:func:`network_delay_s`).

    With the default components (3.3 kohm, 100 nF, 32 V breakover; common practice) it is
    169.4 deg at 230 V 50 Hz and 162.6 deg at 120 V 60 Hz: a trigger-diode network cannot
    fire at the zero crossing, it must first charge to the breakover voltage.
    """
    return _top_deg(p["r_min_ohm"], p["c_timing_f"], np.sqrt(2.0) * supply.v_rms_v,
                    supply.frequency_hz, p["breakover_v"])


def _timing_r(p: dict, v_pk: float, f: float, first_s: float) -> float:
    """The timing resistance [ohm] whose network first fires at ``first_s`` (bisected
    between the knob's ends, ``r_min_ohm`` to ``r_min_ohm + r_pot_ohm``)."""
    c, vbo = p["c_timing_f"], p["breakover_v"]
    lo, hi = p["r_min_ohm"], p["r_min_ohm"] + p["r_pot_ohm"]

    def late(r):  # the network fires after first_s (or not at all)
        d = network_delay_s(r, c, v_pk, f, vbo)
        return d is None or d > first_s

    if late(lo):
        return lo
    if not late(hi):
        return hi
    for _ in range(50):
        mid = np.sqrt(lo * hi)
        if late(mid):
            hi = mid
        else:
            lo = mid
    return float(np.sqrt(lo * hi))


def refire_phases(p: dict, supply: Supply, first_s: float) -> tuple[float, ...]:
    """Trigger pulses of a triac set to a conduction angle, as phases [s] in the half
    cycle: the set one at ``first_s`` (``180 - conduction_deg``), then the re-fires of its
    firing network while the triac has not latched.

    The rule: the conduction-angle mode stands for the same RC network and trigger diode
    as the knob mode, its timing resistance set (:func:`_timing_r`) so that it first
    fires at the set angle. At each pulse the trigger diode breaks back (the capacitor
    drops by ``breakback_v``), the conducting triac discharges it further over the gate
    pulse (time constant R C), and it recharges from the line through the same resistance
    until it reaches ``breakover_v`` again: the next pulse (:func:`network_delay_s` from
    that state; the closed form of the RC circuit). So the network keeps firing every
    recharge interval, at most ``MAX_PULSES`` times, until the current latches or the half
    cycle ends. This is what lets a rectifier lamp (its capacitor holding the lamp's input
    above the line early in the half cycle, so that the first pulse finds no current)
    latch once the line voltage exceeds its capacitor's, as it does behind a real
    dimmer. Once the triac has latched the train stops for that half cycle (the automaton
    marks the release, :class:`Triac`): the rule follows the network up to latching and
    does not model it after a release (the knob mode does, with the network in the
    circuit). The line voltage drives the network at its fundamental's peak (the
    voltage across the off triac is taken as the line's: the lamp draws no current while
    the triac is off).
    """
    f = supply.frequency_hz
    half = 0.5 / f
    v_pk = np.sqrt(2.0) * supply.v_rms_v
    return _refire(tuple(sorted(p.items())), v_pk, f, half, float(first_s))


@functools.lru_cache(maxsize=256)
def _refire(items, v_pk, f, half, first_s) -> tuple[float, ...]:
    p = dict(items)
    r = _timing_r(p, v_pk, f, first_s)
    c, vbo, vbb, g = p["c_timing_f"], p["breakover_v"], p["breakback_v"], p["gate_pulse_s"]
    out = [first_s]
    t = first_s
    while len(out) < MAX_PULSES:
        ts = t + g
        v0 = (vbo - vbb) * np.exp(-g / (r * c))
        d = network_delay_s(r, c, v_pk, f, vbo, ts, v0)
        if d is None or d + g >= half or d <= t:
            break
        out.append(d)
        t = d
    return tuple(out)


def dimmer_params(spec_kind: str, switch: str, supply: Supply) -> list[dict]:
    """Names, units, meaning and defaults of a dimmer's components."""
    v, f = supply.v_rms_v, supply.frequency_hz
    common = [
        ("r_on_ohm", "ohm", "on-state resistance of the switch", 0.05),
        ("r_off_ohm", "ohm", "off-state resistance of the switch", 1e8),
    ]
    if spec_kind == "none":
        return [dict(name=n, unit=u, doc=d, default=x) for n, u, d, x in common[:1]]
    if spec_kind == "leading-edge" and switch == "triac":
        rows = common + [
            ("holding_current_a", "A", "triac holding current (common practice ~50 mA)", 0.05),
            ("latching_current_a", "A", "triac latching current", 0.07),
            ("gate_pulse_s", "s", "trigger pulse length", 20e-6),
            ("recovery_s", "s", "time the current must stay below holding before the triac "
             "turns off (a zero crossing turns it off at once; common practice, from memory: "
             "tens of us)", 30e-6),
            ("breakover_v", "V", "trigger diode breakover voltage", 32.0),
            ("breakback_v", "V", "trigger diode voltage drop on firing", 8.0),
            ("c_timing_f", "F", "timing capacitor", 100e-9),
            ("r_min_ohm", "ohm", "fixed timing resistance (knob at 1)", 3.3e3),
            ("r_pot_ohm", "ohm", "potentiometer (knob at 0 adds all of it)",
             250e3 * (v / 230.0) * (50.0 / f)),
            ("c_snubber_f", "F", "snubber capacitor across the triac", 47e-9),
            ("r_snubber_ohm", "ohm", "snubber resistor", 100.0),
            ("r_supply_ohm", "ohm", "the dimmer's own supply drawn through the load", 330e3),
        ]
        d = {n: x for n, _u, _d, x in rows}
        top = _top_deg(d["r_min_ohm"], d["c_timing_f"], np.sqrt(2.0) * v, f, d["breakover_v"])
        rows.append(("max_conduction_deg", "deg",
                     "largest conduction angle: 180 less the firing network's smallest delay "
                     "(knob at 1, r_min_ohm and c_timing_f charging to breakover_v from the "
                     "zero crossing; the default follows the network's own values, "
                     f"{top:.1f} deg with the defaults here); a setting above it conducts it",
                     top))
    else:
        rows = common + [
            ("min_conduction_deg", "deg", "conduction angle at knob 0", 20.0),
            ("max_conduction_deg", "deg", "conduction angle at knob 1", 170.0),
            ("r_supply_ohm", "ohm", "the dimmer's own supply drawn through the load (0: none)",
             0.0),
        ]
        if spec_kind == "trailing-edge":
            rows.append(("turn_off_s", "s", "turn-off ramp of the transistor", 20e-6))
    return [dict(name=n, unit=u, doc=d, default=x) for n, u, d, x in rows]


def resolve_dimmer(spec: DimmerSpec, supply: Supply) -> dict:
    rows = dimmer_params(spec.kind, spec.switch, supply)
    names = [r["name"] for r in rows]
    given = spec.param_dict()
    for k in given:
        if k not in names:
            raise InputError(f"dimmer {spec.kind}: unknown parameter {k!r}; expected one of "
                             f"{', '.join(names)}")
    out = {}
    zero_ok = {"holding_current_a", "latching_current_a", "breakback_v", "r_supply_ohm",
               "recovery_s",
               "turn_off_s", "min_conduction_deg", "c_snubber_f"}
    for r in rows:
        val = float(given.get(r["name"], r["default"]))
        if not np.isfinite(val) or val < 0 or (val == 0 and r["name"] not in zero_ok):
            raise InputError(f"dimmer {r['name']}: expected a value "
                             f"{'>= 0' if r['name'] in zero_ok else '> 0'} [{r['unit']}], got "
                             f"{val:g}")
        if r["name"] in given:
            check_component(f"dimmer {spec.kind}", r["name"], val, r["unit"])
        out[r["name"]] = val
    if spec.uses_triac:
        if "max_conduction_deg" not in given:
            out["max_conduction_deg"] = triac_max_conduction_deg(out, supply)
        if not 0 < out["max_conduction_deg"] <= 180:
            raise InputError("dimmer max_conduction_deg: expected above 0 and at most 180")
    elif "max_conduction_deg" in out:
        if not out["min_conduction_deg"] < out["max_conduction_deg"] <= 180:
            raise InputError("dimmer max_conduction_deg: expected above min_conduction_deg and "
                             "at most 180")
    return out


def conduction_from_knob(spec: DimmerSpec, p: dict) -> float | None:
    """Set conduction angle [deg]; None for a triac on its knob. A triac set above its
    ``max_conduction_deg`` conducts at most that (its firing network cannot fire sooner)."""
    if spec.conduction_deg is not None:
        if spec.uses_triac and "max_conduction_deg" in p:
            return min(spec.conduction_deg, p["max_conduction_deg"])
        return spec.conduction_deg
    if spec.kind == "none":
        return 180.0
    if spec.uses_triac:
        return None
    lo, hi = p["min_conduction_deg"], p["max_conduction_deg"]
    return lo + spec.knob * (hi - lo)


class WindowSwitch(Automaton):
    """Transistor dimmer: on over a fixed window of each half cycle (index 0 off, 1 on,
    2.. the steps of the turn-off ramp)."""

    def __init__(self, half_s: float, on_s: float, off_s: float, ramp_s: float,
                 n_ramp: int) -> None:
        self.H, self.a, self.b = half_s, on_s, off_s
        self.ramp, self.nr = ramp_s, n_ramp
        self.edges = [(self.a, 1)]
        if n_ramp:
            for k in range(n_ramp):
                self.edges.append((self.b + k * ramp_s / n_ramp, 2 + k))
            self.edges.append((self.b + ramp_s, 0))
        else:
            self.edges.append((self.b, 0))
        self.always = None
        if self.b - self.a >= half_s - 1e-12:
            self.always = 1
        elif self.b <= self.a:
            self.always = 0
        self.initial = self.state_at(0.0)

    def state_at(self, t):
        if self.always is not None:
            return self.always
        tau = t % self.H
        s = 0
        for te, st in self.edges:
            if tau >= te - 1e-15:
                s = st
        return s if tau < self.edges[-1][0] else 0

    def switches(self, s):
        return {SWITCH: int(s)}

    def next_time(self, s, t):
        if self.always is not None:
            return np.inf, None
        k = np.floor(t / self.H)
        best: tuple[float, int | None] = (np.inf, None)
        for kk in (k, k + 1):
            for te, st in self.edges:
                tt = kk * self.H + te
                if tt > t + 1e-13 and tt < best[0]:
                    best = tt, st
        return best

    def fire(self, tag, s, t, x, value):
        return tag, x

    def compiled_spec(self, net):
        from .loop import WINDOW

        return (WINDOW, SWITCH, [self.H, -1.0 if self.always is None else float(self.always)],
                [te for te, _ in self.edges], [float(st) for _, st in self.edges])


#: the triac's event tags in the compiled loop (pqcalc.circuits.loop), by code
TRIAC_TAGS = ("low", "release", "recover", "fire+", "fire-", "gate-end", "fire")


class Triac(Automaton):
    """Triac with latching and holding, fired by the RC network's trigger diode or by an
    ideal trigger at a fixed angle. States: ``("off",)``, ``("gate", t_end, sign)``,
    ``("on", sign)``, ``("low", t_end, sign)`` (below holding, turning off at ``t_end``
    unless the current recovers; a current zero turns it off at once), and, set to an
    angle, ``("off", 1.0)``: released after latching in this half cycle, so no re-fire
    pulse until the next half cycle's set one (see :func:`refire_phases`).

    ``t_end`` is held as a phase of the mains cycle (``[0, 2H)``), not as an absolute time:
    a run starts each cycle at t = 0 (the source repeats every cycle), so a gate pulse or a
    recovery that spans the end of one run must end at the same phase of the next. An
    absolute end time carried over would lie a whole cycle late and hold the triac in its
    gate pulse (conducting) through the whole next run, and every run after it."""

    def __init__(self, p: dict, half_s: float, fire_s: float | None, ct_state: int | None,
                 n_x: int, n_u: int, i_row_fn, v_row_fn,
                 pulses: tuple[float, ...] | None = None) -> None:
        self.p = p
        self.H = half_s
        self.fire_at = fire_s
        # trigger phases in the half cycle: the set one, then its re-fires
        self.pulses = tuple(pulses) if pulses else (() if fire_s is None else (fire_s,))
        self.j = ct_state
        self.n = n_x + n_u
        self.nx = n_x
        self.i_row = i_row_fn
        self.v_row = v_row_fn
        self.initial = ("off",)

    def switches(self, s):
        return {SWITCH: 0 if s[0] == "off" else 1}

    def guards(self, s, net, ms):
        if s[0] == "on":
            row = -s[1] * self.i_row(ms)
            if self.p.get("recovery_s", 0.0) > 0 and self.p["holding_current_a"] > 0:
                return [(row, -self.p["holding_current_a"], "low")]
            return [(row, -self.p["holding_current_a"], "release")]
        if s[0] == "low":
            row = s[2] * self.i_row(ms)
            # the current must rise EPS_I_A above holding to recover: without that margin
            # a current leaving holding at the instant it reached it would switch on and
            # low without end at one time
            return [(row, self.p["holding_current_a"] + EPS_I_A, "recover"),
                    (-row, 0.0, "release")]
        if s[0] == "off" and self.j is not None:
            r = np.zeros(self.n)
            r[self.j] = 1.0
            vbo = self.p["breakover_v"]
            return [(r, vbo, "fire+"), (-r, vbo, "fire-")]
        return []

    def _at(self, phase: float, t: float) -> float:
        """The first time after ``t`` at the cycle phase ``phase`` [s]."""
        T = 2 * self.H
        tt = np.floor(t / T) * T + phase
        return tt + T if tt <= t + 1e-13 else tt

    def _phase(self, t: float) -> float:
        return float(t % (2 * self.H))

    def next_time(self, s, t):
        if s[0] == "gate":
            return self._at(s[1], t), "gate-end"
        if s[0] == "low":
            return self._at(s[1], t), "release"
        if s[0] == "off" and self.fire_at is not None:
            # the next pulse of the train; after a release in this half cycle only the next
            # half cycle's set pulse
            done = len(s) > 1 and s[1] != 0
            k = np.floor(t / self.H)
            for kk in (k, k + 1):
                for e, ph in enumerate(self.pulses):
                    if e > 0 and (done or kk != k):
                        break
                    tt = kk * self.H + ph
                    if tt > t + 1e-13:
                        return tt, "fire"
        return np.inf, None

    def fire(self, tag, s, t, x, value):
        p = self.p
        if tag in ("fire+", "fire-", "fire"):
            if s[0] != "off":
                return s, x
            if tag == "fire":
                sign = 1.0 if (t % (2 * self.H)) < self.H else -1.0
            else:
                sign = 1.0 if tag == "fire+" else -1.0
                x = x.copy()
                x[self.j] -= sign * p["breakback_v"]
            return ("gate", self._phase(t + p["gate_pulse_s"]), sign), x
        if tag == "gate-end":
            i = value(self.i_row)
            if abs(i) >= p["latching_current_a"]:
                return ("on", 1.0 if i >= 0 else -1.0), x
            return ("off",), x
        if tag == "low":
            return ("low", self._phase(t + p["recovery_s"]), s[1]), x
        if tag == "recover":
            return ("on", s[2]), x
        if tag == "release":
            return (("off", 1.0) if self.fire_at is not None else ("off",)), x
        return s, x

    def compiled_spec(self, net):
        from .loop import TRIAC

        p = self.p
        return (TRIAC, SWITCH,
                [self.H, p["holding_current_a"], p["latching_current_a"], p["gate_pulse_s"],
                 p.get("recovery_s", 0.0), p["breakover_v"], p["breakback_v"],
                 np.nan if self.fire_at is None else self.fire_at,
                 -1.0 if self.j is None else float(self.j), float(net.index[SWITCH])],
                list(self.pulses), [0.0] * len(self.pulses))

    def to_row(self, s):
        if s[0] == "off":
            return (0.0, float(s[1]) if len(s) > 1 else 0.0, 0.0)
        if s[0] == "on":
            return (2.0, 0.0, s[1])
        return (1.0 if s[0] == "gate" else 3.0, s[1], s[2])

    def from_row(self, row):
        code = int(row[0])
        if code == 0:
            return ("off",) if row[1] == 0 else ("off", 1.0)
        if code == 2:
            return ("on", float(row[2]))
        return ("gate" if code == 1 else "low", float(row[1]), float(row[2]))

    def tag_name(self, code):
        return TRIAC_TAGS[code]


def build_dimmer(net: Network, spec: DimmerSpec, p: dict, supply: Supply, din: str,
                 dout: str):
    """Add the dimmer's elements between ``din`` (line) and ``dout`` (to the lamps).

    Returns a function that makes the automaton once the network is final.
    """
    ron, goff = p["r_on_ohm"], 1.0 / p.get("r_off_ohm", 1e8)
    half = 0.5 / supply.frequency_hz
    if spec.kind == "none":
        net.G(SWITCH, din, dout, [(goff, 0.0), (1.0 / ron, 0.0)])
        return lambda: WindowSwitch(half, 0.0, half, 0.0, 0)
    nr = 3
    if spec.kind == "trailing-edge":
        ramp = p["turn_off_s"]
        g_on = 1.0 / ron
        steps = [(g_on * (goff / g_on) ** ((k + 1) / (nr + 1)), 0.0) for k in range(nr)]
        net.G(SWITCH, din, dout, [(goff, 0.0), (g_on, 0.0)] + (steps if ramp > 0 else []))
    else:
        net.G(SWITCH, din, dout, [(goff, 0.0), (1.0 / ron, 0.0)])
    if p.get("r_supply_ohm", 0.0) > 0:
        net.R("dim.R_supply", din, dout, p["r_supply_ohm"])
    cond_set = conduction_from_knob(spec, p)
    # a triac on its knob has no set angle (its RC network fires it)
    cond = 0.0 if cond_set is None else cond_set
    if spec.kind == "trailing-edge":
        b = cond / 180.0 * half
        ramp = p["turn_off_s"]
        return lambda: WindowSwitch(half, 0.0, b, ramp, nr if ramp > 0 else 0)
    if not spec.uses_triac:
        a = (180.0 - cond) / 180.0 * half
        return lambda: WindowSwitch(half, a, half, 0.0, 0)
    # triac
    if p["c_snubber_f"] > 0:
        net.R("dim.R_snubber", din, "dim.sn", p["r_snubber_ohm"])
        net.C("dim.C_snubber", "dim.sn", dout, p["c_snubber_f"])
    fire_s: float | None = None
    pulses: tuple[float, ...] | None = None
    if spec.knob is not None:
        r_t = p["r_min_ohm"] + (1.0 - spec.knob) * p["r_pot_ohm"]
        net.R("dim.R_timing", din, "dim.gt", r_t)
        net.C("dim.C_timing", "dim.gt", dout, p["c_timing_f"])
    else:
        fire_s = (180.0 - cond) / 180.0 * half
        if cond <= 0:
            fire_s = None
        else:
            pulses = refire_phases(p, supply, fire_s)

    def make():
        ct = net.state_of.get("dim.C_timing")
        idx = net.index[SWITCH]
        tr = Triac(p, half, fire_s, ct, net.n_x, net.n_u,
                   lambda ms: ms.Q[idx], lambda ms: ms.Q[net.n_e + idx], pulses)
        return tr

    return make
