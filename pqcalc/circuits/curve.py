"""Dimming curve: light, input power, current, THD, power factor and flicker against the
dimmer setting, with the flags a retrofit cares about (pop-on, drop-out, dead travel,
non-monotonic light).

Every setting is one periodic steady-state solve (:func:`~pqcalc.circuits.solve_circuit`);
the curve adds no physics of its own. The settings are independent steady states, so a lamp
whose state depends on the direction the knob moved (hysteresis) shows the same edge when
raising and when lowering; both flags are then reported.

Figures that guide dimmer choices support, and never replace, the dimmer and lamp makers'
compatibility data, the local electrical code and a licensed professional's judgement.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Literal, get_args

import numpy as np

from ..analysis import analyze
from ..errors import ConvergenceError, InputError
from ..light.metrics import light_metrics
from .dimmers import dimmer_params as _dimmer_rows
from .solve import solve_circuit
from .spec import DimmerSpec, LoadGroup, Supply

__all__ = ["DimmingCurve", "dimming_curve", "CurveFlag", "CURVE_FLAGS", "SettingAxis",
           "SETTING_AXES", "conduction_range_deg", "curve_flags", "DARK_LIGHT",
           "POP_ON_LIGHT", "POP_ON_LIGHT_PER_RANGE", "JUMP_LIGHT_PER_RANGE",
           "JUMP_LIGHT_MIN", "DROP_OUT_RATIO", "NUMERIC_DARK", "DEAD_TRAVEL_PERCEIVED",
           "DEAD_TRAVEL_MIN_FRACTION", "NON_MONOTONIC_LIGHT", "NO_SOLUTION"]

CurveFlag = Literal["pop-on", "drop-out", "dead-travel", "non-monotonic"]
CURVE_FLAGS: tuple[str, ...] = get_args(CurveFlag)
#: what the settings are: conduction angle per half cycle [deg] or knob position [-]
SettingAxis = Literal["conduction", "knob"]
SETTING_AXES: tuple[str, ...] = get_args(SettingAxis)
#: per-setting flag of a setting whose solve did not converge (its figures are NaN)
NO_SOLUTION = "no-solution"

# ---------------------------------------------------------------- flag thresholds
# All relative to the lamp's rated full output (light 1.0). Common practice: the values are
# engineering judgement for a 21-setting curve, not taken from a standard.

#: light below 1 % of full output counts as "off" for pop-on and drop-out
DARK_LIGHT = 0.01
#: pop-on: one step up from a dark setting gives at least 10 % of full output (the lamp cannot
#: be brought up gently from off); for coarser curves at least 10 % per 1/20 of the range
POP_ON_LIGHT = 0.10
POP_ON_LIGHT_PER_RANGE = 0.10 * 20
#: a jump between neighbouring settings: more than this fraction of full output per 1/20 of
#: the setting range. A filament lamp, the smoothest load, changes by at most about 10 % of
#: its output per step of 7.5 deg (1/20 of 20..170 deg; computed from the closed-form power of
#: an ideal cut and L ~ P^2.1), so 15 % per twentieth of the range is a jump. With coarser
#: steps the threshold grows in proportion (never below 15 %).
JUMP_LIGHT_PER_RANGE = 0.15 * 20
JUMP_LIGHT_MIN = 0.15
#: drop-out: lowering the setting by one step leaves less than a quarter of the light (and the
#: loss is a jump), or the converter stops (the solver's ``drop-out`` flag) while the step
#: above runs
DROP_OUT_RATIO = 0.25
#: mean light below this (relative to full output) is numerically dark: the solver's
#: off-state leakage, not light; its flicker figures are NaN and its region ``dark``
NUMERIC_DARK = 1e-6
#: dead travel: settings spanning at least 15 % of the range over which the perceived
#: brightness, taken as sqrt(light) (the square-law of perceived against measured light;
#: common practice, from memory), varies by less than 0.01
DEAD_TRAVEL_PERCEIVED = 0.01
DEAD_TRAVEL_MIN_FRACTION = 0.15
#: non-monotonic: raising the setting lowers the light by more than 2 % of full output below
#: the highest light of the settings beneath it
NON_MONOTONIC_LIGHT = 0.02

#: conduction range of a triac dimmer set by angle [deg]: the default trim of the transistor
#: dimmers (``min_conduction_deg`` .. ``max_conduction_deg``); common practice
TRIAC_CONDUCTION_RANGE_DEG = (20.0, 170.0)


@dataclass(frozen=True)
class DimmingCurve:
    """Figures of one dimmer and its lamps over evenly spaced settings (lowest first).

    Per-setting arrays have shape ``(n_settings,)``; per-group arrays ``(n_groups,
    n_settings)`` (the setting axis last). NaN marks a figure that does not exist at that
    setting, and only there: THD and power factor without fundamental current, flicker
    figures of a dark lamp, everything at a setting flagged ``no-solution``. The JSON form
    (:meth:`to_dict`) turns each NaN into ``null``.

    Attributes
    ----------
    dimmer_kind, switch
        The dimmer (see :class:`~pqcalc.circuits.DimmerSpec`).
    axis
        ``"conduction"`` (settings in degrees) or ``"knob"`` (settings 0..1).
    settings
        The set values: conduction angle per half cycle [deg] or knob position [-].
    conduction_deg
        Conduction per half cycle measured in the solution, mean over the period [deg].
    light
        Mean relative light of one lamp of each group, 1.0 = rated full output [-].
    p_w, i_rms_a
        Total input power [W] and rms current [A] at the dimmer's line terminal.
    thd_i
        Current THD over orders 2..40, as a fraction of the fundamental [-].
    pf
        True power factor at the dimmer's line terminal [-].
    percent_flicker, flicker_index, modulation_frequency_hz
        Flicker figures of one lamp of each group (:func:`pqcalc.flicker.flicker`).
    ieee1789
        IEEE Std 1789-2015 region per group and setting.
    flags
        Solver flags per setting (:data:`pqcalc.circuits.FLAGS`, or ``no-solution``).
    period_cycles
        Period of each steady state in mains cycles (> 1: sub-harmonic).
    curve_flags
        The curve's own flags (:data:`CURVE_FLAGS`), over all groups.
    notes
        Where each curve flag arose, one sentence each.
    svm, pst_lm
        Stroboscopic visibility measure (IEC TR 63158) and short-term light flicker severity
        (IEC TR 61547-1) of one lamp of each group [-] (:func:`pqcalc.light.light_metrics`);
        NaN where dark or unsolved. None on a curve built without them.
    dpf
        Displacement factor cos(phi1) at the dimmer's line terminal [-]; NaN without
        fundamental current. None on a curve built without it.
    """

    dimmer_kind: str
    switch: str
    axis: str
    settings: np.ndarray
    conduction_deg: np.ndarray
    light: np.ndarray
    p_w: np.ndarray
    i_rms_a: np.ndarray
    thd_i: np.ndarray
    pf: np.ndarray
    percent_flicker: np.ndarray
    flicker_index: np.ndarray
    modulation_frequency_hz: np.ndarray
    ieee1789: tuple[tuple[str, ...], ...]
    flags: tuple[tuple[str, ...], ...]
    period_cycles: np.ndarray
    curve_flags: tuple[str, ...]
    notes: tuple[str, ...]
    groups: tuple[LoadGroup, ...] = ()
    svm: np.ndarray | None = None
    pst_lm: np.ndarray | None = None
    dpf: np.ndarray | None = None

    def _light_metric(self, name: str) -> np.ndarray:
        v = getattr(self, name)
        return np.full(self.light.shape, np.nan) if v is None else v

    @property
    def n_settings(self) -> int:
        return int(self.settings.size)

    def rows(self) -> list[dict]:
        """One dict per setting (SI and fractions; per-group values of group 0 and lists)."""
        out = []
        for k in range(self.n_settings):
            out.append({
                "setting": _num(self.settings[k]),
                "conduction_deg": _num(self.conduction_deg[k]),
                "light": [_num(v) for v in self.light[:, k]],
                "p_w": _num(self.p_w[k]),
                "i_rms_a": _num(self.i_rms_a[k]),
                "thd_i": _num(self.thd_i[k]),
                "pf": _num(self.pf[k]),
                "percent_flicker": [_num(v) for v in self.percent_flicker[:, k]],
                "flicker_index": [_num(v) for v in self.flicker_index[:, k]],
                "modulation_frequency_hz": [_num(v) for v in
                                            self.modulation_frequency_hz[:, k]],
                "ieee1789": [r[k] for r in self.ieee1789],
                "flags": list(self.flags[k]),
                "period_cycles": int(self.period_cycles[k]),
                "svm": [_num(v) for v in self._light_metric("svm")[:, k]],
                "pst_lm": [_num(v) for v in self._light_metric("pst_lm")[:, k]],
                "dpf": None if self.dpf is None else _num(self.dpf[k]),
            })
        return out

    def to_dataset(self):
        """The curve as an :class:`xarray.Dataset` with dimensions ``setting`` and ``group``
        (SI and fractions, ``units`` attributes; NaN where a figure does not exist)."""
        import xarray as xr

        su = "deg" if self.axis == "conduction" else "1"
        per = {"conduction_deg": (self.conduction_deg, "deg"), "p_w": (self.p_w, "W"),
               "i_rms_a": (self.i_rms_a, "A"), "thd_i": (self.thd_i, "1"),
               "pf": (self.pf, "1"), "period_cycles": (self.period_cycles, "1")}
        if self.dpf is not None:
            per["dpf"] = (self.dpf, "1")
        grp = {"light": (self.light, "1"), "percent_flicker": (self.percent_flicker, "1"),
               "flicker_index": (self.flicker_index, "1"),
               "modulation_frequency_hz": (self.modulation_frequency_hz, "Hz")}
        if self.svm is not None and self.pst_lm is not None:
            grp["svm"] = (self.svm, "1")
            grp["pst_lm"] = (self.pst_lm, "1")
        data: dict[str, tuple] = {k: ("setting", v, {"units": u}) for k, (v, u) in per.items()}
        data.update({k: (("group", "setting"), v, {"units": u}) for k, (v, u) in grp.items()})
        data["ieee1789"] = (("group", "setting"), np.array(self.ieee1789, dtype=str))
        data["flags"] = ("setting", np.array([",".join(f) for f in self.flags], dtype=str))
        coords = {"setting": ("setting", self.settings, {"units": su, "axis": self.axis}),
                  "group": ("group", [f"{g.model} {g.power_w:g} W x {g.count}"
                                      for g in self.groups] or
                            [str(k) for k in range(self.light.shape[0])])}
        attrs = {"dimmer": self.dimmer_kind, "switch": self.switch,
                 "curve_flags": ",".join(self.curve_flags), "notes": "\n".join(self.notes),
                 "thd_max_order": 40}
        return xr.Dataset(data, coords, attrs)

    def to_dict(self) -> dict:
        """JSON form: percentages where the key says ``_pct``, NaN as ``None``."""

        def pct(x):
            return None if x is None else 100.0 * x

        rows = []
        for r in self.rows():
            rows.append({
                "setting": r["setting"],
                "conduction_deg": r["conduction_deg"],
                "light_pct": [pct(v) for v in r["light"]],
                "p_w": r["p_w"],
                "i_rms_a": r["i_rms_a"],
                "thd_i_pct": pct(r["thd_i"]),
                "thd_i_max_order": 40,
                "pf": r["pf"],
                "percent_flicker_pct": [pct(v) for v in r["percent_flicker"]],
                "flicker_index": r["flicker_index"],
                "modulation_frequency_hz": r["modulation_frequency_hz"],
                "ieee1789_region": r["ieee1789"],
                "flags": r["flags"],
                "period_cycles": r["period_cycles"],
                "svm": r["svm"],
                "pst_lm": r["pst_lm"],
                "dpf": r["dpf"],
            })
        return {
            "dimmer": self.dimmer_kind,
            "switch": self.switch if self.dimmer_kind == "leading-edge" else None,
            "axis": self.axis,
            "groups": [{"model": g.model, "power_w": g.power_w, "count": g.count}
                       for g in self.groups],
            "curve_flags": list(self.curve_flags),
            "notes": list(self.notes),
            "settings": rows,
        }


def _num(x) -> float | None:
    x = float(x)
    return x if np.isfinite(x) else None


def conduction_range_deg(dimmer_kind: str, switch: str = "triac", supply: Supply | None = None,
                         dimmer_params_: dict | None = None) -> tuple[float, float]:
    """The conduction range [deg] a dimmer covers: its ``min_conduction_deg`` ..
    ``max_conduction_deg`` (transistor dimmers, defaults completed by ``dimmer_params_``), or
    :data:`TRIAC_CONDUCTION_RANGE_DEG` for a triac set by angle."""
    if dimmer_kind == "none":
        raise InputError("dimmer kind: a dimming curve needs a dimmer (leading-edge or "
                         "trailing-edge), got 'none'")
    if dimmer_kind == "leading-edge" and switch == "triac":
        return TRIAC_CONDUCTION_RANGE_DEG
    rows = _dimmer_rows(dimmer_kind, switch, supply or Supply())
    d = {r["name"]: r["default"] for r in rows}
    d.update(dimmer_params_ or {})
    return float(d["min_conduction_deg"]), float(d["max_conduction_deg"])


def _jump(n_settings: int) -> float:
    return max(JUMP_LIGHT_MIN, JUMP_LIGHT_PER_RANGE / max(n_settings - 1, 1))


def _pop(n_settings: int) -> float:
    return max(POP_ON_LIGHT, POP_ON_LIGHT_PER_RANGE / max(n_settings - 1, 1))


def curve_flags(settings, light, solver_flags=None, unit: str = "deg") -> tuple[tuple[str, ...],
                                                                                  tuple[str, ...]]:
    """Curve flags of one lamp's mean light over ascending, evenly spaced settings.

    Parameters
    ----------
    settings
        Ascending setting values (for the notes) [deg or -].
    light
        Mean relative light per setting, 1.0 = full output [-]; NaN where unsolved (skipped).
    solver_flags
        Optional per-setting solver flags (a setting with ``drop-out`` while the one above
        runs is a drop-out).
    unit
        Unit of the settings in the notes.

    Returns
    -------
    (flags, notes)
        The flags raised (in :data:`CURVE_FLAGS` order) and one note per occurrence.
    """
    s = np.asarray(settings, dtype=float)
    L = np.asarray(light, dtype=float)
    if s.shape != L.shape or s.ndim != 1:
        raise InputError("curve: settings and light must be 1-D arrays of the same length")
    ok = np.isfinite(L)
    idx = np.flatnonzero(ok)
    s_ok, L_ok = s[idx], L[idx]
    n = int(s.size)
    jump, pop = _jump(n), _pop(n)
    found: dict[str, list[str]] = {k: [] for k in CURVE_FLAGS}

    def at(x):
        return f"{x:.4g} {unit}" if unit else f"{x:.4g}"

    # pop-on and drop-out: neighbouring solved settings
    for a in range(len(idx) - 1):
        b = a + 1
        lo, hi = L_ok[a], L_ok[b]
        if lo < DARK_LIGHT and hi >= pop:
            found["pop-on"].append(f"raising from {at(s_ok[a])} to {at(s_ok[b])}, the light "
                                   f"jumps from {100 * lo:.2g} % to {100 * hi:.3g} %")
        if hi - lo > jump and lo < DROP_OUT_RATIO * hi:
            found["drop-out"].append(f"lowering from {at(s_ok[b])} to {at(s_ok[a])}, the "
                                     f"light collapses from {100 * hi:.3g} % to "
                                     f"{100 * lo:.2g} %")
    if solver_flags is not None:
        fl = list(solver_flags)
        for k in range(n - 1):
            if "drop-out" in fl[k] and "drop-out" not in fl[k + 1] and ok[k] and ok[k + 1] \
                    and not found["drop-out"]:
                found["drop-out"].append(f"the converter stops at {at(s[k])} (it runs at "
                                         f"{at(s[k + 1])})")
    # dead travel: the longest stretches of near-constant perceived brightness
    perceived = np.sqrt(np.maximum(L_ok, 0.0))
    span = s[-1] - s[0] if n > 1 else 0.0
    k = 0
    while k < len(idx) and span > 0:
        j = k
        lo = hi = perceived[k]
        while j + 1 < len(idx):
            lo2, hi2 = min(lo, perceived[j + 1]), max(hi, perceived[j + 1])
            if hi2 - lo2 >= DEAD_TRAVEL_PERCEIVED:
                break
            lo, hi, j = lo2, hi2, j + 1
        if (s_ok[j] - s_ok[k]) >= DEAD_TRAVEL_MIN_FRACTION * span - 1e-12 and j > k:
            where = "dark" if hi ** 2 < DARK_LIGHT else f"near {100 * L_ok[k]:.3g} %"
            found["dead-travel"].append(f"from {at(s_ok[k])} to {at(s_ok[j])} the light "
                                        f"stays {where}")
            k = j + 1
        else:
            k += 1
    # non-monotonic
    run_max = -np.inf
    arg = None
    for k in range(len(idx)):
        if L_ok[k] < run_max - NON_MONOTONIC_LIGHT:
            found["non-monotonic"].append(f"at {at(s_ok[k])} the light ({100 * L_ok[k]:.3g} %) "
                                          f"is below that at {at(s_ok[arg])} "
                                          f"({100 * run_max:.3g} %)")
            break
        if L_ok[k] > run_max:
            run_max, arg = L_ok[k], k
    flags = tuple(f for f in CURVE_FLAGS if found[f])
    notes = tuple(f"{f}: {t}" for f in CURVE_FLAGS for t in found[f])
    return flags, notes


def dimming_curve(supply: Supply, dimmer_kind: str, load_groups, steps: int = 21,
                  switch: str = "triac", dimmer_params: dict | None = None,
                  axis: str = "conduction", conduction_range: tuple[float, float] | None = None,
                  samples_per_cycle: int = 4096) -> DimmingCurve:
    """Solve a dimmer and its lamps at ``steps`` evenly spaced settings.

    Parameters
    ----------
    supply
        :class:`~pqcalc.circuits.Supply`.
    dimmer_kind
        ``"leading-edge"`` or ``"trailing-edge"``.
    load_groups
        Sequence of :class:`~pqcalc.circuits.LoadGroup` behind the dimmer.
    steps
        Number of settings (>= 3; 21 or more for meaningful curve flags).
    switch
        Leading edge: ``"triac"`` or ``"transistor"``.
    dimmer_params
        Dimmer component values by name (see :func:`pqcalc.circuits.dimmer_params`).
    axis
        ``"conduction"``: conduction angles evenly spaced over the dimmer's range
        (:func:`conduction_range_deg`, or ``conduction_range``); ``"knob"``: knob positions
        0..1 through the dimmer's own firing network.
    conduction_range
        ``(lowest, highest)`` conduction angle [deg] instead of the dimmer's range.
    samples_per_cycle
        Samples per mains cycle of each solve.

    Raises
    ------
    InputError
        A bad argument (named in the message).
    ConvergenceError
        No setting could be solved (single failures are flagged ``no-solution``).
    """
    groups = tuple(load_groups)
    if not groups:
        raise InputError("load_groups: expected at least one LoadGroup")
    for g in groups:
        if not isinstance(g, LoadGroup):
            raise InputError(f"load_groups: expected LoadGroup items, got {type(g).__name__}")
    if isinstance(steps, bool) or int(steps) != steps or not 3 <= int(steps) <= 1001:
        raise InputError(f"steps: expected a whole number 3 to 1001, got {steps!r}")
    steps = int(steps)
    if axis not in SETTING_AXES:
        raise InputError(f"axis: expected one of {', '.join(SETTING_AXES)}, got {axis!r}")
    dp = dict(dimmer_params or {})
    # validates kind and switch (and the names of the dimmer's parameters, at the first solve)
    DimmerSpec(dimmer_kind, conduction_deg=180.0, switch=switch, params=dp)
    if axis == "knob":
        if conduction_range is not None:
            raise InputError("conduction_range: only with axis='conduction'")
        if dimmer_kind == "none":
            raise InputError("dimmer kind: a dimming curve needs a dimmer (leading-edge or "
                             "trailing-edge), got 'none'")
        settings = np.linspace(0.0, 1.0, steps)
        specs = [DimmerSpec(dimmer_kind, knob=float(x), switch=switch, params=dp)
                 for x in settings]
        unit = ""
    else:
        if conduction_range is None:
            lo, hi = conduction_range_deg(dimmer_kind, switch, supply, dp)
        else:
            try:
                lo, hi = (float(conduction_range[0]), float(conduction_range[1]))
            except (TypeError, ValueError, IndexError):
                raise InputError("conduction_range: expected (lowest, highest) in deg") from None
            if not (0.0 <= lo < hi <= 180.0):
                raise InputError(f"conduction_range: expected 0 <= lowest < highest <= 180 "
                                 f"deg, got ({lo:g}, {hi:g})")
        settings = np.linspace(lo, hi, steps)
        specs = [DimmerSpec(dimmer_kind, conduction_deg=float(x), switch=switch, params=dp)
                 for x in settings]
        unit = "deg"

    G, n = len(groups), steps
    nan = np.full(n, np.nan)
    cond, p_w, i_rms, thd_i, pf = (nan.copy() for _ in range(5))
    light, pfl, fidx, fmod, svm_, pst_ = (np.full((G, n), np.nan) for _ in range(6))
    dpf = nan.copy()
    regions = [[""] * n for _ in range(G)]
    flags: list[tuple[str, ...]] = []
    period = np.zeros(n, dtype=int)
    failures = []
    for k, spec in enumerate(specs):
        try:
            sol = solve_circuit(supply, spec, groups, samples_per_cycle)
        except ConvergenceError as e:
            failures.append(f"{settings[k]:.4g}: {e}")
            flags.append((NO_SOLUTION,))
            for g in range(G):
                regions[g][k] = "unsolved"
            continue
        w = sol.waveform
        cond[k] = float(np.mean(sol.conduction_deg)) if len(sol.conduction_deg) else np.nan
        p_w[k] = sol.p_w  # exact figures of the solution (pqcalc.circuits.exact)
        i_rms[k] = sol.i_rms_a
        try:
            s = analyze(w, 40).summary
            thd_i[k] = s.thd_i
            pf[k] = np.nan if s.pf is None else s.pf
            dpf[k] = np.nan if s.dpf is None else s.dpf
        except InputError:  # no fundamental current (the lamps are off): no THD, no PF
            pass
        period_s = sol.period_cycles / supply.frequency_hz
        for g, gr in enumerate(sol.groups):
            light[g, k] = float(np.mean(gr.light))
            lm = light_metrics(gr.light, period_s, dark_below=NUMERIC_DARK)
            fl = lm.flicker_detail
            svm_[g, k] = np.nan if lm.svm is None else lm.svm
            pst_[g, k] = np.nan if lm.pst_lm is None else lm.pst_lm
            pfl[g, k] = np.nan if fl.percent_flicker is None else fl.percent_flicker
            fidx[g, k] = np.nan if fl.flicker_index is None else fl.flicker_index
            fmod[g, k] = np.nan if fl.modulation_frequency_hz is None else \
                fl.modulation_frequency_hz
            regions[g][k] = fl.ieee1789
        flags.append(tuple(sol.flags))
        period[k] = sol.period_cycles
    if len(failures) == n:
        raise ConvergenceError("dimming curve: no setting converged; " + "; ".join(failures[:3]))
    all_flags: list[str] = []
    notes: list[str] = []
    for g in range(G):
        cf, nt = curve_flags(settings, light[g], flags, unit)
        all_flags += cf
        prefix = f"group {g} ({groups[g].model}): " if G > 1 else ""
        notes += [prefix + t for t in nt]
    notes += [f"{NO_SOLUTION} at {f}" for f in failures]
    return DimmingCurve(
        dimmer_kind=dimmer_kind, switch=switch, axis=axis, settings=settings,
        conduction_deg=cond, light=light, p_w=p_w, i_rms_a=i_rms, thd_i=thd_i, pf=pf,
        percent_flicker=pfl, flicker_index=fidx, modulation_frequency_hz=fmod,
        ieee1789=tuple(tuple(r) for r in regions), flags=tuple(flags), period_cycles=period,
        curve_flags=tuple(f for f in CURVE_FLAGS if f in all_flags), notes=tuple(notes),
        groups=groups, svm=svm_, pst_lm=pst_, dpf=dpf)
