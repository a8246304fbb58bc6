"""Sweeps: the outer product of named axes, one evaluation per distinct case, as xarray.

A sweep varies the dimmer **setting** (conduction angle [deg] or knob position [-]), the
**fixture** type (a driver model at a rated power), the supply **voltage** [V rms] and a
Monte Carlo **draw** of component tolerances, and returns an :class:`xarray.Dataset` whose
variables carry those named dimensions (and ``order`` for the harmonic magnitudes) and a
``units`` attribute each. Cases that are the same circuit (every setting of an undimmed
lamp, say) are evaluated once.

The evaluator that turns one :class:`Case` into a :class:`CaseOutcome` is a parameter:
:func:`circuit_case` (the default) solves the circuit model of :mod:`pqcalc.circuits` to
periodic steady state; :func:`ideal_resistive_case` gives the closed-form Fourier series of
a resistive load behind an ideal phase cut (a check value and a fast reference).

Execution is in-process by default. With ``scheduler="tcp://host:port"`` the cases go to a
running dask.distributed cluster; ``local_cluster=N`` starts ``N`` single-threaded worker
processes on this machine. The distinct cases are batched into chunks (a few per worker),
not one task per case. Every case is a pure function of its inputs (a draw's random numbers
come from the seed, the draw index and the fixture name), so a distributed sweep gives the
same numbers as the in-process one, whatever the order the workers finish in.

Portfolio mode (:func:`portfolio`) assesses many installation files in one run and returns
one row per building.

Figures that guide conductor, breaker, dimmer or transformer choices support, and never
replace, the local electrical code and a licensed professional.
"""

from __future__ import annotations

import math
import os
import zlib
from collections.abc import Callable, Sequence
from contextlib import contextmanager
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Any, Literal, get_args

import numpy as np
import xarray as xr

from .errors import InputError
from .standards.results import CAUTION  # the one caution text, re-exported

__all__ = [
    "SettingKind",
    "SETTING_KINDS",
    "Fixture",
    "SweepSpec",
    "Case",
    "CaseOutcome",
    "MAX_ORDER",
    "NO_CURRENT",
    "circuit_case",
    "ideal_resistive_case",
    "cases",
    "sweep",
    "portfolio",
    "parse_range",
    "write_netcdf",
    "CAUTION",
]

#: How the setting axis is read: conduction angle per half cycle [deg] or knob 0..1 [-].
SettingKind = Literal["conduction", "knob"]
SETTING_KINDS: tuple[str, ...] = get_args(SettingKind)

#: Highest harmonic order stored per case [-]; THD is summed over 2..40.
MAX_ORDER = 50
THD_MAX_ORDER = 40


#: component units a Monte Carlo draw perturbs (passive parts: capacitors and resistors)
_TOLERANCED_UNITS = ("F", "ohm")


# ----------------------------------------------------------------------------- values
@dataclass(frozen=True)
class Fixture:
    """One entry of the fixture axis: a driver model at a rated input power.

    Parameters
    ----------
    name
        Label on the ``fixture`` axis (unique within a sweep).
    model
        One of :data:`pqcalc.circuits.drivers.MODELS`.
    power_w
        Rated input power of one lamp at the rated voltage [W].
    params
        Component overrides by name (units in the names), as items or a mapping.
    """

    name: str
    model: str
    power_w: float
    params: tuple = field(default=())

    def __post_init__(self) -> None:
        if not self.name:
            raise InputError("fixture name: expected a non-empty label")
        p = float(self.power_w)
        if not (math.isfinite(p) and p > 0):
            raise InputError(f"fixture {self.name} power_w: expected a positive power [W], "
                             f"got {self.power_w}")
        object.__setattr__(self, "power_w", p)
        items = self.params.items() if isinstance(self.params, dict) else self.params
        out = {}
        for k, v in items:
            try:
                fv = float(v)
            except (TypeError, ValueError):
                raise InputError(f"fixture {self.name} parameter {k}: expected a number, got "
                                 f"{v!r}") from None
            if not math.isfinite(fv):
                raise InputError(f"fixture {self.name} parameter {k}: expected a finite "
                                 f"number, got {v!r}")
            out[str(k)] = fv
        object.__setattr__(self, "params", tuple(sorted(out.items())))


