"""Switch-on transient of a circuit: the inrush pulse of each lamp and of the circuit.

:func:`switch_on_transient` closes the circuit (its lamps behind their dimmer, or without
one) at one instant of the mains with every capacitor discharged and every inductor
current zero, and simulates the half cycle that follows with the project's
piecewise-linear solver (:class:`pqcalc.circuits.pwl.Engine`, exact within each segment).
The circuit's own loop impedance is a series source impedance: the supply's source
resistance and inductance (:class:`~pqcalc.circuits.spec.Supply`) plus the feeder and the
branch cable (``series_r_ohm``, ``series_l_h``: line and neutral together; see
:func:`cable_impedance`).

Of the first pulse (see :func:`pulse_figures`) it reports, per lamp and for the circuit:
the peak [A], the width at half peak [s] and the I²t [A²s]; breaker makers and the
lighting industry judge inrush by peak and width at half peak (common practice).

The dimmer is a closed switch of its on resistance while the capacitors charge: a wall
switch closed at the instant, or a leading-edge dimmer firing at it. :func:`worst_switch_deg`
gives the worst instant a dimmer allows: the crest (90 deg) where the switch can close
there, else the nearest instant it can close at (a leading edge set below 90 deg of
conduction fires after the crest). A front end with an inductor ahead of its capacitor
could in principle peak higher slightly off the crest; ``switch_deg`` takes any instant and
the checks show the crest is the worst for the models here.

Converters are not yet running during the pulse (their controllers start from the charged
capacitor, milliseconds later): the constant-power stage of ``bulk-cap`` and
``pwm-detect`` is locked out, the ``pfc`` stage draws nothing, a filament is cold
(``r_cold_ohm``).

Results support, and never replace, the breaker maker's data, the local electrical code and
the judgement of a licensed professional.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import Literal, get_args

import numpy as np

from ..errors import InputError
from .dimmers import build_dimmer, resolve_dimmer
from .drivers import build_group, resolve_params
from .network import CH_ONE, CH_SOURCE, Network
from .pwl import Engine, Source
from .spec import DimmerSpec, LoadGroup, Supply

__all__ = ["Pulse", "GroupInrush", "CircuitInrush", "CableImpedance", "Material", "MATERIALS",
           "switch_on_transient", "worst_switch_deg", "pulse_figures", "cable_impedance",
           "awg_area_mm2", "RESISTIVITY_20C_OHM_M", "ALPHA_20C_PER_K",
           "IEC60228_CLASS2_OHM_PER_KM", "CABLE_X_PER_CONDUCTOR_OHM_PER_M"]

#: the first pulse ends where the current has fallen to this fraction of its peak [-]
END_FRACTION = 0.01
#: ... or at a local minimum below this fraction of its peak (the pulse has decayed onto a
#: steady current) [-]
END_MINIMUM_FRACTION = 0.1


# ---------------------------------------------------------------------- pulse figures
@dataclass(frozen=True)
class Pulse:
    """The first inrush pulse of one current.

    Attributes
    ----------
    peak_a
        Largest absolute current [A].
    width_s
        Width at half peak [s]: the span around the peak where ``|i| >= peak_a / 2``.
    i2t_a2s
        Integral of ``i^2`` from the switch-on to the pulse's end [A²s].
    t_peak_s
        Time of the peak after the switch-on [s].
    duration_s
        From the switch-on to the pulse's end [s].
    """

    peak_a: float
    width_s: float
    i2t_a2s: float
    t_peak_s: float
    duration_s: float

    def scaled(self, k: float) -> Pulse:
        """The pulse of ``k`` identical pulses that coincide (``k`` times the current)."""
        return Pulse(self.peak_a * k, self.width_s, self.i2t_a2s * k * k, self.t_peak_s,
                     self.duration_s)


def _cross(t: np.ndarray, y: np.ndarray, a: int, b: int, level: float) -> float:
    """Time where ``y`` passes ``level`` between samples ``a`` and ``b`` (linear)."""
    ya, yb = y[a], y[b]
    if yb == ya:
        return float(t[b])
    return float(t[a] + (level - ya) / (yb - ya) * (t[b] - t[a]))


def pulse_figures(t_s: np.ndarray, i_a: np.ndarray) -> Pulse:
    """Peak, width at half peak and I²t of the first pulse of a sampled current.

    ``t_s`` starts at the switch-on (ascending, any spacing). The pulse is the first lobe
    (from the switch-on to the current's first change of sign); it ends at the first
    instant after the peak where the current changes sign, falls to ``END_FRACTION`` of the
    peak, or reaches a local minimum below ``END_MINIMUM_FRACTION`` of the peak (it has
    decayed onto a steady current), else at the record's end. Crossings are linear between
    samples; I²t is the trapezoid rule on ``i^2``. The peak between samples is refined by a
    parabola through the three samples around it (exact for a smooth peak to third order in
    the spacing).
    """
    t = np.asarray(t_s, dtype=float)
    i = np.asarray(i_a, dtype=float)
    if t.ndim != 1 or t.shape != i.shape or t.size < 3:
        raise InputError("pulse: expected matching 1-D time and current arrays of at least 3 "
                         "samples")
    if not (np.all(np.isfinite(t)) and np.all(np.isfinite(i))):
        raise InputError("pulse: the samples must be finite numbers")
    if np.any(np.diff(t) <= 0):
        raise InputError("pulse: the times must be strictly ascending")
    big = np.abs(i) > 1e-9 * float(np.max(np.abs(i)))
    if not big.any():
        return Pulse(0.0, 0.0, 0.0, 0.0, 0.0)
    first = int(np.argmax(big))
    sign = 1.0 if i[first] > 0 else -1.0
    y = sign * i  # the first lobe positive
    flip = np.nonzero(y[first:] < 0)[0]
    lobe_end = first + int(flip[0]) if flip.size else t.size
    k = first + int(np.argmax(y[first:lobe_end]))
    peak = float(y[k])
    t_peak = float(t[k])
    if peak <= 0:
        return Pulse(0.0, 0.0, 0.0, 0.0, 0.0)
    if 0 < k < t.size - 1:
        # parabola through the three samples around the peak (non-uniform spacing)
        x0, x1, x2 = t[k - 1] - t[k], 0.0, t[k + 1] - t[k]
        y0, y1, y2 = y[k - 1], y[k], y[k + 1]
        den = (x0 - x1) * (x0 - x2) * (x1 - x2)
        a = (x2 * (y1 - y0) + x1 * (y0 - y2) + x0 * (y2 - y1)) / den
        b = (x2 * x2 * (y0 - y1) + x1 * x1 * (y2 - y0) + x0 * x0 * (y1 - y2)) / den
        if a < 0:
            xv = -b / (2 * a)
            if x0 < xv < x2:
                peak = float(y1 + b * xv + a * xv * xv - (b * x1 + a * x1 * x1))
                t_peak = float(t[k] + xv)
    # the pulse's end
    end = t.size - 1
    for j in range(k + 1, t.size):
        if y[j] <= END_FRACTION * peak:
            end = j
            break
        if j + 1 < t.size and y[j] <= y[j - 1] and y[j] < y[j + 1] \
                and y[j] < END_MINIMUM_FRACTION * peak:
            end = j
            break
    t_end = float(t[end])
    if y[end] < 0:
        t_end = _cross(t, y, end - 1, end, 0.0)
    # the pulse's start: back from the peak to a sign change, or the switch-on
    start = 0
    for j in range(k - 1, -1, -1):
        if y[j] < 0:
            start = j + 1
            break
    t_start = float(t[start]) if start == 0 else _cross(t, y, start - 1, start, 0.0)
    # width at half peak
    half = 0.5 * peak
    lo = t_start
    for j in range(k, start, -1):
        if y[j - 1] < half <= y[j]:
            lo = _cross(t, y, j - 1, j, half)
            break
    hi = t_end
    for j in range(k, end):
        if y[j] >= half > y[j + 1]:
            hi = _cross(t, y, j, j + 1, half)
            break
    # I2t over the pulse (the positive part; a last partial cell up to a zero crossing)
    seg_t = t[start:end + 1].copy()
    seg_y = np.maximum(y[start:end + 1], 0.0)
    if y[end] < 0:
        seg_t[-1] = t_end
    i2t = float(np.sum(np.diff(seg_t) * 0.5 * (seg_y[:-1] ** 2 + seg_y[1:] ** 2)))
    return Pulse(peak, float(hi - lo), i2t, t_peak - float(t[0]), t_end - float(t[0]))


# ---------------------------------------------------------------------- results
@dataclass(frozen=True)
class GroupInrush:
    """The inrush of one lamp of a group switched on with the whole circuit."""

    group: LoadGroup
    pulse_one: Pulse  # one lamp's current (the group draws ``count`` times it)

    @property
    def pulse_group(self) -> Pulse:
        return self.pulse_one.scaled(self.group.count)


@dataclass(frozen=True)
class CircuitInrush:
    """The switch-on transient of one circuit.

    Attributes
    ----------
    switch_deg
        Instant of the switch-on [deg after the open-circuit voltage's positive-going zero
        crossing].
    loop_r_ohm, loop_l_h
        Series loop resistance [ohm] and inductance [H] used (supply + feeder + branch).
    groups
        Per group: the pulse of one lamp.
    circuit
        The pulse of the circuit's total current.
    t_s, i_a
        The total current sampled from the switch-on over half a cycle [s, A] (for plots).
    """

    switch_deg: float
    loop_r_ohm: float
    loop_l_h: float
    groups: tuple[GroupInrush, ...]
    circuit: Pulse
    t_s: np.ndarray
    i_a: np.ndarray


# ---------------------------------------------------------------------- the instant
def worst_switch_deg(dimmer: DimmerSpec | None = None) -> float:
    """The worst switch-on instant a dimmer allows [deg after the voltage's zero crossing].

    A switch that may close anywhere in the half cycle meets the crest (90 deg). A leading
    edge set to ``c`` deg of conduction fires at ``180 - c``: at the crest or, for
    ``c < 90``, after it (the largest voltage it can switch on). A trailing edge conducts
    from the zero crossing to ``c``: the crest, or ``c`` where ``c < 90``. A triac set by its
    knob (the angle not known before the solve) and no dimmer: the crest.
    """
    if dimmer is None or dimmer.kind == "none" or dimmer.conduction_deg is None:
        return 90.0
    c = float(dimmer.conduction_deg)
    if c <= 0:
        raise InputError("dimmer conduction_deg: a dimmer set to 0 deg never switches the "
                         "lamps on; no inrush to compute")
    if dimmer.kind == "leading-edge":
        return max(90.0, 180.0 - c)
    return min(90.0, c)


# ---------------------------------------------------------------------- the transient
def _samples(T: float) -> np.ndarray:
    """Sample times over half a cycle from the switch-on: a geometric grid from 1 ns (0.4 %
    relative spacing: resolves pulses down to microseconds) merged with a uniform one."""
    H = T / 2
    g = np.geomspace(1e-9, H, 4000)
    u = np.linspace(0.0, H, 5001)
    return np.unique(np.concatenate([[0.0], g, u]))


def switch_on_transient(supply: Supply, loads: Sequence[LoadGroup],
                        dimmer: DimmerSpec | None = None, series_r_ohm: float = 0.0,
                        series_l_h: float = 0.0, switch_deg: float | None = None
                        ) -> CircuitInrush:
    """The switch-on transient of a circuit from its discharged state.

    Parameters
    ----------
    supply
        The supply; its ``source_r_ohm``/``source_l_h`` are the source part of the loop.
    loads
        The circuit's lamp groups (:class:`LoadGroup`); ``count`` lamps of a group share
        the loop, so each lamp's peak falls as the count grows.
    dimmer
        The dimmer (a closed switch of its ``r_on_ohm`` during the pulse); None: a plain
        switch (``r_on_ohm`` of ``DimmerSpec("none")``).
    series_r_ohm, series_l_h
        Loop resistance [ohm] and inductance [H] of the feeder and branch cable, line and
        neutral together (:func:`cable_impedance` gives a branch's), added to the supply's.
    switch_deg
        Instant of the switch-on [deg]; None: :func:`worst_switch_deg` of the dimmer.

    Returns
    -------
    CircuitInrush
        Per lamp and for the circuit: peak [A], width at half peak [s], I²t [A²s].
    """
    loads = tuple(loads)
    if not loads or not all(isinstance(g, LoadGroup) for g in loads):
        raise InputError("loads: expected at least one LoadGroup")
    for name, v in (("series_r_ohm", series_r_ohm), ("series_l_h", series_l_h)):
        if not (np.isfinite(v) and v >= 0):
            raise InputError(f"inrush {name}: expected a value >= 0, got {v}")
    spec = dimmer if dimmer is not None else DimmerSpec("none")
    deg = worst_switch_deg(dimmer) if switch_deg is None else float(switch_deg)
    if not (np.isfinite(deg) and 0.0 <= deg <= 360.0):
        raise InputError(f"inrush switch_deg: expected 0 to 360 deg, got {switch_deg}")
    dp = resolve_dimmer(spec, supply)
    r_loop = supply.source_r_ohm + float(series_r_ohm)
    l_loop = supply.source_l_h + float(series_l_h)

    net = Network()
    net.V("src", "src", "0", CH_SOURCE)
    node = "src"
    if r_loop > 0:
        net.R("R_loop", node, "sa", r_loop)
        node = "sa"
    if l_loop > 0:
        net.L("L_loop", node, "line", l_loop)
        net.R("R_damp", node, "line", supply.source_damping_ohm)
    else:
        net.R("R_link", node, "line", 1e-6)
    net.R("R_vline", "line", "0", 1e12)
    net.V("A_line", "line", "din", CH_ONE, 0.0)
    make_dim = build_dimmer(net, DimmerSpec("none"), {"r_on_ohm": dp["r_on_ohm"]}, supply,
                            "din", "dout")
    builds = []
    for k, g in enumerate(loads):
        p = resolve_params(g.model, g.power_w, supply.v_rms_v, supply.frequency_hz,
                           g.param_dict())
        if g.model == "pfc":
            # the boost stage's controller has not started: it draws next to nothing
            p["_r_emulated_ohm"] = 1e4 * supply.v_rms_v ** 2 / g.power_w
        builds.append(build_group(net, k, g.model, g.power_w, g.count, p, "dout",
                                  inrush=True, v_rms_v=supply.v_rms_v))
    net.finalize()
    terms, dc = supply.source_terms()
    eng = Engine(net, Source.from_sines(supply.frequency_hz, terms, dc), [make_dim()], 8192)
    T = 1.0 / supply.frequency_hz
    t0 = deg / 360.0 * T
    disc = (tuple([False] * len(net.diodes)), tuple(a.initial for a in eng.automata))
    tr = eng.run(t0, t0 + T / 2, np.zeros(net.n_x), disc, record=True)
    ts = _samples(T)
    outs = [("A_line", "i")] + [(b.sense, "i") for b in builds]
    Y, _ = eng.sample(tr, t0 + ts, outs)
    if not np.all(np.isfinite(Y)):
        from ..errors import ConvergenceError

        raise ConvergenceError("the switch-on transient holds non-finite values; the solver "
                               "failed")
    groups = tuple(GroupInrush(g, pulse_figures(ts, Y[1 + k] / b.m))
                   for k, (g, b) in enumerate(zip(loads, builds, strict=True)))
    return CircuitInrush(deg, r_loop, l_loop, groups, pulse_figures(ts, Y[0]), ts, Y[0])


# ---------------------------------------------------------------------- cables
Material = Literal["copper", "aluminium"]
MATERIALS: tuple[str, ...] = get_args(Material)

#: resistivity at 20 degC [ohm m]: annealed copper 1/58 ohm mm2/m, the International
#: Annealed Copper Standard (IEC 60028:1925); aluminium 0.028264 ohm mm2/m (IEC 60889,
#: hard-drawn aluminium for conductors; from memory)
RESISTIVITY_20C_OHM_M: dict[str, float] = {"copper": 1.7241e-8, "aluminium": 2.8264e-8}
#: temperature coefficient of resistance at 20 degC [1/K]: copper 0.00393 (IEC 60028),
#: aluminium 0.00403 (IEC 60889; from memory)
ALPHA_20C_PER_K: dict[str, float] = {"copper": 0.00393, "aluminium": 0.00403}
#: IEC 60228 class 1/2 (solid / stranded) plain copper: largest DC resistance at 20 degC
#: [ohm/km] by nominal area [mm2] (from memory); a conductor of that area meets it or less
IEC60228_CLASS2_OHM_PER_KM: dict[float, float] = {
    0.75: 24.5, 1.0: 18.1, 1.5: 12.1, 2.5: 7.41, 4.0: 4.61, 6.0: 3.08, 10.0: 1.83,
    16.0: 1.15, 25.0: 0.727, 35.0: 0.524,
}
#: reactance of one conductor of a multicore cable at 50 Hz [ohm/m]: 0.08 mohm/m, the
#: usual figure of short-circuit calculations where the maker gives none (common practice,
#: from memory); the loop (line and neutral) has twice the inductance of one conductor
CABLE_X_PER_CONDUCTOR_OHM_PER_M = 0.08e-3


def awg_area_mm2(awg: int | str) -> float:
    """Cross-section of an AWG size [mm2]: ``d = 0.127 mm * 92^((36 - n) / 39)``
    (ASTM B258; 0 to 4/0 as ``"1/0"`` ... ``"4/0"``)."""
    s = str(awg).strip().upper().removeprefix("AWG").strip()
    n: int
    if s.endswith("/0"):
        try:
            n = 1 - int(s[:-2])
        except ValueError:
            raise InputError(f"cable awg: expected a size such as 14, 12, 10 or 1/0, got "
                             f"{awg!r}") from None
    else:
        try:
            n = int(s)
        except ValueError:
            raise InputError(f"cable awg: expected a size such as 14, 12, 10 or 1/0, got "
                             f"{awg!r}") from None
    if not -3 <= n <= 40:
        raise InputError(f"cable awg: expected 40 down to 4/0, got {awg!r}")
    d_mm = 0.127 * 92.0 ** ((36 - n) / 39)
    return float(np.pi / 4 * d_mm * d_mm)


@dataclass(frozen=True)
class CableImpedance:
    """Loop impedance of a branch cable (line and neutral of the same size).

    Attributes
    ----------
    r_ohm, l_h
        Loop resistance [ohm] at ``temperature_c`` and loop inductance [H].
    r_conductor_ohm_per_m
        One conductor's resistance [ohm/m] at ``temperature_c``.
    area_mm2, length_m, material, temperature_c
        What it was computed for.
    basis
        ``"resistivity"`` (nominal area and the material's resistivity) or ``"iec60228"``
        (the standard's largest resistance for that size).
    """

    r_ohm: float
    l_h: float
    r_conductor_ohm_per_m: float
    area_mm2: float
    length_m: float
    material: str
    temperature_c: float
    basis: str


def cable_impedance(length_m: float, size_mm2: float | None = None,
                    awg: int | str | None = None, material: str = "copper",
                    temperature_c: float = 20.0, basis: str = "resistivity",
                    l_per_m_h: float | None = None) -> CableImpedance:
    """Loop R and L of a two-conductor branch run (line out, neutral back).

    Parameters
    ----------
    length_m
        One-way length of the run [m].
    size_mm2, awg
        Cross-section [mm2] or AWG size (area from the AWG formula); give one.
    material
        ``"copper"`` or ``"aluminium"``.
    temperature_c
        Conductor temperature [degC]; 20 degC (a cold circuit being switched on) gives the
        lowest resistance, the largest inrush.
    basis
        ``"resistivity"``: ``rho_20 (1 + alpha (T - 20)) / A`` on the nominal area (the
        lower resistance, the conservative choice for inrush); ``"iec60228"``: the largest
        resistance IEC 60228 allows for a copper class 1/2 conductor of that area,
        corrected to ``temperature_c`` with the same alpha.
    l_per_m_h
        Loop inductance per metre [H/m]; None: twice one conductor's
        ``CABLE_X_PER_CONDUCTOR_OHM_PER_M / (2 pi 50 Hz)`` = 0.51 uH/m (common practice).

    References
    ----------
    IEC 60028 (International standard of resistance for copper); IEC 60228, Table 1/2
    (conductors of insulated cables); ASTM B258 (AWG diameters).
    """
    if length_m is None or not (np.isfinite(length_m) and length_m > 0):
        raise InputError(f"cable length_m: expected a positive length [m], got {length_m}")
    if (size_mm2 is None) == (awg is None):
        raise InputError("cable: give one of size_mm2 or awg")
    if material not in MATERIALS:
        raise InputError(f"cable material: expected one of {', '.join(MATERIALS)}, got "
                         f"{material!r}")
    if not (np.isfinite(temperature_c) and -40.0 <= temperature_c <= 250.0):
        raise InputError(f"cable temperature_c: expected -40 to 250 degC, got {temperature_c}")
    if awg is not None:
        area = awg_area_mm2(awg)
    else:
        area = float(size_mm2)  # type: ignore[arg-type]
        if not (np.isfinite(area) and area > 0):
            raise InputError(f"cable size_mm2: expected a positive area [mm2], got {size_mm2}")
    corr = 1.0 + ALPHA_20C_PER_K[material] * (temperature_c - 20.0)
    if basis == "resistivity":
        r_m = RESISTIVITY_20C_OHM_M[material] / (area * 1e-6) * corr
    elif basis == "iec60228":
        if material != "copper" or awg is not None or area not in IEC60228_CLASS2_OHM_PER_KM:
            raise InputError(
                "cable basis iec60228: expected a copper conductor of a tabulated size ("
                + ", ".join(f"{a:g}" for a in IEC60228_CLASS2_OHM_PER_KM) + " mm2)")
        r_m = IEC60228_CLASS2_OHM_PER_KM[area] * 1e-3 * corr
    else:
        raise InputError(f"cable basis: expected resistivity or iec60228, got {basis!r}")
    if l_per_m_h is None:
        l_m = 2.0 * CABLE_X_PER_CONDUCTOR_OHM_PER_M / (2 * np.pi * 50.0)
    else:
        l_m = float(l_per_m_h)
        if not (np.isfinite(l_m) and l_m >= 0):
            raise InputError(f"cable l_per_m_h: expected a value >= 0 [H/m], got {l_per_m_h}")
    return CableImpedance(2.0 * r_m * length_m, l_m * length_m, r_m, area, float(length_m),
                          material, float(temperature_c), basis)
