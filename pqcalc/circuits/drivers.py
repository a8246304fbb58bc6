"""LED driver front ends (and the filament reference) as circuits of named components.

Each model has typical component values that scale with the rated input power and the
supply (every one overridable by name, units in the name), and a builder that adds its
elements to a :class:`~pqcalc.circuits.network.Network` for ``m`` identical lamps in
parallel (admittances times ``m``: the state count does not grow with the lamp count).

Models (ids are stable): ``resistive``, ``dropper``, ``bulk-cap``, ``sine-follow``, ``pfc``,
``pwm-detect``. Defaults are typical values of the trade (common practice), not any product.

Every LED driver has input parts ahead of its capacitors that bound the current when a
dimmer switches a charged capacitor onto a stiff supply: the dropper's surge resistor, the
fusible series resistor of ``bulk-cap`` and ``pwm-detect``, a fuse resistor on
``sine-follow`` and on ``pfc``, whose EMI capacitor also sits behind a damped
differential-mode inductor (``r_fuse_ohm``, ``l_emi_h``, ``r_emi_damp_ohm``). A lamp's
current therefore does not hinge on the supply's impedance, which may be zero.

The constant-power converter of ``bulk-cap`` and ``pwm-detect`` (``i = P / v`` from the bulk
capacitor, with under-voltage lock-out) is a piecewise-affine element: the chords of
``P / v`` on a geometric voltage grid (:func:`chord_table`, at most 1e-4 high), so the
solver's segments stay exact (:mod:`pqcalc.circuits.pwl`). The ``pfc`` driver is an emulated
resistance whose value its voltage loop sets for the target power (see
:mod:`pqcalc.circuits.solve`).
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from typing import Literal, get_args

import numpy as np

from ..errors import InputError
from .network import Network
from .pwl import EPS_V_V, Automaton
from .ranges import check_component

__all__ = ["MODELS", "ModelId", "ParamSpec", "model_params", "resolve_params", "GroupBuild",
           "build_group", "chord_table", "CHORD_RATIO", "DIODE_V_ON_V", "DIODE_R_ON_OHM",
           "G_OFF_S", "dim_fraction"]

ModelId = Literal["resistive", "dropper", "bulk-cap", "sine-follow", "pfc", "pwm-detect"]
MODELS: tuple[str, ...] = get_args(ModelId)

#: rectifier diode, piecewise linear: forward threshold [V], on resistance [ohm], off
#: conductance [S] (a small-signal fit of a 1 A silicon rectifier; common practice)
DIODE_V_ON_V = 0.65
DIODE_R_ON_OHM = 0.08
G_OFF_S = 1e-9


@dataclass(frozen=True)
class ParamSpec:
    """One component value of a model: name with unit, meaning, default rule."""

    name: str
    unit: str
    doc: str
    default: Callable[[float, float, float], float | None]  # (power_w, v_rms_v, f_hz)
    zero_ok: bool = False

    def value(self, p, v, f):
        return self.default(p, v, f)


def _vpk(v):
    return np.sqrt(2) * v


def _dropper_c(p, v, f):
    vs = 0.6 * _vpk(v)
    return p / (4 * f * vs * (_vpk(v) - vs))  # average current 4 f C (Vpk - Vs)


def _sine_follow_imax(p, v, f, n=3, vseg_frac=0.8):
    """Top regulator current [A] that gives the rated input power on an ideal sine.

    With ``k`` of ``n`` segments lit the regulator draws ``k / n`` of it, segment ``k``
    lighting at ``k v_seg``; over a half cycle of ``Vpk sin(theta)`` the mean power of the
    step added at ``theta_k = asin(k v_seg / Vpk)`` is ``(1 / n) 2 Vpk cos(theta_k) / pi``
    per ampere (closed form of ``(1 / pi) int Vpk sin(theta) d theta`` over
    ``[theta_k, pi - theta_k]``)."""
    vpk = _vpk(v)
    vseg = vseg_frac * vpk / n
    per_a = sum(2.0 * vpk * np.sqrt(1.0 - (k * vseg / vpk) ** 2) / np.pi / n
                for k in range(1, n + 1) if k * vseg < vpk)
    return p / per_a


def _sf_levels(n, imax):
    return [imax * k / n for k in range(1, n + 1)]


def _sf_shape(vv, n, vseg, imax, r_dyn):
    levels = _sf_levels(n, imax)
    i = np.zeros_like(vv)
    for k in range(n):
        on = vv >= (k + 1) * vseg
        i = np.where(on, levels[k], i)
    return i


def _r_fuse(p, v, f):
    """Fusible input resistor dissipating about 1 % of the rated power on a sine, 1..47 ohm
    (common practice)."""
    return float(np.clip(0.01 * v * v / p, 1.0, 47.0))


def _l_emi(p, v, f):
    """Differential-mode EMI inductor, about 1 mH at 60 W, larger for smaller drivers,
    0.2..10 mH (common practice, from memory)."""
    return float(np.clip(1e-3 * 60.0 / p, 0.2e-3, 10e-3))


def _c_dc(p, v, f):
    """Film capacitor at the boost stage's input, about 2 nF/W at 230 V (common practice)."""
    return 2e-9 * p * 230.0 / v