@dataclass(frozen=True)
class SweepSpec:
    """The axes of a sweep and what stays fixed along them.

    Parameters
    ----------
    fixtures
        The fixture axis.
    settings
        The setting axis: conduction angles [deg] (0..180) or knob positions [-] (0..1).
    setting_kind
        ``"conduction"`` or ``"knob"`` (see :data:`SETTING_KINDS`).
    voltages_v
        The supply voltage axis, line to neutral [V rms].
    dimmer, switch, dimmer_params
        Dimmer kind (``leading-edge``, ``trailing-edge``, ``none``), leading-edge switch
        (``triac`` or ``transistor``) and component overrides.
    frequency_hz
        Mains frequency [Hz].
    rated_v_v
        The voltage the lamps are built for [V rms]: their component values are fixed there,
        so the voltage axis shows the same lamps on a higher or lower supply.
    lamps
        Identical lamps behind the one dimmer [-].
    source_r_ohm, source_l_h
        Series resistance [ohm] and inductance [H] of the supply and branch wiring.
    draws, tolerance, seed
        Monte Carlo: ``draws`` random draws besides the nominal draw 0; each capacitor and
        resistor of the driver model is scaled by a factor uniform in
        ``[1 - tolerance, 1 + tolerance]`` [-]. The numbers of draw ``d`` of fixture ``name``
        come from ``numpy.random.default_rng([seed, d, crc32(name)])``.
    """

    fixtures: tuple[Fixture, ...]
    settings: tuple[float, ...] = (180.0,)
    setting_kind: str = "conduction"
    voltages_v: tuple[float, ...] = (230.0,)
    dimmer: str = "leading-edge"
    switch: str = "triac"
    dimmer_params: tuple = field(default=())
    frequency_hz: float = 50.0
    rated_v_v: float = 230.0
    lamps: int = 1
    source_r_ohm: float = 0.4
    source_l_h: float = 100e-6
    draws: int = 0
    tolerance: float = 0.1
    seed: int = 0

    def __post_init__(self) -> None:
        from .circuits.spec import DIMMER_KINDS, SWITCH_KINDS

        object.__setattr__(self, "fixtures", tuple(self.fixtures))
        object.__setattr__(self, "settings", tuple(float(s) for s in self.settings))
        object.__setattr__(self, "voltages_v", tuple(float(v) for v in self.voltages_v))
        if not self.fixtures:
            raise InputError("sweep fixtures: expected at least one fixture type")
        names = [f.name for f in self.fixtures]
        dup = sorted({n for n in names if names.count(n) > 1})
        if dup:
            raise InputError(f"sweep fixtures: each name must be unique; repeated: "
                             f"{', '.join(dup)}")
        if not self.settings:
            raise InputError("sweep settings: the range is empty; give at least one setting")
        if not self.voltages_v:
            raise InputError("sweep voltages: the list is empty; give at least one voltage")
        if self.setting_kind not in SETTING_KINDS:
            raise InputError(f"sweep setting_kind: expected one of {', '.join(SETTING_KINDS)}, "
                             f"got {self.setting_kind!r}")
        lo, hi, unit = (0.0, 180.0, "deg") if self.setting_kind == "conduction" else (0.0, 1.0,
                                                                                       "-")
        for s in self.settings:
            if not (math.isfinite(s) and lo <= s <= hi):
                raise InputError(f"sweep settings: {s:g} is outside {lo:g}..{hi:g} [{unit}] "
                                 f"for a {self.setting_kind} setting")
        if len(set(self.settings)) != len(self.settings):
            raise InputError("sweep settings: each setting must appear once")
        if len(set(self.voltages_v)) != len(self.voltages_v):
            raise InputError("sweep voltages: each voltage must appear once")
        for v in self.voltages_v + (self.rated_v_v,):
            if not (math.isfinite(v) and 100.0 <= v <= 277.0):
                raise InputError(f"sweep voltages: expected 100 to 277 V line to neutral, got "
                                 f"{v:g}")
        if self.dimmer not in DIMMER_KINDS:
            raise InputError(f"sweep dimmer: expected one of {', '.join(DIMMER_KINDS)}, got "
                             f"{self.dimmer!r}")
        if self.switch not in SWITCH_KINDS:
            raise InputError(f"sweep switch: expected one of {', '.join(SWITCH_KINDS)}, got "
                             f"{self.switch!r}")
        if int(self.draws) != self.draws or self.draws < 0:
            raise InputError(f"sweep draws: expected a whole number >= 0, got {self.draws}")
        object.__setattr__(self, "draws", int(self.draws))
        if not (math.isfinite(self.tolerance) and 0.0 <= self.tolerance < 1.0):
            raise InputError(f"sweep tolerance: expected a fraction 0 <= t < 1, got "
                             f"{self.tolerance}")
        if int(self.lamps) != self.lamps or self.lamps < 1:
            raise InputError(f"sweep lamps: expected a whole number >= 1, got {self.lamps}")
        object.__setattr__(self, "lamps", int(self.lamps))
        items = (self.dimmer_params.items() if isinstance(self.dimmer_params, dict)
                 else self.dimmer_params)
        object.__setattr__(self, "dimmer_params", tuple(sorted((str(k), float(v))
                                                               for k, v in items)))

    @property
    def shape(self) -> tuple[int, int, int, int]:
        """Lengths of the ``setting, fixture, voltage, draw`` axes [-]."""
        return (len(self.settings), len(self.fixtures), len(self.voltages_v), self.draws + 1)


