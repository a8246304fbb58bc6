"""The values that describe one case: supply, dimmer, lamp groups (frozen, hashable)."""

from __future__ import annotations

from collections.abc import Iterable, Mapping
from dataclasses import dataclass, field
from typing import Any, Literal, cast, get_args

import numpy as np

from ..errors import InputError

__all__ = ["Supply", "DimmerSpec", "LoadGroup", "DimmerKind", "DIMMER_KINDS", "SwitchKind",
           "SWITCH_KINDS", "freeze_params"]


DimmerKind = Literal["leading-edge", "trailing-edge", "none"]
DIMMER_KINDS: tuple[str, ...] = get_args(DimmerKind)
#: the leading-edge switch: a triac (latching, holding, RC/trigger-diode firing) or a
#: transistor that conducts from the firing angle to the zero crossing (an ideal cut)
SwitchKind = Literal["triac", "transistor"]
SWITCH_KINDS: tuple[str, ...] = get_args(SwitchKind)


def freeze_params(params, where_: str) -> tuple[tuple[str, float], ...]:
    """A mapping or item sequence of numeric parameters as a sorted tuple of items."""
    if params is None:
        return ()
    items = params.items() if isinstance(params, dict) else params
    out = {}
    for k, v in items:
        try:
            fv = float(v)
        except (TypeError, ValueError):
            raise InputError(f"{where_}: parameter {k}: expected a number, got {v!r}") from None
        if not np.isfinite(fv):
            raise InputError(f"{where_}: parameter {k}: expected a finite number, got {v!r}")
        out[str(k)] = fv
    return tuple(sorted(out.items()))