_P = ParamSpec
PARAMS: dict[str, tuple[ParamSpec, ...]] = {
    "resistive": (
        _P("r_ohm", "ohm", "hot filament resistance", lambda p, v, f: v * v / p),
        _P("r_cold_ohm", "ohm", "cold filament resistance (inrush); tungsten about 1/12 of hot",
           lambda p, v, f: v * v / p / 12.0),
        _P("tau_thermal_s", "s", "filament thermal time constant (smooths light ripple)",
           lambda p, v, f: 0.025),
    ),
    "dropper": (
        _P("c_series_f", "F", "series dropping capacitor", _dropper_c),
        _P("r_bleed_ohm", "ohm", "bleed resistor across the series capacitor",
           lambda p, v, f: 1e6),
        _P("r_surge_ohm", "ohm", "series surge-limiting resistor", lambda p, v, f: 100.0),
        _P("v_string_v", "V", "LED string forward voltage", lambda p, v, f: 0.6 * _vpk(v)),
        _P("r_string_ohm", "ohm", "LED string dynamic resistance", lambda p, v, f: 50.0),
        _P("c_string_f", "F", "smoothing capacitor across the string (0: none)",
           lambda p, v, f: 0.5e-6 * p, zero_ok=True),
    ),
    "bulk-cap": (
        _P("r_series_ohm", "ohm", "fusible series resistor", lambda p, v, f: 10.0),
        _P("c_bulk_f", "F", "bulk capacitor (about 1 uF/W at 230 V)",
           lambda p, v, f: 1e-6 * p * 230.0 / v),
        _P("r_load_ohm", "ohm", "plain DC load replacing the converter (reference case)",
           lambda p, v, f: None),
        _P("r_bleed_ohm", "ohm", "discharge resistor across the bulk capacitor",
           lambda p, v, f: 1e6),
        _P("v_uvlo_on_v", "V", "converter starts above this bulk voltage",
           lambda p, v, f: 0.5 * _vpk(v)),
        _P("v_uvlo_off_v", "V", "converter stops below this bulk voltage",
           lambda p, v, f: 0.3 * _vpk(v)),
        _P("i_led_a", "A", "LED current at full output", lambda p, v, f: 0.85 * p / 36.0),
    ),
    "sine-follow": (
        _P("r_fuse_ohm", "ohm", "input fuse / fusible resistor (about 1 % of the rated power "
           "dissipated)", _r_fuse),
        _P("n_segments", "-", "LED string segments switched in by the tapped regulator",
           lambda p, v, f: 3.0),
        _P("v_segment_v", "V", "forward voltage of one segment",
           lambda p, v, f: 0.8 * _vpk(v) / 3.0),
        _P("i_max_a", "A", "regulator current with all segments lit",
           lambda p, v, f: _sine_follow_imax(p, v, f)),
        _P("r_dyn_ohm", "ohm", "resistance of a segment's ramp (LED and regulator)",
           lambda p, v, f: 0.02 * 0.8 * _vpk(v) / 3.0 / _sine_follow_imax(p, v, f)),
        _P("c_in_f", "F", "filter capacitor after the bridge", lambda p, v, f: 47e-9),
        _P("r_bleed_ohm", "ohm", "bleed resistor after the bridge", lambda p, v, f: 1e6),
    ),
    "pfc": (
        _P("r_fuse_ohm", "ohm", "input fuse / fusible resistor (about 1 % of the rated power "
           "dissipated)", _r_fuse),
        _P("l_emi_h", "H", "differential-mode EMI inductor ahead of the EMI capacitor (0: none)",
           _l_emi, zero_ok=True),
        _P("r_emi_damp_ohm", "ohm", "damping resistor across the EMI inductor (half its "
           "characteristic impedance with the input capacitors: no overshoot when the "
           "dimmer fires)",
           lambda p, v, f: 0.5 * float(np.sqrt(_l_emi(p, v, f) / (47e-9 + 2e-9 * p
                                                                 + _c_dc(p, v, f))))),
        _P("c_emi_f", "F", "EMI capacitor across the input", lambda p, v, f: 47e-9 + 2e-9 * p),
        _P("r_bleed_ohm", "ohm", "bleeder across the rectified input",
           lambda p, v, f: 40.0 * v * v / p),
        _P("c_dc_f", "F", "high-frequency capacitor after the bridge", _c_dc),
        _P("min_conduction_deg", "deg", "conduction angle read as minimum output",
           lambda p, v, f: 40.0),
        _P("full_conduction_deg", "deg", "conduction angle read as full output",
           lambda p, v, f: 150.0),
        _P("min_output", "-", "relative output at the minimum angle", lambda p, v, f: 0.02),
        _P("load_fraction", "-", "LED load over the driver's rated output (the input parts "
           "are sized for power_w / load_fraction; below 1 the driver runs at light load)",
           lambda p, v, f: 1.0),
    ),
    "pwm-detect": (
        _P("r_series_ohm", "ohm", "fusible series resistor", lambda p, v, f: 10.0),
        _P("c_bulk_f", "F", "bulk capacitor", lambda p, v, f: 1e-6 * p * 230.0 / v),
        _P("r_bleed_ohm", "ohm", "input bleeder (holds the dimmer)",
           lambda p, v, f: 60.0 * v * v / p),
        _P("v_uvlo_on_v", "V", "converter starts above this bulk voltage",
           lambda p, v, f: 0.5 * _vpk(v)),
        _P("v_uvlo_off_v", "V", "converter stops below this bulk voltage",
           lambda p, v, f: 0.3 * _vpk(v)),
        _P("pwm_frequency_hz", "Hz", "LED PWM frequency", lambda p, v, f: 1000.0),
        _P("min_conduction_deg", "deg", "conduction angle read as minimum duty",
           lambda p, v, f: 40.0),
        _P("full_conduction_deg", "deg", "conduction angle read as full duty",
           lambda p, v, f: 150.0),
        _P("min_output", "-", "duty at the minimum angle", lambda p, v, f: 0.02),
        _P("standby_w", "W", "controller power at zero duty", lambda p, v, f: 0.03 * p),
        _P("i_led_a", "A", "LED current during the PWM on-time", lambda p, v, f: 0.85 * p / 36.0),
    ),
}