@dataclass(frozen=True)
class Case:
    """One circuit to evaluate: everything an evaluator needs, hashable.

    ``setting`` is ``None`` when the dimmer is ``none`` (the setting does not matter).
    ``params`` holds every component value of the driver model (fixed at the rated
    voltage, a draw's tolerances applied).
    """

    model: str
    power_w: float
    params: tuple
    setting: float | None
    setting_kind: str
    v_rms_v: float
    frequency_hz: float
    dimmer: str
    switch: str
    dimmer_params: tuple
    lamps: int
    source_r_ohm: float
    source_l_h: float


@dataclass(frozen=True)
class CaseOutcome:
    """What one case gives; ratios as fractions, magnitudes per order 0..MAX_ORDER.

    ``light_rel`` is the mean light output relative to the undimmed lamp [-], ``None`` when
    the evaluator gives none; ``svm`` and ``pst_lm`` are one lamp's stroboscopic visibility
    measure (IEC TR 63158) and light flicker severity (IEC TR 61547-1) [-], ``None`` when the
    evaluator gives no light waveform or the lamp is dark. ``current_h_a`` holds the RMS
    phasors of the current, sine basis, on the supply voltage's positive-going zero crossing
    [A].
    """

    i_rms_a: float
    i1_rms_a: float
    thd_i: float
    pf: float
    dpf: float
    p_w: float
    crest_factor: float
    current_h_a: np.ndarray
    light_rel: float | None = None
    flags: tuple[str, ...] = ()
    svm: float | None = None
    pst_lm: float | None = None


# ------------------------------------------------------------------------ evaluators
def _resolved_params(fx: Fixture, spec: SweepSpec) -> dict:
    """Every component value of a fixture's model at the rated voltage (overrides kept)."""
    from .circuits.drivers import MODELS, resolve_params

    if fx.model not in MODELS:
        raise InputError(f"fixture {fx.name} model: unknown {fx.model!r}; expected one of "
                         f"{', '.join(MODELS)}")
    try:
        p = resolve_params(fx.model, fx.power_w, spec.rated_v_v, spec.frequency_hz,
                           dict(fx.params))
    except InputError as e:
        raise InputError(f"fixture {fx.name}: {e}") from None
    return {k: v for k, v in p.items() if v is not None}


def _drawn(fx: Fixture, nominal: dict, spec: SweepSpec, draw: int) -> dict:
    """Component values of one Monte Carlo draw (draw 0: the nominal values)."""
    if draw == 0 or spec.tolerance == 0:
        return nominal
    from .circuits.drivers import PARAMS

    units = {ps.name: ps.unit for ps in PARAMS[fx.model]}
    rng = np.random.default_rng([spec.seed, draw, zlib.crc32(fx.name.encode())])
    out = dict(nominal)
    for name in sorted(nominal):  # fixed order: the same draw whatever the dict order
        if units.get(name) in _TOLERANCED_UNITS and nominal[name] > 0:
            out[name] = nominal[name] * (1.0 + spec.tolerance * rng.uniform(-1.0, 1.0))
    return out


def cases(spec: SweepSpec) -> np.ndarray:
    """The case of every grid point, as an object array of shape ``spec.shape``."""
    grid = np.empty(spec.shape, dtype=object)
    for jf, fx in enumerate(spec.fixtures):
        nominal = _resolved_params(fx, spec)
        for jd in range(spec.draws + 1):
            params = tuple(sorted(_drawn(fx, nominal, spec, jd).items()))
            for js, s in enumerate(spec.settings):
                for jv, v in enumerate(spec.voltages_v):
                    grid[js, jf, jv, jd] = Case(
                        model=fx.model, power_w=fx.power_w, params=params,
                        setting=None if spec.dimmer == "none" else s,
                        setting_kind=spec.setting_kind, v_rms_v=v,
                        frequency_hz=spec.frequency_hz, dimmer=spec.dimmer, switch=spec.switch,
                        dimmer_params=spec.dimmer_params, lamps=spec.lamps,
                        source_r_ohm=spec.source_r_ohm, source_l_h=spec.source_l_h)
    return grid


#: flag of a case whose current has no fundamental (the lamp is off): its ratios are NaN
NO_CURRENT = "no-current"
#: flag of a case the circuit model found no periodic steady state for: every figure NaN
NO_SOLUTION = "no-solution"


def _off(ph: np.ndarray, i_rms_a: float, p_w: float, light_rel, flags) -> CaseOutcome:
    """A lamp that draws (next to) no fundamental current: ratios are not defined."""
    nan = float("nan")
    return CaseOutcome(i_rms_a=i_rms_a, i1_rms_a=float(abs(ph[1])), thd_i=nan, pf=nan, dpf=nan,
                       p_w=p_w, crest_factor=nan, current_h_a=ph, light_rel=light_rel,
                       flags=tuple(dict.fromkeys(tuple(flags) + (NO_CURRENT,))))