@dataclass(frozen=True)
class Supply:
    """The mains at the dimmer: open-circuit voltage behind a series source impedance.

    Parameters
    ----------
    v_rms_v
        Nominal line-to-neutral voltage [V rms], 100 to 277 V.
    frequency_hz
        50 or 60 Hz (45..65 accepted).
    source_r_ohm, source_l_h
        Series source resistance [ohm] and inductance [H] (line and neutral together).
    voltage_harmonics
        ``None`` (sinusoidal), a sequence of ``(order, fraction_of_fundamental, phase_deg)``
        (sine basis, on the fundamental's zero crossing), or one cycle of open-circuit
        voltage samples [V] starting at any instant (their fundamental then sets the
        amplitude; ``v_rms_v`` is only the nominal value).
    source_damping_ohm
        Resistance across the source inductance [ohm]: the losses of a real line, which
        also keep a switched inductive current defined.
    """

    v_rms_v: float = 230.0
    frequency_hz: float = 50.0
    source_r_ohm: float = 0.4
    source_l_h: float = 100e-6
    voltage_harmonics: object = None
    source_damping_ohm: float = 100.0

    def __post_init__(self) -> None:
        if not (np.isfinite(self.v_rms_v) and 100.0 <= self.v_rms_v <= 277.0):
            raise InputError(f"supply v_rms_v: expected 100 to 277 V, got {self.v_rms_v}")
        if not (np.isfinite(self.frequency_hz) and 45.0 <= self.frequency_hz <= 65.0):
            raise InputError(f"supply frequency_hz: expected 45 to 65 Hz (50 or 60), got "
                             f"{self.frequency_hz}")
        for name in ("source_r_ohm", "source_l_h"):
            v = getattr(self, name)
            if not (np.isfinite(v) and v >= 0):
                raise InputError(f"supply {name}: expected a value >= 0, got {v}")
        if not (np.isfinite(self.source_damping_ohm) and self.source_damping_ohm > 0):
            raise InputError("supply source_damping_ohm: expected a positive resistance, got "
                             f"{self.source_damping_ohm}")
        vh = self.voltage_harmonics
        if vh is None:
            return
        a = np.asarray(vh, dtype=object)
        if a.ndim == 1 and a.size >= 16 and all(np.isscalar(v) for v in a):
            arr = np.asarray(vh, dtype=float)
            if not np.all(np.isfinite(arr)):
                raise InputError("supply voltage_harmonics: the samples must be finite numbers")
            object.__setattr__(self, "voltage_harmonics", tuple(float(v) for v in arr))
            return
        terms = []
        items = cast("Iterable[Any]", vh)
        for k, t in enumerate(items):
            try:
                h, frac, ph = (float(t[0]), float(t[1]), float(t[2]))
            except (TypeError, ValueError, IndexError):
                raise InputError(
                    f"supply voltage_harmonics[{k}]: expected (order, fraction, phase_deg), "
                    f"got {t!r}") from None
            if h != int(h) or not 2 <= h <= 50:
                raise InputError(f"supply voltage_harmonics[{k}]: order must be 2..50, got {h}")
            if not (0 <= frac < 1):
                raise InputError(
                    f"supply voltage_harmonics[{k}]: fraction must be 0 <= f < 1, got {frac}")
            terms.append((int(h), frac, ph))
        object.__setattr__(self, "voltage_harmonics", tuple(terms))

    def source_terms(self) -> tuple[list[tuple[int, float, float]], float]:
        """``(order, peak_v, phase_rad)`` sine terms of the open-circuit voltage, and its DC."""
        vpk = np.sqrt(2) * self.v_rms_v
        vh: Any = self.voltage_harmonics
        if vh is None:
            return [(1, vpk, 0.0)], 0.0
        if isinstance(vh[0], float):
            x = np.asarray(vh, dtype=float)
            n = x.size
            X = np.fft.rfft(x) / n
            top = min(50, (n - 1) // 2)
            c = 2 * X[1 : top + 1]  # cos-basis complex amplitudes
            # shift the time origin to the fundamental's positive-going zero crossing
            psi1 = np.angle(c[0]) + np.pi / 2
            terms = []
            for h in range(1, top + 1):
                amp = abs(c[h - 1])
                if amp < 1e-9 * abs(c[0]):
                    continue
                ph = np.angle(c[h - 1]) + np.pi / 2 - h * psi1
                terms.append((h, float(amp), float(ph)))
            return terms, float(X[0].real)
        terms = [(1, vpk, 0.0)]
        terms += [(h, frac * vpk, np.radians(ph)) for h, frac, ph in vh]
        return terms, 0.0


@dataclass(frozen=True)
class DimmerSpec:
    """A phase-cut dimmer and its setting.

    Parameters
    ----------
    kind
        ``"leading-edge"``, ``"trailing-edge"`` or ``"none"`` (direct mains).
    conduction_deg
        Conduction angle per half cycle [deg], 0..180: the trade's usual measure of the
        setting. For a triac, the gate is then fired at ``180 - conduction_deg`` after each
        zero crossing of the line voltage (an ideal trigger).
    knob
        Knob position 0..1, mapped through the dimmer's own firing network (for a triac:
        the RC network and trigger diode; for transistor dimmers: linearly over
        ``min_conduction_deg..max_conduction_deg``). Give one of ``conduction_deg``, ``knob``.
    switch
        Leading edge only: ``"triac"`` (default) or ``"transistor"``.
    params
        Component values, see :func:`pqcalc.circuits.dimmers.dimmer_params`.
    """

    kind: str = "none"
    conduction_deg: float | None = None
    knob: float | None = None
    switch: str = "triac"
    params: tuple | Mapping[str, float] = field(default=())  # frozen to a tuple

    def __post_init__(self) -> None:
        if self.kind not in DIMMER_KINDS:
            raise InputError(f"dimmer kind: expected one of {', '.join(DIMMER_KINDS)}, got "
                             f"{self.kind!r}")
        if self.switch not in SWITCH_KINDS:
            raise InputError(f"dimmer switch: expected one of {', '.join(SWITCH_KINDS)}, got "
                             f"{self.switch!r}")
        object.__setattr__(self, "params", freeze_params(self.params, "dimmer"))
        if self.kind == "none":
            return
        if self.conduction_deg is not None and self.knob is not None:
            raise InputError("dimmer: give conduction_deg or knob, not both")
        if self.conduction_deg is None and self.knob is None:
            raise InputError(f"dimmer {self.kind}: give a setting, conduction_deg (0..180) "
                             "or knob (0..1)")
        if self.conduction_deg is not None:
            c = float(self.conduction_deg)
            if not (np.isfinite(c) and 0.0 <= c <= 180.0):
                raise InputError(f"dimmer conduction_deg: expected 0 to 180 deg, got {c}")
            object.__setattr__(self, "conduction_deg", c)
        if self.knob is not None:
            k = float(self.knob)
            if not (np.isfinite(k) and 0.0 <= k <= 1.0):
                raise InputError(f"dimmer knob: expected 0 to 1, got {k}")
            object.__setattr__(self, "knob", k)

    def param_dict(self) -> dict:
        return dict(self.params)

    @property
    def uses_triac(self) -> bool:
        return self.kind == "leading-edge" and self.switch == "triac"


@dataclass(frozen=True)
class LoadGroup:
    """``count`` identical lamps of one model in parallel behind the dimmer.

    Parameters
    ----------
    model
        One of :data:`pqcalc.circuits.MODELS`.
    power_w
        Rated input power of one lamp at nominal voltage, undimmed [W].
    count
        Number of lamps [-]; they share the node voltages, so the group costs one lamp.
    params
        Component overrides by name (see ``model_params(model, ...)``).
    """

    model: str
    power_w: float
    count: int = 1
    params: tuple | Mapping[str, float] = field(default=())  # frozen to a tuple

    def __post_init__(self) -> None:
        from .drivers import MODELS

        if self.model not in MODELS:
            raise InputError(f"model: unknown {self.model!r}; expected one of "
                             f"{', '.join(MODELS)}")
        p = float(self.power_w)
        if not np.isfinite(p) or p <= 0:
            raise InputError(f"{self.model} power_w: expected a positive power, got {p}")
        object.__setattr__(self, "power_w", p)
        if int(self.count) != self.count or self.count < 1:
            raise InputError(f"{self.model} count: expected a whole number >= 1, got "
                             f"{self.count}")
        object.__setattr__(self, "count", int(self.count))
        object.__setattr__(self, "params", freeze_params(self.params, self.model))

    def param_dict(self) -> dict:
        return dict(self.params)