#: sensible rated input power per lamp [W]
POWER_RANGE_W: dict[str, tuple[float, float]] = {
    "resistive": (1.0, 2000.0),
    "dropper": (0.2, 15.0),
    "bulk-cap": (0.5, 25.0),
    "sine-follow": (1.0, 100.0),
    "pfc": (5.0, 300.0),
    "pwm-detect": (2.0, 75.0),
}


def model_params(model: str, power_w: float | None = None, v_rms_v: float = 230.0,
                 frequency_hz: float = 50.0) -> list[dict]:
    """Parameter names, units, meaning and default of ``model`` (at ``power_w`` if given)."""
    if model not in PARAMS:
        raise InputError(f"model: unknown {model!r}; expected one of {', '.join(MODELS)}")
    out = []
    for ps in PARAMS[model]:
        d = None if power_w is None else ps.value(power_w, v_rms_v, frequency_hz)
        out.append({"name": ps.name, "unit": ps.unit, "doc": ps.doc, "default": d})
    return out


def resolve_params(model: str, power_w: float, v_rms_v: float, frequency_hz: float,
                   overrides: dict) -> dict:
    """Defaults completed by ``overrides``; unknown names and bad values raise InputError."""
    specs = {ps.name: ps for ps in PARAMS[model]}
    lo, hi = POWER_RANGE_W[model]
    if not lo <= power_w <= hi:
        raise InputError(f"{model} power_w: expected {lo:g} to {hi:g} W for this model, got "
                         f"{power_w:g}")
    for k in overrides:
        if k not in specs:
            raise InputError(f"{model}: unknown parameter {k!r}; expected one of "
                             f"{', '.join(specs)}")
    out = {}
    # a driver at light load: its parts are sized for its rating, not for the lamp's power
    p_size = power_w
    if "load_fraction" in specs:
        lf = float(overrides.get("load_fraction", 1.0))
        if not (np.isfinite(lf) and 0 < lf <= 1):
            raise InputError(f"{model} load_fraction: expected above 0 and at most 1, got "
                             f"{lf:g}")
        p_size = power_w / lf
    for name, ps in specs.items():
        val = overrides.get(name, ps.value(p_size, v_rms_v, frequency_hz))
        if val is not None:
            val = float(val)
            if not np.isfinite(val) or val < 0 or (val == 0 and not ps.zero_ok):
                need = ">= 0" if ps.zero_ok else "> 0"
                raise InputError(f"{model} {name}: expected a value {need} [{ps.unit}], got "
                                 f"{val:g}")
            if name in overrides:
                check_component(model, name, val, ps.unit)
        out[name] = val
    if model in ("bulk-cap", "pwm-detect") and out["v_uvlo_off_v"] >= out["v_uvlo_on_v"]:
        raise InputError(f"{model} v_uvlo_off_v: expected below v_uvlo_on_v "
                         f"({out['v_uvlo_on_v']:g} V), got {out['v_uvlo_off_v']:g}")
    if model == "sine-follow":
        n = out["n_segments"]
        if n != int(n) or not 1 <= n <= 8:
            raise InputError(f"sine-follow n_segments: expected a whole number 1..8, got {n:g}")
    for key in ("min_conduction_deg", "full_conduction_deg"):
        if key in out and not 0 < out[key] <= 180:
            raise InputError(f"{model} {key}: expected 0 to 180 deg, got {out[key]:g}")
    if "min_conduction_deg" in out and out["min_conduction_deg"] >= out["full_conduction_deg"]:
        raise InputError(f"{model} min_conduction_deg: expected below full_conduction_deg")
    if "min_output" in out and not out["min_output"] <= 1:
        raise InputError(f"{model} min_output: expected 0 to 1, got {out['min_output']:g}")
    return out


