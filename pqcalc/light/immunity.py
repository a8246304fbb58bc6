"""Flicker of a lamp under supply voltage fluctuations and under dimmer firing jitter.

Both are quasi-static: the lamp's light at each instant is taken from its periodic steady
state at the supply voltage (or firing angle) of that instant, solved with
:func:`pqcalc.circuits.solve_circuit` at a few values and interpolated.

**Why quasi-static.** The test fluctuations are slow against the mains period (8.8 Hz, the
eye's most sensitive frequency, spans 5.7 cycles of 50 Hz; the method accepts up to a
quarter of the mains frequency), so within each mains cycle the supply is close to a
steady sine of the instantaneous amplitude. A lamp without energy storage that outlasts a
cycle (a dropper, a series-regulated or tapped string) then follows its steady state
closely. Storage in the lamp (a filament's heat, a bulk or output capacitor, a converter's
control loop) can only low-pass the light's response to the fluctuation; the quasi-static
result neglects that smoothing and is therefore an upper estimate for such lamps, exact
in the limit of slow fluctuations. The light's ripple at the mains harmonics is kept (each
steady-state waveform is interpolated sample by sample over the cycle), band-limited to
the meter's input rate (its filters pass less than 40 Hz, so nothing the meter sees is
dropped).

**The test fluctuation.** By default the voltage fluctuation is the one that gives Pst = 1
on the IEC 61000-4-15 flickermeter (the 60 W incandescent reference lamp): its relative
change dV/V is found with this package's voltage flickermeter (Pst is proportional to dV/V
for small fluctuations, so one evaluation scales it), sinusoidal at 8.8 Hz unless asked
otherwise. IEC TR 61547-1 judges a lamp's immunity by its Pst_LM under such a fluctuation:
a lamp no more sensitive than the incandescent reference has Pst_LM <= 1.

References
----------
IEC TR 61547-1:2015, clause 4 (the objective voltage fluctuation immunity test) and Annex A.
IEC 61000-4-15:2010, Tables 1a, 2a and 5 (the fluctuations of the flickermeter's tests).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from fractions import Fraction
from typing import Literal, get_args

import numpy as np
from scipy import signal

from ..errors import InputError
from .flickermeter import (
    OBSERVATION_S,
    SETTLE_S,
    FlickerSeverity,
    _pst_lm_periodic,
    _pst_lm_record,
    pst_lm,
    pst_voltage,
    pst_voltage_record,
)

__all__ = [
    "FluctuationShape",
    "FLUCTUATION_SHAPES",
    "ImmunityResult",
    "JitterResult",
    "fluctuation_envelope",
    "fluctuation_voltage",
    "reference_fluctuation",
    "voltage_fluctuation_immunity",
    "dimmer_jitter_pst_lm",
    "QUASI_STATIC_MAX_FRACTION",
]

FluctuationShape = Literal["sine", "rectangular"]
FLUCTUATION_SHAPES: tuple[str, ...] = get_args(FluctuationShape)

#: the quasi-static method accepts fluctuations up to this fraction of the mains frequency
#: (12.5 Hz at 50 Hz: at least 4 mains cycles per fluctuation period)
QUASI_STATIC_MAX_FRACTION = 0.25
#: slowest fluctuation accepted [Hz] (one period within the 10 min observation)
MIN_MODULATION_HZ = 1.0 / OBSERVATION_S
#: samples per mains cycle of the constructed light (2000 samples/s at 50 Hz)
SAMPLES_PER_CYCLE = 40
#: a common period of fluctuation and mains up to this long uses the exact periodic meter
PERIODIC_MAX_S = 120.0


def _check_shape(shape: str) -> str:
    if shape not in FLUCTUATION_SHAPES:
        raise InputError(f"shape: expected one of {', '.join(FLUCTUATION_SHAPES)}, got "
                         f"{shape!r}")
    return shape


def _check_modulation(modulation_hz: float, mains_hz: float, quasi_static: bool) -> float:
    fm = float(modulation_hz)
    top = QUASI_STATIC_MAX_FRACTION * mains_hz if quasi_static else 0.5 * mains_hz
    if not (np.isfinite(fm) and MIN_MODULATION_HZ <= fm <= top):
        why = (" (the quasi-static lamp model needs a fluctuation slow against the mains)"
               if quasi_static else "")
        raise InputError(f"modulation_hz: expected {MIN_MODULATION_HZ:.4g} to {top:g} Hz{why}, "
                         f"got {modulation_hz}")
    return fm


def fluctuation_envelope(t_s, modulation_hz: float, dv_v: float, shape: str = "sine"):
    """Relative supply amplitude ``1 + (dv_v / 2) m(t)`` [-] of the flickermeter's test
    fluctuations: ``m = sin(2 pi f t)`` or the rectangular wave ``+1`` for the first half
    of each period, ``-1`` for the second (IEC 61000-4-15: ``dv_v`` is the relative voltage
    change dV/V, peak to peak over the mean; a rectangular wave of f Hz makes ``120 f``
    changes per minute)."""
    _check_shape(shape)
    t = np.asarray(t_s, dtype=float)
    if shape == "sine":
        m = np.sin(2 * np.pi * modulation_hz * t)
    else:
        m = np.where((t * modulation_hz) % 1.0 < 0.5, 1.0, -1.0)
    return 1.0 + 0.5 * dv_v * m


def fluctuation_voltage(t_s, modulation_hz: float, dv_v: float, shape: str = "sine",
                        v_rms_v: float = 230.0, mains_hz: float = 50.0):
    """Instantaneous test voltage [V]: a sine of ``v_rms_v`` at ``mains_hz`` whose amplitude
    follows :func:`fluctuation_envelope`."""
    t = np.asarray(t_s, dtype=float)
    return (math.sqrt(2) * v_rms_v * np.sin(2 * np.pi * mains_hz * t)
            * fluctuation_envelope(t, modulation_hz, dv_v, shape))


def _common_period(modulation_hz: float, mains_hz: float, cycles: int = 1) -> float:
    """Shortest time holding whole periods of the fluctuation and of ``cycles`` mains
    cycles [s] (inf when they are not commensurate within 1e-4 Hz)."""
    a = Fraction(modulation_hz).limit_denominator(10000)
    b = Fraction(mains_hz).limit_denominator(10000) / cycles
    if abs(float(a) - modulation_hz) > 1e-9 * max(1.0, modulation_hz):
        return math.inf
    num = math.gcd(a.numerator * b.denominator, b.numerator * a.denominator)
    return float(Fraction(a.denominator * b.denominator, num))


def reference_fluctuation(modulation_hz: float = 8.8, shape: str = "sine",
                          mains_hz: float = 50.0, lamp: str = "230V") -> float:
    """Relative voltage change dV/V [-] that gives Pst = 1 on the IEC 61000-4-15
    flickermeter (incandescent reference ``lamp``) for this fluctuation.

    Pst is proportional to dV/V (P_inst to its square, the weighting is linear), so the
    meter's Pst at 1 % gives it directly. For the rectangular fluctuations of the
    standard's Table 5 this reproduces the table (e.g. 39 changes per minute, 0.894 %).
    """
    _check_shape(shape)
    fm = _check_modulation(modulation_hz, mains_hz, quasi_static=False)
    d0 = 0.01
    v_rms = 230.0 if lamp == "230V" else 120.0
    period = _common_period(fm, mains_hz)
    if period <= PERIODIC_MAX_S:
        n = max(64, int(math.ceil(period * 40 * mains_hz)))
        t = np.arange(n) / n * period
        sev = pst_voltage(fluctuation_voltage(t, fm, d0, shape, v_rms, mains_hz), period,
                          mains_hz, lamp)
    else:
        fs = 40 * mains_hz
        t = np.arange(int((SETTLE_S + OBSERVATION_S) * fs)) / fs
        sev = pst_voltage_record(fluctuation_voltage(t, fm, d0, shape, v_rms, mains_hz), fs,
                                 mains_hz, lamp)
    if not sev.pst > 0:
        raise InputError(f"modulation_hz: a fluctuation at {fm:g} Hz gives no flicker on the "
                         "reference meter")
    return d0 / sev.pst


@dataclass(frozen=True)
class ImmunityResult:
    """A lamp's flicker under a supply voltage fluctuation.

    Attributes
    ----------
    pst_lm
        Pst_LM of the lamp's light under the fluctuation [-] (IEC TR 61547-1 light meter).
    severity
        The meter's full result (percentiles, P_inst max, method).
    dv_v
        Relative voltage change dV/V applied [-] (peak to peak over the mean).
    modulation_hz, shape
        The fluctuation.
    reference_pst
        Pst of the same fluctuation on the IEC 61000-4-15 meter (incandescent reference)
        [-]; 1 by default (the fluctuation is scaled to it).
    voltages_v, mean_light
        Supply voltages solved [V rms] and the lamp's mean relative light at each [-].
    light_voltage_gain
        Quasi-static relative light change per relative voltage change at nominal [-]
        (a tungsten lamp: about 3.4 to 3.8).
    """

    pst_lm: float
    severity: FlickerSeverity
    dv_v: float
    modulation_hz: float
    shape: str
    reference_pst: float
    voltages_v: tuple[float, ...]
    mean_light: tuple[float, ...]
    light_voltage_gain: float
    notes: tuple[str, ...] = ()

    def to_dict(self) -> dict:
        return {
            "pst_lm": self.pst_lm,
            "dv_v_pct": 100.0 * self.dv_v,
            "modulation_hz": self.modulation_hz,
            "shape": self.shape,
            "reference_pst": self.reference_pst,
            "voltages_v": list(self.voltages_v),
            "mean_light": list(self.mean_light),
            "light_voltage_gain": self.light_voltage_gain,
            "severity": self.severity.to_dict(),
            "notes": list(self.notes),
        }


def _scaled_supply(supply, factor: float):
    """``supply`` with its open-circuit voltage scaled by ``factor``; the nominal
    ``v_rms_v`` (which sizes the lamp's components and normalises its light) unchanged."""
    from ..circuits import Supply

    terms, dc = supply.source_terms()
    n = 1024
    th = 2 * np.pi * np.arange(n) / n
    v = np.full(n, dc)
    for h, amp, ph in terms:
        v = v + amp * np.sin(h * th + ph)
    return Supply(supply.v_rms_v, supply.frequency_hz, supply.source_r_ohm, supply.source_l_h,
                  tuple(float(x) for x in factor * v), supply.source_damping_ohm)


def _band_limited(light: np.ndarray, cycles: int, out_cycles: int, spc: int) -> np.ndarray:
    """One solved light period (``cycles`` mains cycles) on ``spc`` samples per cycle,
    band-limited below the new Nyquist frequency, tiled to ``out_cycles`` cycles."""
    x = np.asarray(light, dtype=float)
    m = spc * cycles
    X = np.fft.rfft(x) / x.size
    Y = np.zeros(m // 2 + 1, dtype=complex)
    k = min(X.size, m // 2)  # drop the new Nyquist line: no real content there
    Y[:k] = X[:k]
    y = np.fft.irfft(Y * m, m)
    return np.tile(y, out_cycles // cycles)


def _filament_tau(group, supply) -> float | None:
    """The thermal time constant [s] of a filament lamp group, None for other models."""
    if group.model != "resistive":
        return None
    from ..circuits.drivers import resolve_params

    p = resolve_params(group.model, group.power_w, supply.v_rms_v, supply.frequency_hz,
                       group.param_dict())
    tau = p.get("tau_thermal_s")
    return float(tau) if tau else None


def _solve_light(supply, dimmer, loads, group: int):
    from ..circuits import solve_circuit

    sol = solve_circuit(supply, dimmer, loads, extras=False)
    if not 0 <= group < len(sol.groups):
        raise InputError(f"group: expected 0 to {len(sol.groups) - 1}, got {group}")
    return sol, np.asarray(sol.groups[group].light, dtype=float)


def _meter(light_fn, period_s: float, fs: float, observation_s: float, settle_s: float,
           base_fn=None, tau_s: float | None = None) -> FlickerSeverity:
    """Pst_LM of the light built by ``light_fn(k)`` (sample indices at ``fs``): one exact
    period when short enough, else a record of ``settle_s + observation_s``.

    With ``tau_s``, the deviation from the unfluctuated light ``base_fn(k)`` passes a
    first-order low-pass of that time constant (a filament's thermal response to the
    fluctuation, linearised: light ~ P^n, so its small relative change follows the
    low-passed relative power change)."""
    periodic = period_s <= PERIODIC_MAX_S
    n = int(round(period_s * fs)) if periodic else int(math.ceil((settle_s + observation_s)
                                                                  * fs))
    k = np.arange(n)
    x = light_fn(k)
    if tau_s:
        base = base_fn(k)
        d = x - base
        if periodic:
            D = np.fft.rfft(d)
            fk = np.arange(D.size) / period_s
            d = np.fft.irfft(D / (1.0 + 2j * np.pi * fk * tau_s), n)
        else:
            b, a = signal.bilinear([1.0], [tau_s, 1.0], fs)
            d = signal.lfilter(b, a, d)
        x = base + d
    if not float(np.mean(x)) > 0:
        raise InputError("light: the lamp is dark under the fluctuation; Pst_LM is undefined")
    if periodic:
        return _pst_lm_periodic(x, period_s)
    return _pst_lm_record(x, fs, observation_s, settle_s)


def voltage_fluctuation_immunity(supply, dimmer, loads, group: int = 0,
                                 modulation_hz: float = 8.8, shape: str = "sine",
                                 dv_v: float | None = None, n_voltages: int = 5,
                                 lamp: str | None = None, thermal: bool = True
                                 ) -> ImmunityResult:
    """Pst_LM of one lamp (group ``group``) under a supply voltage fluctuation.

    Parameters
    ----------
    supply, dimmer, loads
        The case, as for :func:`pqcalc.circuits.solve_circuit` (``supply.v_rms_v`` is the
        nominal voltage the fluctuation is applied around).
    modulation_hz
        Fluctuation frequency [Hz]; 1/600 Hz up to a quarter of the mains frequency (the
        quasi-static method's range). A rectangular wave of f Hz makes 120 f changes per
        minute.
    shape
        ``"sine"`` or ``"rectangular"``.
    dv_v
        Relative voltage change dV/V [-] (peak to peak over the mean); default: the
        fluctuation that gives Pst = 1 on the incandescent reference
        (:func:`reference_fluctuation`).
    n_voltages
        Supply amplitudes solved across the fluctuation (>= 3; a rectangular fluctuation
        needs only its two levels and uses 3).
    lamp
        Reference lamp of the voltage meter: ``"230V"`` (default above 180 V) or ``"120V"``.
    thermal
        For a filament lamp (model ``resistive``): pass the fluctuation's light change
        through the filament's first-order thermal response (its ``tau_thermal_s``), the one
        storage element whose time constant the model states. False: purely quasi-static.

    See the module notes for the quasi-static reasoning and its limits.
    """
    from ..circuits import LoadGroup

    loads = tuple(loads)
    if not loads or not all(isinstance(g, LoadGroup) for g in loads):
        raise InputError("loads: expected a sequence of LoadGroup")
    f = float(supply.frequency_hz)
    _check_shape(shape)
    fm = _check_modulation(modulation_hz, f, quasi_static=True)
    lamp = lamp or ("230V" if supply.v_rms_v > 180.0 else "120V")
    if int(n_voltages) != n_voltages or n_voltages < 3:
        raise InputError(f"n_voltages: expected a whole number >= 3, got {n_voltages}")
    ref_dv = reference_fluctuation(fm, shape, f, lamp)
    if dv_v is None:
        dv = ref_dv
    else:
        dv = float(dv_v)
        if not (np.isfinite(dv) and 0.0 < dv <= 0.2):
            raise InputError(f"dv_v: expected a relative voltage change 0 < dV/V <= 0.2, got "
                             f"{dv_v}")
    levels = np.linspace(-1.0, 1.0, 3 if shape == "rectangular" else int(n_voltages))
    sols = []
    for s in levels:
        sols.append(_solve_light(_scaled_supply(supply, 1.0 + 0.5 * dv * s), dimmer, loads,
                                 group))
    cycles = [sol.period_cycles for sol, _ in sols]
    lc = math.lcm(*cycles)
    spc = SAMPLES_PER_CYCLE
    table = np.array([_band_limited(light, c, lc, spc) for (_, light), c in
                      zip(sols, cycles, strict=True)])  # (levels, lc * spc)
    fs = spc * f
    period = _common_period(fm, f, lc)
    n_lc = lc * spc

    def light_fn(k):
        t = k / fs
        pos = (fluctuation_envelope(t, fm, dv, shape) - 1.0) / (0.5 * dv)  # -1..1
        x = (pos + 1.0) / 2.0 * (levels.size - 1)
        i = np.clip(np.floor(x).astype(int), 0, levels.size - 2)
        w = np.clip(x - i, 0.0, 1.0)
        ph = k % n_lc
        return (1.0 - w) * table[i, ph] + w * table[i + 1, ph]

    mid_i = levels.size // 2  # level 0: the nominal supply

    def base_fn(k):
        return table[mid_i, k % n_lc]

    tau = _filament_tau(loads[group], supply) if thermal else None
    sev = _meter(light_fn, period, fs, OBSERVATION_S, SETTLE_S, base_fn, tau)
    means = tuple(float(np.mean(light)) for _, light in sols)
    lo, hi = means[0], means[-1]
    mid = means[len(means) // 2]
    gain = ((hi - lo) / mid) / dv if mid > 0 else float("nan")
    if tau:
        notes = [f"filament: quasi-static light low-passed by its thermal time constant "
                 f"({tau * 1e3:g} ms) before the meter"]
    else:
        notes = ["quasi-static: the lamp's own storage (capacitors, control loops) would only "
                 "smooth the response; this is an upper estimate for such lamps"]
    if lc > 1:
        notes.append(f"the lamp's steady state spans {lc} mains cycles at some voltages")
    return ImmunityResult(sev.pst, sev, dv, fm, shape, dv / ref_dv,
                          tuple(float(supply.v_rms_v * (1 + 0.5 * dv * s)) for s in levels),
                          means, float(gain), tuple(notes))


@dataclass(frozen=True)
class JitterResult:
    """Flicker from a random spread of the dimmer's firing angle.

    Attributes
    ----------
    pst_lm
        Pst_LM of the light with the jitter [-].
    pst_lm_steady
        Pst_LM of the same setting without jitter [-] (its steady state).
    jitter_deg
        Standard deviation of the conduction angle per half cycle [deg].
    conduction_deg
        Nominal conduction angle [deg] the spread is around.
    angles_deg
        Conduction angles solved [deg] (the spread is clipped to their range, +-3 sigma).
    seed
        Seed of the random firing sequence.
    """

    pst_lm: float
    pst_lm_steady: float
    severity: FlickerSeverity
    jitter_deg: float
    conduction_deg: float
    angles_deg: tuple[float, ...]
    seed: int
    notes: tuple[str, ...] = ()

    def to_dict(self) -> dict:
        return {
            "pst_lm": self.pst_lm,
            "pst_lm_steady": self.pst_lm_steady,
            "jitter_deg": self.jitter_deg,
            "conduction_deg": self.conduction_deg,
            "angles_deg": list(self.angles_deg),
            "seed": self.seed,
            "severity": self.severity.to_dict(),
            "notes": list(self.notes),
        }


def dimmer_jitter_pst_lm(supply, dimmer, loads, jitter_deg: float, group: int = 0,
                         seed: int = 0, n_angles: int = 7,
                         observation_s: float = OBSERVATION_S,
                         settle_s: float = SETTLE_S) -> JitterResult:
    """Pst_LM of a lamp behind a phase-cut dimmer whose conduction angle varies at random
    from half cycle to half cycle.

    Each half cycle draws its conduction angle from a normal distribution around the
    setting (standard deviation ``jitter_deg``, seeded: the same seed gives the same
    sequence), clipped to +-3 standard deviations and to 0..180 deg. Its light is that half
    cycle of the lamp's steady state at that angle (solved at ``n_angles`` angles across the
    spread and interpolated): the light per half cycle follows the dimming curve. This is
    quasi-static like the voltage immunity (see the module notes): storage in the lamp
    would smooth the half-cycle steps, so the result is an upper estimate for lamps with a
    bulk capacitor or a filament. A random sequence is not periodic: the light record
    covers ``settle_s + observation_s`` (the standard's 10 min by default).

    Parameters
    ----------
    jitter_deg
        Standard deviation of the conduction angle [deg], >= 0.
    dimmer
        A ``leading-edge`` or ``trailing-edge`` :class:`~pqcalc.circuits.DimmerSpec`; a
        knob setting is turned into its measured conduction angle first.
    """
    from ..circuits import DimmerSpec, LoadGroup

    loads = tuple(loads)
    if not loads or not all(isinstance(g, LoadGroup) for g in loads):
        raise InputError("loads: expected a sequence of LoadGroup")
    sd = float(jitter_deg)
    if not (np.isfinite(sd) and sd >= 0):
        raise InputError(f"jitter_deg: expected a standard deviation >= 0 [deg], got "
                         f"{jitter_deg}")
    if not isinstance(dimmer, DimmerSpec) or dimmer.kind == "none":
        raise InputError("dimmer: firing jitter needs a leading-edge or trailing-edge dimmer")
    if int(n_angles) != n_angles or n_angles < 3:
        raise InputError(f"n_angles: expected a whole number >= 3, got {n_angles}")
    f = float(supply.frequency_hz)
    sol0, light0 = _solve_light(supply, dimmer, loads, group)
    steady = pst_lm(light0, sol0.period_cycles / f)
    if dimmer.conduction_deg is not None:
        c0 = float(dimmer.conduction_deg)
    else:
        c0 = float(np.mean(sol0.conduction_deg))
    if sd == 0.0:
        return JitterResult(steady.pst, steady.pst, steady, 0.0, c0, (c0,), int(seed),
                            ("no jitter: the steady state's Pst_LM",))
    lo, hi = max(0.0, c0 - 3 * sd), min(180.0, c0 + 3 * sd)
    angles = np.linspace(lo, hi, int(n_angles))
    spc = SAMPLES_PER_CYCLE
    halves = []
    multi = False
    for a in angles:
        d = DimmerSpec(dimmer.kind, conduction_deg=float(a), switch=dimmer.switch,
                       params=dimmer.params)
        sol, light = _solve_light(supply, d, loads, group)
        multi |= sol.period_cycles > 1
        one = _band_limited(light, sol.period_cycles, sol.period_cycles, spc)[:spc]
        halves.append(one.reshape(2, spc // 2))
    table = np.array(halves)  # (angle, half, sample)
    fs = spc * f
    n_half = int(math.ceil((settle_s + observation_s) * 2 * f)) + 1
    rng = np.random.default_rng(int(seed))
    draw = np.clip(c0 + sd * rng.standard_normal(n_half), lo, hi)
    x = (draw - lo) / (hi - lo) * (angles.size - 1) if hi > lo else np.zeros(n_half)
    i = np.clip(np.floor(x).astype(int), 0, angles.size - 2)
    w = np.clip(x - i, 0.0, 1.0)[:, None]
    par = np.arange(n_half) % 2
    rec = ((1.0 - w) * table[i, par] + w * table[i + 1, par]).ravel()
    if not float(np.mean(rec)) > 0:
        raise InputError("light: the lamp is dark across the jitter; Pst_LM is undefined")
    from .flickermeter import _check_record

    _check_record(rec.size, fs, "light", observation_s, settle_s)
    sev = _pst_lm_record(rec, fs, observation_s, settle_s)
    notes = ["quasi-static per half cycle: storage in the lamp would smooth the steps; an "
             "upper estimate for lamps with a bulk capacitor or a filament"]
    if multi:
        notes.append("some angles have a steady state over several mains cycles; only the "
                     "first cycle's halves were used")
    return JitterResult(sev.pst, steady.pst, sev, sd, c0, tuple(float(a) for a in angles),
                        int(seed), tuple(notes))