def _outcome_from_waveform(w, light_rel=None, flags=()) -> CaseOutcome:
    from .metrics import summarize
    from .spectrum import spectrum

    s = spectrum(w, MAX_ORDER)
    if s.i1_a <= 1e-9:  # below a nanoampere: the lamp is off
        ph = np.zeros(MAX_ORDER + 1, dtype=complex)
        ph[: s.current_a.size] = s.current_a
        return _off(ph, s.i_rms_a, float("nan") if s.p_w is None else s.p_w, light_rel, flags)
    sm = summarize(s, THD_MAX_ORDER)
    ph = np.zeros(MAX_ORDER + 1, dtype=complex)
    ph[: s.current_a.size] = s.current_a
    return CaseOutcome(
        i_rms_a=sm.i_rms_a, i1_rms_a=sm.i1_rms_a, thd_i=sm.thd_i,
        pf=float("nan") if sm.pf is None else sm.pf,
        dpf=float("nan") if sm.dpf is None else sm.dpf,
        p_w=float("nan") if sm.p_w is None else sm.p_w,
        crest_factor=sm.crest_factor, current_h_a=ph, light_rel=light_rel,
        flags=tuple(flags))


def circuit_case(case: Case) -> CaseOutcome:
    """Solve one case with the circuit models of :mod:`pqcalc.circuits` (periodic steady
    state) and take its figures from the current spectrum (THD over orders 2..40)."""
    from .circuits import DimmerSpec, LoadGroup, Supply, solve_circuit

    supply = Supply(v_rms_v=case.v_rms_v, frequency_hz=case.frequency_hz,
                    source_r_ohm=case.source_r_ohm, source_l_h=case.source_l_h)
    kw: dict = {"kind": case.dimmer, "params": dict(case.dimmer_params)}
    if case.dimmer != "none":
        kw["switch"] = case.switch
        kw["conduction_deg" if case.setting_kind == "conduction" else "knob"] = case.setting
    from .errors import ConvergenceError

    try:
        sol = solve_circuit(supply, DimmerSpec(**kw),
                            [LoadGroup(case.model, case.power_w, case.lamps, case.params)])
    except ConvergenceError:
        # no periodic steady state at this setting: every figure NaN, flagged, the sweep goes on
        nan = float("nan")
        return CaseOutcome(i_rms_a=nan, i1_rms_a=nan, thd_i=nan, pf=nan, dpf=nan, p_w=nan,
                           crest_factor=nan, current_h_a=np.full(MAX_ORDER + 1, nan + 0j),
                           light_rel=None, flags=(NO_SOLUTION,))
    light = None
    svm = pst = None
    if sol.groups:
        g = sol.groups[0]
        lr = getattr(g, "light", getattr(g, "light_rel", None))
        if lr is not None:
            from .circuits.curve import NUMERIC_DARK
            from .light.metrics import light_metrics

            light = float(np.mean(lr))
            lm = light_metrics(lr, sol.period_cycles / case.frequency_hz, NUMERIC_DARK)
            svm, pst = lm.svm, lm.pst_lm
    out = _outcome_from_waveform(sol.waveform, light, tuple(sol.flags))
    return replace(out, svm=svm, pst_lm=pst)


def _interval_terms(h: int, a: float, b: float) -> tuple[float, float]:
    """``(int sin t sin ht dt, int sin t cos ht dt)`` over ``[a, b]`` in closed form."""
    if h == 1:
        ss = 0.5 * ((b - a) - 0.5 * (math.sin(2 * b) - math.sin(2 * a)))
        sc = -0.25 * (math.cos(2 * b) - math.cos(2 * a))
        return ss, sc
    ss = 0.5 * ((math.sin((h - 1) * b) - math.sin((h - 1) * a)) / (h - 1)
                - (math.sin((h + 1) * b) - math.sin((h + 1) * a)) / (h + 1))
    sc = 0.5 * (-(math.cos((1 + h) * b) - math.cos((1 + h) * a)) / (1 + h)
                - (math.cos((1 - h) * b) - math.cos((1 - h) * a)) / (1 - h))
    return ss, sc