def dim_fraction(conduction_deg: float, p: dict) -> float:
    """Relative output a phase-detecting driver sets for a measured conduction angle [-]:
    linear from ``min_output`` at ``min_conduction_deg`` to 1 at ``full_conduction_deg``;
    zero below the minimum angle (the driver reads "off")."""
    lo, hi, m = p["min_conduction_deg"], p["full_conduction_deg"], p["min_output"]
    if conduction_deg < lo:
        return 0.0
    return float(min(1.0, m + (1 - m) * (conduction_deg - lo) / (hi - lo)))


# ---------------------------------------------------------------------- automata
#: ratio of neighbouring grid voltages of the constant-power chord interpolant: the chord of
#: ``P / v`` over ``[a, r a]`` overestimates the current by at most
#: ``(sqrt(r) - 1)^2 / sqrt(r)`` (1.0e-4 at r = 1.02; closed form of the chord error)
CHORD_RATIO = 1.02


def chord_table(power_w: float, v_lo: float, v_hi: float,
                ratio: float = CHORD_RATIO) -> tuple[list[float], list[tuple[float, float]]]:
    """Grid voltages ``b_0 = v_lo < b_1 < ... < b_n >= v_hi`` [V] and the chord of
    ``i = P / v`` on each cell, ``i = g_k v + i0_k`` with ``g_k = -P / (b_{k-1} b_k)`` [S] and
    ``i0_k = P / b_{k-1} + P / b_k`` [A]; the interpolant is continuous and exact on the
    grid. A last cell above ``b_n`` (to ``inf``) holds ``P / b_n``."""
    n = max(1, int(np.ceil(np.log(v_hi / v_lo) / np.log(ratio))))
    bb = v_lo * ratio ** np.arange(n + 1)
    cells = list(zip((-power_w / (bb[:-1] * bb[1:])).tolist(),
                     (power_w / bb[:-1] + power_w / bb[1:]).tolist(), strict=True))
    b = bb.tolist()
    # above the grid a constant current: the chord continued would fall to zero at
    # b_{n-1} + b_n and give a false equilibrium there
    b.append(np.inf)
    cells.append((0.0, power_w / b[n]))
    return b, cells