def ideal_resistive_case(case: Case) -> CaseOutcome:
    """Closed-form Fourier series of a resistive lamp behind an ideal phase cut.

    The lamp is a fixed resistance ``r_ohm`` (``rated_v**2 / power_w`` unless given); the
    dimmer an ideal switch: leading edge conducts from ``180 - c`` to 180 deg of each half
    cycle, trailing edge from 0 to ``c`` (``c`` the conduction angle); the supply is an ideal
    sine (the source impedance is ignored). Only the ``resistive`` model and conduction
    settings are accepted. Light output is not modelled (``None``).

    References
    ----------
    The Fourier coefficients of a half-wave-symmetric chopped sine, integrated term by
    term (e.g. N. Mohan, T. Undeland, W. Robbins, *Power Electronics*, 3rd ed., Wiley 2003,
    ch. 3, for the method). At 90 deg conduction: I3/I1 = 53.70 %, PF = 0.7071.
    """
    if case.model != "resistive":
        raise InputError(f"the ideal evaluator models resistive lamps only, got model "
                         f"{case.model!r}; use the circuit evaluator")
    if case.dimmer != "none" and case.setting_kind != "conduction":
        raise InputError("the ideal evaluator needs conduction-angle settings, not knob "
                         "positions")
    p = dict(case.params)
    if "r_ohm" not in p:
        raise InputError("the ideal evaluator needs the lamp's r_ohm")
    r = float(p["r_ohm"]) / case.lamps
    c = math.pi if case.dimmer == "none" or case.setting is None \
        else math.radians(case.setting)
    a, b = (math.pi - c, math.pi) if case.dimmer == "leading-edge" else (0.0, c)
    ipk = math.sqrt(2) * case.v_rms_v / r
    ph = np.zeros(MAX_ORDER + 1, dtype=complex)
    for h in range(1, MAX_ORDER + 1, 2):  # half-wave symmetry: odd orders only
        ss, sc = _interval_terms(h, a, b)
        # coefficients over a full cycle = 2x the positive half; sine-basis RMS phasor
        ph[h] = (2 / math.pi) * ipk * (ss + 1j * sc) / math.sqrt(2)
    i_rms = ipk * math.sqrt(_interval_terms(1, a, b)[0] / math.pi)
    p_w = i_rms**2 * r
    peak = ipk * (1.0 if a <= math.pi / 2 <= b else max(math.sin(a), math.sin(b)))
    i1 = abs(ph[1])
    if c == 0:
        return _off(ph, 0.0, 0.0, None, ())
    mags = np.abs(ph)
    thd_i = float(np.sqrt(np.sum(mags[2: THD_MAX_ORDER + 1] ** 2)) / i1)
    return CaseOutcome(i_rms_a=i_rms, i1_rms_a=i1, thd_i=thd_i,
                       pf=p_w / (case.v_rms_v * i_rms), dpf=math.cos(float(np.angle(ph[1]))),
                       p_w=p_w, crest_factor=peak / i_rms, current_h_a=ph, light_rel=None,
                       flags=())


# ------------------------------------------------------------------------ execution
def _eval_chunk(evaluator: Callable[[Case], CaseOutcome], chunk: list[Case]) -> list:
    return [evaluator(c) for c in chunk]


def _chunks(items: list, size: int) -> list[list]:
    return [items[i: i + size] for i in range(0, len(items), size)]


@contextmanager
def _dask_client(scheduler: str | None, local_cluster: int | None, timeout_s: float):
    try:
        from dask.distributed import Client, LocalCluster
    except ImportError:
        raise InputError("distributed runs need dask.distributed: pip install "
                         "'pqcalc[distributed]'") from None
    if local_cluster is not None:
        n = int(local_cluster)
        if n != local_cluster or n < 1:
            raise InputError(f"local_cluster: expected a number of workers >= 1, got "
                             f"{local_cluster}")
        cluster = LocalCluster(n_workers=n, threads_per_worker=1, processes=True,
                               dashboard_address=None)
        client = Client(cluster)
        try:
            yield client
        finally:
            client.close()
            cluster.close()
        return
    try:
        client = Client(scheduler, timeout=timeout_s)
    except (OSError, TimeoutError) as e:
        raise InputError(f"scheduler {scheduler}: could not connect within {timeout_s:g} s "
                         f"({type(e).__name__}); check the address and that the scheduler "
                         "is running") from None
    except ValueError as e:
        raise InputError(f"scheduler {scheduler}: not a scheduler address ({e}); expected "
                         "e.g. tcp://host:8786") from None
    try:
        yield client
    finally:
        client.close()


def _default_chunk(n: int, workers: int) -> int:
    # a few chunks per worker: balances the load without one task per small case
    return max(1, math.ceil(n / (4 * max(1, workers))))


def run_cases(items: list[Case], evaluator: Callable[[Case], CaseOutcome] | None = None, *,
              client=None, scheduler: str | None = None, local_cluster: int | None = None,
              chunk_size: int | None = None, timeout_s: float = 10.0,
              progress: Callable[[int, int], None] | None = None) -> list[CaseOutcome]:
    """Evaluate a list of cases in order, in-process or on a dask cluster.

    ``client`` (an existing ``dask.distributed.Client``) takes precedence over
    ``scheduler`` (an address) and ``local_cluster`` (a worker count). ``progress`` is called
    with ``(done, total)`` cases as they finish.
    """
    evaluator = evaluator or circuit_case
    total = len(items)
    if scheduler is not None and local_cluster is not None:
        raise InputError("give a scheduler address or a local cluster size, not both")
    if client is None and scheduler is None and local_cluster is None:
        out = []
        size = chunk_size or max(1, total // 100)
        for chunk in _chunks(items, size):
            out.extend(_eval_chunk(evaluator, chunk))
            if progress:
                progress(len(out), total)
        return out
    if client is not None:
        return _run_on(client, items, evaluator, chunk_size, progress)
    with _dask_client(scheduler, local_cluster, timeout_s) as cl:
        return _run_on(cl, items, evaluator, chunk_size, progress)


def _run_on(client, items, evaluator, chunk_size, progress) -> list:
    from dask.distributed import as_completed

    workers = len(client.scheduler_info().get("workers", {})) or 1
    size = chunk_size or _default_chunk(len(items), workers)
    n_chunks = math.ceil(len(items) / size)
    # strided chunks: neighbouring cases (one costly fixture type at many settings, say)
    # spread over all chunks, which balances the workers better than contiguous runs
    members = [list(range(k, len(items), n_chunks)) for k in range(n_chunks)]
    chunks = [[items[i] for i in m] for m in members]
    futures = client.map(_eval_chunk, [evaluator] * n_chunks, chunks, pure=False)
    index = {f.key: k for k, f in enumerate(futures)}
    out: list = [None] * len(items)
    done = 0
    try:
        for fut in as_completed(futures):
            k = index[fut.key]
            for i, o in zip(members[k], fut.result(), strict=True):  # re-raises InputError
                out[i] = o
            done += len(members[k])
            if progress:
                progress(done, len(items))
    finally:
        client.cancel(futures)
    return out


# ------------------------------------------------------------------------- datasets
_VARS = {  # name: (units, long name)
    "i_rms_a": ("A", "input current, rms, all the lamps of the case"),
    "i1_rms_a": ("A", "fundamental input current, rms"),
    "thd_i": ("1", f"current THD, orders 2..{THD_MAX_ORDER}, fraction of the fundamental "
                   "(NaN: no current, flag no-current)"),
    "pf": ("1", "true power factor (NaN: no current)"),
    "dpf": ("1", "displacement power factor, cos phi1 (NaN: no current)"),
    "p_w": ("W", "active input power"),
    "crest_factor": ("1", "current crest factor (NaN: no current)"),
    # ratios of a lamp that is off (flag "no-current") are NaN: they are not defined
    "light_rel": ("1", "mean light output relative to the undimmed lamp (NaN: the evaluator "
                       "gives no light output)"),
    "svm": ("1", "stroboscopic visibility measure of one lamp, IEC TR 63158 (NaN: no light "
                 "waveform, or dark)"),
    "pst_lm": ("1", "short-term light flicker severity of one lamp, IEC TR 61547-1 (NaN: no "
                    "light waveform, or dark)"),
}


def sweep(spec: SweepSpec, evaluator: Callable[[Case], CaseOutcome] | None = None, *,
          client=None, scheduler: str | None = None, local_cluster: int | None = None,
          chunk_size: int | None = None, timeout_s: float = 10.0,
          progress: Callable[[int, int], None] | None = None) -> xr.Dataset:
    """Evaluate every distinct case of ``spec`` and return the labelled results.

    Returns
    -------
    xarray.Dataset
        Dimensions ``setting, fixture, voltage, draw`` (and ``order`` for ``i_h_a`` and
        ``i_h_phase_rad``); each variable has ``units`` and ``long_name`` attributes.
        Ratios are fractions (``units = "1"``). ``flags`` holds the solver's flags joined
        by ``";"`` ("" when none).

    Examples
    --------
    >>> spec = SweepSpec((Fixture("lamp60", "resistive", 60.0),), settings=(90.0, 180.0))
    >>> ds = sweep(spec, ideal_resistive_case)
    >>> round(float(ds.pf.sel(setting=90.0).squeeze()), 4)
    0.7071
    """
    evaluator = evaluator or circuit_case
    grid = cases(spec)
    flat = list(grid.ravel())
    distinct = list(dict.fromkeys(flat))
    outcomes = run_cases(distinct, evaluator, client=client, scheduler=scheduler,
                         local_cluster=local_cluster, chunk_size=chunk_size,
                         timeout_s=timeout_s, progress=progress)
    by_case = dict(zip(distinct, outcomes, strict=True))
    res = [by_case[c] for c in flat]
    shape = spec.shape
    dims = ("setting", "fixture", "voltage", "draw")
    data = {}
    for name, (units, long) in _VARS.items():
        vals = np.array([np.nan if getattr(o, name) is None else getattr(o, name) for o in res],
                        dtype=float).reshape(shape)
        if name in ("light_rel", "svm", "pst_lm") and np.all(np.isnan(vals)):
            continue
        data[name] = xr.Variable(dims, vals, {"units": units, "long_name": long})
    ph = np.array([o.current_h_a for o in res]).reshape(shape + (MAX_ORDER + 1,))
    data["i_h_a"] = xr.Variable(dims + ("order",), np.abs(ph),
                                {"units": "A", "long_name": "current per harmonic order, rms"})
    data["i_h_phase_rad"] = xr.Variable(
        dims + ("order",), np.angle(ph),
        {"units": "rad", "long_name": "phase per order, sine basis, origin at the supply "
                                      "voltage's positive-going zero crossing"})
    data["flags"] = xr.Variable(dims, np.array([";".join(o.flags) for o in res],
                                               dtype=str).reshape(shape),
                                {"units": "1",
                                 "long_name": "solver flags joined by ';' (empty: none)"})
    s_units = "deg" if spec.setting_kind == "conduction" else "1"
    s_long = ("conduction angle per half cycle" if spec.setting_kind == "conduction"
              else "knob position")
    coords = {
        "setting": ("setting", np.array(spec.settings), {"units": s_units, "long_name": s_long}),
        "fixture": ("fixture", np.array([f.name for f in spec.fixtures], dtype=str),
                    {"units": "1", "long_name": "fixture type (model and rated power)"}),
        "model": ("fixture", np.array([f.model for f in spec.fixtures], dtype=str),
                  {"units": "1", "long_name": "driver model"}),
        "power_w": ("fixture", np.array([f.power_w for f in spec.fixtures]),
                    {"units": "W", "long_name": "rated input power of one lamp"}),
        "voltage": ("voltage", np.array(spec.voltages_v),
                    {"units": "V", "long_name": "supply voltage, line to neutral, rms"}),
        "draw": ("draw", np.arange(spec.draws + 1),
                 {"units": "1",
                  "long_name": "Monte Carlo draw of component tolerances (0: nominal)"}),
        "order": ("order", np.arange(MAX_ORDER + 1),
                  {"units": "1", "long_name": "harmonic order"}),
    }
    from . import __version__
    from .io.export import CF_CONVENTIONS

    attrs = {
        "Conventions": CF_CONVENTIONS,
        "title": "pqcalc sweep",
        "pqcalc_version": __version__,
        "evaluator": f"{evaluator.__module__}.{getattr(evaluator, '__qualname__', evaluator)}",
        "dimmer": spec.dimmer, "switch": spec.switch,
        "setting_kind": spec.setting_kind,
        "frequency_hz": spec.frequency_hz, "rated_v_v": spec.rated_v_v,
        "lamps": spec.lamps, "source_r_ohm": spec.source_r_ohm, "source_l_h": spec.source_l_h,
        "draws": spec.draws, "tolerance": spec.tolerance, "seed": spec.seed,
        "cases": len(flat), "distinct_cases": len(distinct),
        "caution": CAUTION,
    }
    return xr.Dataset(data, coords, attrs)


# ------------------------------------------------------------------------ portfolio
def _assess_one(inst) -> dict:
    """One building's figures (design scenario, at the service) as plain values."""
    from .installation import assess

    a = assess(inst)
    d = a.design
    t = d.transformer
    lines = {ln: r for ln, r in t.lines.items()}
    statuses = [c.status for s in a.scenarios for c in s.all_checks()]
    spec = np.full((3, MAX_ORDER + 1), np.nan)
    for k, ln in enumerate(("L1", "L2", "L3")):
        if ln in lines:
            m = np.asarray(lines[ln].magnitudes_a, dtype=float)[: MAX_ORDER + 1]
            spec[k, : m.size] = m
    neutral = np.full(MAX_ORDER + 1, np.nan)
    if t.neutral is not None:
        m = np.asarray(t.neutral.magnitudes_a, dtype=float)[: MAX_ORDER + 1]
        neutral[: m.size] = m
    worst = max(lines.values(), key=lambda r: r.i_rms_a)
    return {
        "project": inst.project.name if inst.project is not None else "",
        "system": inst.supply.system,
        "lamps": inst.n_lamps,
        "distinct_solves": a.solves,
        "design_scenario": d.name,
        "p_w": float(sum(r.p_w for r in lines.values())),
        "i_line_max_a": float(worst.i_rms_a),
        "thd_i_line_max": float(worst.thd_i),
        "i_neutral_a": float("nan") if t.neutral is None else float(t.neutral.i_rms_a),
        "neutral_ratio": (float("nan") if t.neutral is None
                          else float(t.neutral.ratio_to_max_line)),
        "k_factor": float(t.k_factor),
        "verdict": a.verdict,  # "pass", "fail" or "not assessed" (a circuit without a solution)
        "checks_failed": statuses.count("fail"),
        "checks_warned": statuses.count("warn"),
        "i_h_line_a": spec,
        "i_h_neutral_a": neutral,
    }


_PORTFOLIO_VARS = {  # name: (units, long name); counts and labels are dimensionless ("1")
    "project": ("1", "project name from the installation file"),
    "system": ("1", "supply system"),
    "lamps": ("1", "number of lamps"),
    "distinct_solves": ("1", "distinct circuit cases solved"),
    "design_scenario": ("1", "the scenario with the largest line plus neutral current"),
    "p_w": ("W", "active power at the service, design scenario"),
    "i_line_max_a": ("A", "largest line current at the service, rms, design scenario"),
    "thd_i_line_max": ("1", "current THD of that line, orders 2..40, fraction"),
    "i_neutral_a": ("A", "neutral current at the service, rms (NaN: single-phase)"),
    "neutral_ratio": ("1", "neutral over the largest line current (NaN: single-phase)"),
    "k_factor": ("1", "transformer K-factor of the service current"),
    "verdict": ("1", "pass, fail or not assessed over every check of every scenario"),
    "checks_failed": ("1", "checks failed, all scenarios"),
    "checks_warned": ("1", "checks with a warning, all scenarios"),
}


def portfolio(paths: Sequence[str | os.PathLike], *, client=None, scheduler: str | None = None,
              local_cluster: int | None = None, timeout_s: float = 10.0,
              progress: Callable[[int, int], None] | None = None) -> xr.Dataset:
    """Assess many installation files in one run: one row per building.

    The files are read and checked here (a bad file stops the run with its located
    message before any work is sent out); each assessment is one task. Measured captures
    named by a file are read where the task runs, so a remote cluster needs them at the
    same paths.

    Returns
    -------
    xarray.Dataset
        Dimension ``building`` (labelled by file stem, made unique), plus ``line`` and
        ``order`` for the service spectra ``i_h_line_a`` and ``i_h_neutral_a``.
    """
    from .installation import load_installation

    if not paths:
        raise InputError("portfolio: expected at least one installation file")
    insts = [load_installation(Path(p)) for p in paths]
    labels: list[str] = []
    for p in paths:
        stem = Path(p).stem
        label, k = stem, 2
        while label in labels:
            label, k = f"{stem}-{k}", k + 1
        labels.append(label)
    outs: list[Any] = run_cases(insts, _assess_one,  # type: ignore[arg-type]
                                client=client, scheduler=scheduler,
                     local_cluster=local_cluster, chunk_size=1, timeout_s=timeout_s,
                     progress=progress)
    data = {}
    for name, (units, long) in _PORTFOLIO_VARS.items():
        vals = [o[name] for o in outs]
        arr = np.array(vals, dtype=str) if isinstance(vals[0], str) else np.array(vals)
        data[name] = xr.Variable(("building",), arr, {"units": units, "long_name": long})
    data["i_h_line_a"] = xr.Variable(("building", "line", "order"),
                                     np.array([o["i_h_line_a"] for o in outs]),
                                     {"units": "A", "long_name": "service line current per "
                                      "order, rms, design scenario (NaN: no such line)"})
    data["i_h_neutral_a"] = xr.Variable(("building", "order"),
                                        np.array([o["i_h_neutral_a"] for o in outs]),
                                        {"units": "A", "long_name": "service neutral current "
                                         "per order, rms (NaN: single-phase)"})
    coords = {"building": ("building", np.array(labels, dtype=str),
                           {"units": "1", "long_name": "building (installation file stem)"}),
              "file": ("building", np.array([str(p) for p in paths], dtype=str),
                       {"units": "1", "long_name": "installation file"}),
              "line": ("line", np.array(["L1", "L2", "L3"]),
                        {"units": "1", "long_name": "line at the service"}),
              "order": ("order", np.arange(MAX_ORDER + 1),
                        {"units": "1", "long_name": "harmonic order"})}
    from . import __version__
    from .io.export import CF_CONVENTIONS

    return xr.Dataset(data, coords, {"Conventions": CF_CONVENTIONS, "title": "pqcalc portfolio",
                                     "pqcalc_version": __version__, "caution": CAUTION})


# ------------------------------------------------------------------------ helpers
def parse_range(text: str, what: str = "settings") -> tuple[float, ...]:
    """``"start:stop:count"`` (evenly spaced, both ends included) or ``"a,b,c"``.

    >>> parse_range("0:180:5")
    (0.0, 45.0, 90.0, 135.0, 180.0)
    >>> parse_range("220,230,240", "voltages")
    (220.0, 230.0, 240.0)
    """
    t = text.strip()
    if not t:
        raise InputError(f"{what}: the range is empty; expected start:stop:count or a,b,c")
    if ":" in t:
        parts = t.split(":")
        if len(parts) != 3:
            raise InputError(f"{what}: {text!r}: expected start:stop:count, e.g. 0:180:21")
        try:
            a, b = float(parts[0]), float(parts[1])
            n = int(parts[2])
        except ValueError:
            raise InputError(f"{what}: {text!r}: expected numbers start:stop and a whole "
                             "count, e.g. 0:180:21") from None
        if n < 1:
            raise InputError(f"{what}: {text!r}: the range is empty (count {n}); expected a "
                             "count >= 1")
        if not (math.isfinite(a) and math.isfinite(b)):
            raise InputError(f"{what}: {text!r}: expected finite numbers")
        if n == 1:
            if a != b:
                raise InputError(f"{what}: {text!r}: one point needs start == stop")
            return (a,)
        return tuple(float(x) for x in np.linspace(a, b, n))
    vals = []
    for item in t.split(","):
        item = item.strip()
        if not item:
            raise InputError(f"{what}: {text!r}: an empty item; expected a,b,c")
        try:
            v = float(item)
        except ValueError:
            raise InputError(f"{what}: {item!r} is not a number; expected start:stop:count "
                             "or a,b,c") from None
        if not math.isfinite(v):
            raise InputError(f"{what}: {item!r}: expected a finite number")
        vals.append(v)
    return tuple(vals)


def write_netcdf(ds: xr.Dataset, path: str | os.PathLike) -> None:
    """Write a dataset as netCDF-4 atomically (:func:`pqcalc.io.export.write_netcdf`)."""
    from .io.export import write_netcdf as _write

    _write(ds, path)