class ConverterUVLO(Automaton):
    """A constant-power converter across a capacitor, with under-voltage lock-out.

    Running, it draws ``i = P / v`` from the capacitor: a piecewise-affine element whose
    cells are the chords of ``P / v`` on a geometric voltage grid (:func:`chord_table`),
    so each segment stays linear and exact, and the monodromy matrix stays exact (the
    current is continuous across a cell boundary). It stops below ``v_off`` and restarts
    above ``v_on`` (hysteresis). States: 0 stopped, ``k >= 1`` running in grid cell ``k``
    (truthy while running).
    """

    def __init__(self, element: str, cap_state: int, breaks: list[float], v_on: float,
                 v_off: float, n_x: int, n_u: int) -> None:
        self.el, self.j, self.b = element, cap_state, breaks
        self.v_on, self.v_off = v_on, v_off
        self.n_x, self.n_u = n_x, n_u
        self.initial = 0

    def _row(self, sign):
        r = np.zeros(self.n_x + self.n_u)
        r[self.j] = sign
        return r

    def state_for(self, v: float, running: bool) -> int:
        """The state of a converter at capacitor voltage ``v``."""
        if not running or v < self.b[0]:
            return 0
        k = int(np.searchsorted(self.b, v, side="right"))
        return min(max(k, 1), len(self.b) - 1)

    def switches(self, s):
        return {self.el: int(s)}

    def guards(self, s, net, ms):
        if not s:
            return [(self._row(1.0), self.v_on, "start")]
        out = [(self._row(-1.0), -self.b[s - 1] + EPS_V_V, "down")]
        if s < len(self.b) - 1:
            out.append((self._row(1.0), self.b[s] + EPS_V_V, "up"))
        return out

    def fire(self, tag, s, t, x, value):
        # the cell that holds the voltage (below v_off: stopped), at least one cell on in
        # the event's direction (the event time lies just past the grid voltage)
        k = self.state_for(x[self.j], True)
        if tag == "up":
            return max(k, s + 1), x
        if tag == "down":
            return min(k, s - 1), x
        return max(k, 1), x  # "start"

    def compiled_spec(self, net):
        from .loop import CONVERTER

        return (CONVERTER, self.el, [float(self.j), self.v_on], list(self.b), [])

    def tag_name(self, code):
        return ("start", "down", "up")[code]


class TapLevels(Automaton):
    """Segment index of the tapped linear regulator's piecewise-affine characteristic."""

    def __init__(self, element: str, breaks: list[float], n_x: int, n_u: int,
                 v_index: int) -> None:
        self.el, self.breaks = element, breaks  # breaks[k]: lower voltage of segment k+1
        self.vi = v_index
        self.n = n_x + n_u
        self.initial = 0

    def switches(self, s):
        return {self.el: int(s)}

    def guards(self, s, net, ms):
        # a hysteresis of EPS_V_V: the voltage can settle onto a break from one side (a
        # ramp whose current decays to zero there), where an exact threshold would chatter
        row = ms.Q[self.vi]
        out = []
        if s < len(self.breaks):
            out.append((row, self.breaks[s] + EPS_V_V, "up"))
        if s > 0:
            out.append((-row, -self.breaks[s - 1] + EPS_V_V, "down"))
        return out

    def fire(self, tag, s, t, x, value):
        return (s + 1 if tag == "up" else s - 1), x

    def compiled_spec(self, net):
        from .loop import TAPS

        return (TAPS, self.el, [float(self.vi)], list(self.breaks), [])

    def tag_name(self, code):
        return ("up", "down")[code]


# ---------------------------------------------------------------------- building
@dataclass
class GroupBuild:
    """What a model added to the network, for reading its results back."""

    model: str
    prefix: str
    m: int
    params: dict
    sense: str  # zero-volt source in series with the group input
    caps: list[str]
    resistors: list[str]
    led: str | None  # element carrying the LED current (or None: set by a converter)
    automata: list
    light: str  # how the light is computed: filament | led-current | converter | tap | pfc | pwm
    extra: dict


def bridge(net: Network, pre: str, ac1: str, ac2: str, p: str, n: str, m: int) -> None:
    ron, goff = DIODE_R_ON_OHM / m, G_OFF_S * m
    net.D(pre + "D1", ac1, p, DIODE_V_ON_V, ron, goff)
    net.D(pre + "D2", ac2, p, DIODE_V_ON_V, ron, goff)
    net.D(pre + "D3", n, ac1, DIODE_V_ON_V, ron, goff)
    net.D(pre + "D4", n, ac2, DIODE_V_ON_V, ron, goff)


def build_group(net: Network, k: int, model: str, power_w: float, m: int, p: dict,
                node_in: str, dim_level: float = 1.0, inrush: bool = False,
                v_rms_v: float = 230.0) -> GroupBuild:
    """Add group ``k`` (``m`` lamps of ``model``) between ``node_in`` and the neutral."""
    pre = f"g{k}."
    nd = {s: pre + s for s in ("in", "a", "b", "p", "n", "c")}
    sense = pre + "A"
    net.V(sense, node_in, nd["in"], 1, 0.0)
    caps: list[str] = []
    res: list[str] = []
    aut: list[tuple] = []
    extra: dict = {}
    led = None
    if model == "resistive":
        r = p["r_cold_ohm"] if inrush else p["r_ohm"]
        net.R(pre + "R_lamp", nd["in"], "0", r / m)
        res.append(pre + "R_lamp")
        light = "filament"
    elif model == "dropper":
        net.C(pre + "C_series", nd["in"], nd["a"], p["c_series_f"] * m)
        net.R(pre + "R_bleed", nd["in"], nd["a"], p["r_bleed_ohm"] / m)
        net.R(pre + "R_surge", nd["a"], nd["b"], p["r_surge_ohm"] / m)
        bridge(net, pre, nd["b"], "0", nd["p"], nd["n"], m)
        net.D(pre + "D_string", nd["p"], nd["n"], p["v_string_v"], p["r_string_ohm"] / m,
              G_OFF_S * m)
        if p["c_string_f"] > 0:
            net.C(pre + "C_string", nd["p"], nd["n"], p["c_string_f"] * m)
            caps.append(pre + "C_string")
        caps.insert(0, pre + "C_series")
        res += [pre + "R_surge", pre + "R_bleed"]
        led = pre + "D_string"
        light = "led-current"
    elif model in ("bulk-cap", "pwm-detect"):
        net.R(pre + "R_series", nd["in"], nd["b"], p["r_series_ohm"] / m)
        res.append(pre + "R_series")
        if model == "pwm-detect":
            net.R(pre + "R_input_bleed", nd["b"], "0", p["r_bleed_ohm"] / m)
            res.append(pre + "R_input_bleed")
        bridge(net, pre, nd["b"], "0", nd["p"], nd["n"], m)
        net.C(pre + "C_bulk", nd["p"], nd["n"], p["c_bulk_f"] * m)
        caps.append(pre + "C_bulk")
        if model == "bulk-cap" and p.get("r_load_ohm") is None:
            net.R(pre + "R_bleed", nd["p"], nd["n"], p["r_bleed_ohm"] / m)
            res.append(pre + "R_bleed")
        if model == "bulk-cap" and p.get("r_load_ohm") is not None:
            net.R(pre + "R_load", nd["p"], nd["n"], p["r_load_ohm"] / m)
            res.append(pre + "R_load")
            light = "dc-load"
        elif inrush:
            # switched on at the crest with a discharged capacitor: the converter is
            # still locked out over the quarter cycle the inrush lasts
            light = "converter" if model == "bulk-cap" else "pwm"
        else:
            if model == "bulk-cap":
                pw = power_w
            else:
                pw = p["standby_w"] + (power_w - p["standby_w"]) * dim_level
            if inrush:
                pw = 0.0
            v_hi = 2.5 * max(np.sqrt(2) * v_rms_v, p["v_uvlo_on_v"])
            breaks, cells = chord_table(max(pw, 1e-9) * m, p["v_uvlo_off_v"], v_hi)
            net.G(pre + "G_conv", nd["p"], nd["n"], [(0.0, 0.0)] + cells)
            extra.update(conv=pre + "G_conv", breaks=breaks, power_w=pw * m,
                         cap=pre + "C_bulk")
            light = "converter" if model == "bulk-cap" else "pwm"
    elif model == "sine-follow":
        net.R(pre + "R_fuse", nd["in"], nd["a"], p["r_fuse_ohm"] / m)
        res.append(pre + "R_fuse")
        bridge(net, pre, nd["a"], "0", nd["p"], nd["n"], m)
        net.C(pre + "C_in", nd["p"], nd["n"], p["c_in_f"] * m)
        net.R(pre + "R_bleed", nd["p"], nd["n"], p["r_bleed_ohm"] / m)
        caps.append(pre + "C_in")
        n = int(p["n_segments"])
        vseg, imax, rd = p["v_segment_v"], p["i_max_a"], p["r_dyn_ohm"]
        levels = [0.0] + _sf_levels(n, imax)
        table, breaks, lit = [(G_OFF_S * m, 0.0)], [], [0]
        v_lo = vseg
        for kk in range(1, n + 1):
            # ramp from the previous level, i = I_{k-1} + (v - k vseg) / r
            g = 1.0 / rd
            table.append((g * m, (levels[kk - 1] - kk * vseg * g) * m))
            breaks.append(kk * vseg)
            lit.append(kk)
            v_flat = kk * vseg + (levels[kk] - levels[kk - 1]) * rd
            table.append((G_OFF_S * m, (levels[kk] - v_flat * G_OFF_S) * m))
            breaks.append(v_flat)
            lit.append(kk)
            v_lo = v_flat
        del v_lo
        # the next ramp starts where its segment lights, above the flat's end
        fixed: list[float] = []
        for b in breaks:
            fixed.append(max(b, fixed[-1] + 1e-3) if fixed else b)
        net.G(pre + "G_reg", nd["p"], nd["n"], table)
        extra.update(table=table, lit=lit, vseg=vseg, breaks=fixed)
        aut.append(("taps", pre + "G_reg", fixed))
        led = pre + "G_reg"
        light = "tap"
    elif model == "pfc":
        net.R(pre + "R_fuse", nd["in"], nd["a"], p["r_fuse_ohm"] / m)
        res.append(pre + "R_fuse")
        x = nd["a"]
        if p["l_emi_h"] > 0:
            net.L(pre + "L_emi", nd["a"], nd["b"], p["l_emi_h"] / m)
            net.R(pre + "R_emi_damp", nd["a"], nd["b"], p["r_emi_damp_ohm"] / m)
            res.append(pre + "R_emi_damp")
            x = nd["b"]
        net.C(pre + "C_emi", x, "0", p["c_emi_f"] * m)
        caps.append(pre + "C_emi")
        bridge(net, pre, x, "0", nd["p"], nd["n"], m)
        net.C(pre + "C_dc", nd["p"], nd["n"], p["c_dc_f"] * m)
        caps.append(pre + "C_dc")
        net.R(pre + "R_bleed", nd["p"], nd["n"], p["r_bleed_ohm"] / m)
        res.append(pre + "R_bleed")
        re = p["_r_emulated_ohm"]
        net.R(pre + "R_emulated", nd["p"], nd["n"], re / m)
        led = None
        light = "pfc"
    else:  # pragma: no cover - guarded by LoadGroup
        raise InputError(f"model: unknown {model!r}")
    return GroupBuild(model, pre, m, p, sense, caps, res, led, aut, light, extra)
