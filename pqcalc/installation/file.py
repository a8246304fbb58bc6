"""Read and validate an installation file (TOML written by hand).

Every error names the file, the line, the field and what was expected. Defaults are not
repeated here: a field left out takes the default declared on its dataclass in
:mod:`pqcalc.installation.model` (:func:`~pqcalc.installation.model.default_of`).

File layout (see ``demo_installations/harbour_school.toml`` for a commented example)::

    [project]      name, site, client, document_number, revision, status, date,
                   prepared_by (or engineer), checked_by, approved_by, notes,
                   revisions = [{rev, date, description, by}, ...]
    [supply]       system, voltage_ln_v, frequency_hz, rules ("IEC" | "US"; default from the
                   supply), and one of: source_r_ohm/source_l_h,
                   [supply.transformer] kva/impedance_pct/x_over_r, short_circuit_a/x_over_r
    [fixtures.ID]  model + power_w (+ [fixtures.ID.params]) | capture (+ capture options);
                   dimming range, description
    [[feeders]]    id, r_ohm, l_h, neutral_r_ohm, neutral_l_h
    [[panels]]     id, feeder, neutral_ampacity_a, line_ampacity_a
    [[panels.circuits]]  id, line, breaker_a, breaker_curve, dimmer, conduction_deg
                   (a number or a list: one per scenario) or knob, dimmer_switch (triac |
                   transistor, leading edge), dimmer_rating_w, led_derating,
                   dimmer_min_load_w, dimmer_params, fixtures = [{type, count}, ...],
                   cable = {length_m, size_mm2 | awg, material, temperature_c},
                   breaker_pickup_x_in, breaker_pulse_table = {width_s = [...], peak_a = [...]}
    [analysis]     supply_interaction, scenarios (names), max_iterations, tolerance
    [diversity]    mode = "none" | "summation" | "monte-carlo", draws, low_deg, high_deg,
                   step_deg, seed
    [pcc]          demand_current_a, short_circuit_a, voltage_kv, ieee519_edition
    [compliance]   strict_dimmed (dimmed states behind independent dimmers pass/fail),
                   eu_ecodesign (EU light-source rules at full output; default: 230/400 V 50 Hz),
                   on_date (the date the rules are taken at; default: the project's date)
    [report]       paper ("A4" | "Letter"; default from the rule set: A4 IEC, Letter US)

A fixture type's ``builtin_dimming = true`` says the equipment dims itself: its dimmed
states are then part of its IEC 61000-3-2 verdict.
"""

from __future__ import annotations

import os
from pathlib import Path
from typing import Any, cast

from ..errors import InputError
from ..io.capture import SAMPLE_RATE_HZ, SCALE, CsvOptions
from ..io.installation_file import Bounds, Fields, read_toml
from .interaction import from_short_circuit, from_transformer
from .model import (
    DIMMER_KINDS,
    DIVERSITY_MODES,
    MAX_SCENARIOS,
    PARAM_BOUNDS,
    SWITCH_KINDS,
    SYSTEMS,
    AnalysisOptions,
    Circuit,
    ComplianceOptions,
    Diversity,
    Feeder,
    FixtureGroup,
    FixtureType,
    Installation,
    MeasuredFixture,
    ModelledFixture,
    Panel,
    PccSpec,
    Project,
    ReportOptions,
    Revision,
    SourceImpedance,
    SupplySpec,
    bounds_of,
    default_of,
)

__all__ = ["load_installation"]

_TOP = {"project", "supply", "fixtures", "panels", "feeders", "analysis", "diversity", "pcc",
        "compliance", "report"}


#: Values the file gives that are not fields of the model (they are turned into one), with
#: their physically sensible ranges; the model's own fields carry theirs (``bounds_of``).
_INPUT_BOUNDS: dict[str, Bounds] = {
    "impedance_pct": Bounds(0.5, 20.0, "a distribution transformer's impedance voltage"),
    "x_over_r": Bounds(0.0, 100.0, "X/R of a supply or transformer"),
    "short_circuit_a": Bounds(10.0, 1e6, "a building service's prospective short-circuit "
                              "current"),
    "length_m": Bounds(0.1, 10_000.0, "a branch cable's length"),
    "size_mm2": Bounds(0.5, 1000.0, "a conductor's cross-section"),
    "temperature_c": Bounds(-40.0, 250.0, "a conductor's temperature"),
    "sample_rate_hz": SAMPLE_RATE_HZ,  # as every capture reader (pqcalc.io.record)
    "scale": SCALE,  # a positive ratio here (pqcalc.io.capture)
}

#: Environment variable that lets capture files lie outside the installation's folder.
CAPTURES_OUTSIDE_ENV = "PQCALC_CAPTURES_OUTSIDE"


def _num(fld: Fields, d: dict, key: str, path: str, cls: type, default: Any = ...,
         name: str | None = None) -> Any:
    """A number held to the range declared beside ``cls``'s field (``name``, or ``key``)."""
    return fld.num(d, key, path, default, bounds=bounds_of(cls, name or key))


def _params(fld: Fields, d: dict, field_: str, units: dict[str, str] | None = None
            ) -> tuple[tuple[str, float], ...]:
    """Component values: known names (``units``: name -> unit of the model), numbers within
    the range of real parts of their unit (:data:`~pqcalc.installation.model.PARAM_BOUNDS`)."""
    out = []
    for k, v in d.items():
        f = f"{field_}.{k}"
        if units is not None and k not in units:
            raise fld.error(f, "a component of this model: " + ", ".join(units))
        b = PARAM_BOUNDS.get(units[k]) if units is not None else None
        if isinstance(v, bool) or not isinstance(v, (int, float)):
            raise fld.error(f, "a number (SI units, as the name says)", v)
        x = fld.num(d, k, f)
        if b is not None and x != 0 and not b.contains(x):
            raise fld.error(f, f"{b.expected()} [{units[k]}]", v)  # type: ignore[index]
        out.append((k, x))
    return tuple(sorted(out))


def _supply(fld: Fields, data: dict) -> SupplySpec:
    d = fld.table(data, "supply", "supply")
    fld.unknown(d, {"system", "voltage_ln_v", "frequency_hz", "source_r_ohm", "source_l_h",
                    "short_circuit_a", "x_over_r", "transformer", "neutral_r_ohm",
                    "neutral_l_h", "rules"}, "supply")
    system = fld.str_(d, "system", "supply.system", choices=SYSTEMS)
    v = _num(fld, d, "voltage_ln_v", "supply.voltage_ln_v", SupplySpec)
    f = _num(fld, d, "frequency_hz", "supply.frequency_hz", SupplySpec)
    lines = 3 if system == "three-phase-wye" else 2 if system == "split-phase" else 1
    kva = None
    eddy = default_of(SupplySpec, "eddy_loss_pu")
    given = [k for k in ("source_r_ohm", "short_circuit_a", "transformer") if k in d]
    if len(given) > 1:
        raise fld.error(f"supply.{given[1]}",
                        "one way to give the source impedance: source_r_ohm/source_l_h, "
                        "short_circuit_a/x_over_r or [supply.transformer]")
    if "transformer" in d:
        t = fld.table(d, "transformer", "supply.transformer")
        fld.unknown(t, {"kva", "impedance_pct", "x_over_r", "eddy_loss_pu"}, "supply.transformer")
        kva = _num(fld, t, "kva", "supply.transformer.kva", SupplySpec, name="transformer_kva")
        z = from_transformer(kva, fld.num(t, "impedance_pct", "supply.transformer.impedance_pct",
                                          bounds=_INPUT_BOUNDS["impedance_pct"]),
                             fld.num(t, "x_over_r", "supply.transformer.x_over_r", 5.0,
                                     bounds=_INPUT_BOUNDS["x_over_r"]),
                             v, f, lines)
        eddy = _num(fld, t, "eddy_loss_pu", "supply.transformer.eddy_loss_pu", SupplySpec, eddy)
        basis = "transformer"
    elif "short_circuit_a" in d:
        z = from_short_circuit(fld.num(d, "short_circuit_a", "supply.short_circuit_a",
                                       bounds=_INPUT_BOUNDS["short_circuit_a"]),
                               fld.num(d, "x_over_r", "supply.x_over_r", 3.0,
                                       bounds=_INPUT_BOUNDS["x_over_r"]), v, f)
        basis = "short-circuit current"
    else:
        z = SourceImpedance(
            _num(fld, d, "source_r_ohm", "supply.source_r_ohm", SourceImpedance, 0.0, "r_ohm"),
            _num(fld, d, "source_l_h", "supply.source_l_h", SourceImpedance, 0.0, "l_h"))
        basis = "direct"
    z = SourceImpedance(z.r_ohm, z.l_h,
                        _num(fld, d, "neutral_r_ohm", "supply.neutral_r_ohm", SourceImpedance,
                             0.0),
                        _num(fld, d, "neutral_l_h", "supply.neutral_l_h", SourceImpedance, 0.0))
    return SupplySpec(system, v, f, z, kva, eddy, basis, _rules(fld, d, system, v, f))


def _rules(fld: Fields, d: dict, system: str, v_ln: float, f: float) -> str:
    """The regional rule set: named in the file, or the default for the supply (230/400 V
    50 Hz -> IEC; 120/208/277/480 V 60 Hz -> US; any other 50 Hz supply -> IEC)."""
    from ..standards.regions import default_rule_set, known_rule_sets

    if "rules" in d:
        return str(fld.str_(d, "rules", "supply.rules", choices=known_rule_sets()))
    try:
        return default_rule_set(v_ln, f).name
    except InputError:
        if abs(f - 50.0) < 0.5:
            return "IEC"
        raise fld.error("supply.rules", "a regional rule set for this supply (no default for "
                        f"{v_ln:g} V {f:g} Hz): one of " + ", ".join(known_rule_sets())) from None


def _model_ids() -> tuple[str, ...]:
    from ..circuits import MODELS  # the circuit models' stable ids

    return tuple(MODELS)


_FIXTURE_FIELDS = {"model", "power_w", "params", "capture", "current_col", "voltage_col",
                   "time_col", "sample_rate_hz", "current_scale", "voltage_scale",
                   "min_conduction_deg", "max_conduction_deg", "description", "builtin_dimming"}


def _fixtures(fld: Fields, data: dict, base: Path, supply: SupplySpec,
              captures_outside: bool = False) -> dict[str, FixtureType]:
    from ..circuits.drivers import model_params, resolve_params

    d = fld.table(data, "fixtures", "fixtures")
    if not d:
        raise fld.error("fixtures", "at least one fixture type [fixtures.NAME]")
    out: dict[str, FixtureType] = {}
    for fid, t in d.items():
        path = f"fixtures.{fid}"
        fld.check_text(fid, path, 100)
        if not isinstance(t, dict):
            raise fld.error(path, "a table of the fixture type's fields", t)
        fld.unknown(t, _FIXTURE_FIELDS, path)
        if ("model" in t) == ("capture" in t):
            raise fld.error(path, "either model = \"...\" or capture = \"file\" (one of them)")
        lo = _num(fld, t, "min_conduction_deg", f"{path}.min_conduction_deg", ModelledFixture,
                  default_of(ModelledFixture, "min_conduction_deg"))
        hi = _num(fld, t, "max_conduction_deg", f"{path}.max_conduction_deg", ModelledFixture,
                  default_of(ModelledFixture, "max_conduction_deg"))
        if lo >= hi:
            raise fld.error(f"{path}.min_conduction_deg", f"less than max_conduction_deg ({hi:g})", lo)
        desc = fld.str_(t, "description", f"{path}.description", "", max_chars=1000)
        builtin = t.get("builtin_dimming", default_of(ModelledFixture, "builtin_dimming"))
        if not isinstance(builtin, bool):
            raise fld.error(f"{path}.builtin_dimming", "true or false", builtin)
        if "model" in t:
            power = _num(fld, t, "power_w", f"{path}.power_w", ModelledFixture)
            model = fld.str_(t, "model", f"{path}.model", choices=_model_ids())
            units = {r["name"]: r["unit"] for r in model_params(model)}
            params = _params(fld, fld.table(t, "params", f"{path}.params", required=False),
                             f"{path}.params", units)
            try:  # the model's own rules (its power range, parts that depend on each other)
                resolve_params(model, power, supply.voltage_ln_v, supply.frequency_hz,
                               dict(params))
            except InputError as e:
                raise fld.error(f"{path}.params" if params else f"{path}.power_w",
                                f"values the {model} model accepts ({e})") from None
            out[fid] = ModelledFixture(fid, power, lo, hi, desc, model, params,
                                       builtin_dimming=builtin)
        else:
            power = _num(fld, t, "power_w", f"{path}.power_w", MeasuredFixture, 0.0)
            cap = fld.str_(t, "capture", f"{path}.capture", max_chars=1000)
            cp = _capture_path(fld, f"{path}.capture", cap, base, captures_outside)
            cols: dict[str, Any] = {}
            for key in ("current_col", "voltage_col", "time_col"):
                c = t.get(key)
                if c is not None and (isinstance(c, bool) or not isinstance(c, (str, int))):
                    raise fld.error(f"{path}.{key}", "a column: its header name or its 0-based "
                                    "index", c)
                if isinstance(c, str):
                    fld.check_text(c, f"{path}.{key}", 200)
                cols[key] = c
            opts = CsvOptions(
                current_col=cols["current_col"], voltage_col=cols["voltage_col"],
                time_col=cols["time_col"],
                sample_rate_hz=fld.num(t, "sample_rate_hz", f"{path}.sample_rate_hz", None,
                                       bounds=_INPUT_BOUNDS["sample_rate_hz"]),
                current_scale=fld.num(t, "current_scale", f"{path}.current_scale", 1.0,
                                      bounds=_INPUT_BOUNDS["scale"]),
                voltage_scale=fld.num(t, "voltage_scale", f"{path}.voltage_scale", 1.0,
                                      bounds=_INPUT_BOUNDS["scale"]),
            )
            _check_capture(fld, f"{path}.capture", cp, opts)
            out[fid] = MeasuredFixture(fid, power, lo, hi, desc, str(cp), opts,
                                       builtin_dimming=builtin)
    return out


def _capture_path(fld: Fields, field_: str, cap: str, base: Path, outside: bool) -> Path:
    """A capture's path, relative to the installation file's folder; one that leaves the
    folder is refused unless allowed (``captures_outside``, or the environment variable
    ``PQCALC_CAPTURES_OUTSIDE=1``), so an installation file cannot make pqcalc read any
    file on the machine."""
    if not cap.strip() or "\x00" in cap:
        raise fld.error(field_, "the name of a capture file", cap)
    cp = Path(cap) if Path(cap).is_absolute() else base / cap
    root = base.resolve()
    try:
        real = cp.resolve()
    except (OSError, RuntimeError):
        raise fld.error(field_, "a capture file that can be found", cap) from None
    if not outside and not real.is_relative_to(root):
        raise fld.error(field_, "a capture file in the installation's folder or below it "
                        f"(to read captures elsewhere, set {CAPTURES_OUTSIDE_ENV}=1)", cap)
    if not cp.is_file():
        raise fld.error(field_, "an existing capture file", cap)
    return cp


#: The highest harmonic order a fixture's capture must resolve: IEC 61000-3-2 limits
#: orders up to 40.
CAPTURE_MIN_ORDER = 40


def _check_capture(fld: Fields, field_: str, cp: Path, opts: CsvOptions) -> None:
    """Read the capture now, so that a bad one is named by the installation file's line
    and field (not discovered mid-study), and check that its sample rate resolves the
    orders the study sums."""
    import warnings

    from ..io.capture import load_capture, record_to_waveform

    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")  # the study warns when it uses the capture
            w = record_to_waveform(load_capture(cp, opts))
    except InputError as e:
        ln = fld.line(field_)
        raise InputError(f"{fld.path}{f':{ln}' if ln else ''}: {field_}: {e}") from None
    rec = w.recorded
    if rec is not None and rec.samples_per_cycle <= 2 * CAPTURE_MIN_ORDER:
        raise fld.error(field_, f"a capture resolving harmonic order {CAPTURE_MIN_ORDER} (more "
                        f"than {2 * CAPTURE_MIN_ORDER} samples per cycle; this one has "
                        f"{rec.samples_per_cycle:.3g})", str(cp.name))


def _angles(fld: Fields, c: dict, key: str, path: str, lo: float, hi: float
            ) -> tuple[float, ...] | None:
    if key not in c:
        return None
    v = c[key]
    vals = v if isinstance(v, list) else [v]
    if not vals:
        raise fld.error(f"{path}.{key}", "a number or a non-empty list of numbers", v)
    if len(vals) > MAX_SCENARIOS:
        raise fld.error(f"{path}.{key}", f"at most {MAX_SCENARIOS} settings (one per "
                        "scenario)", f"{len(vals)} settings")
    out = []
    for i, x in enumerate(vals):
        if isinstance(x, bool) or not isinstance(x, (int, float)) or not lo <= x <= hi:
            raise fld.error(f"{path}.{key}" + (f"[{i}]" if isinstance(v, list) else ""),
                            f"a number from {lo:g} to {hi:g}", x)
        out.append(float(x))
    return tuple(out)


_CIRCUIT_FIELDS = {"id", "line", "breaker_a", "breaker_curve", "dimmer", "conduction_deg",
                   "knob", "dimmer_rating_w", "led_derating", "dimmer_min_load_w",
                   "dimmer_params", "dimmer_switch", "fixtures", "branch_r_ohm", "branch_l_h",
                   "conductor_ampacity_a", "description", "cable", "breaker_pickup_x_in",
                   "breaker_pulse_table", "dimmer_jitter_deg"}


def _cable(fld: Fields, c: dict, path: str) -> tuple[float, float, str]:
    """A circuit's branch cable: loop R [ohm] and L [H] from length, size (mm2 or AWG) and
    material; (0, 0, "") without one."""
    from ..circuits.inrush import cable_impedance

    t = fld.table(c, "cable", f"{path}.cable", required=False)
    if not t:
        return 0.0, 0.0, ""
    cp = f"{path}.cable"
    fld.unknown(t, {"length_m", "size_mm2", "awg", "material", "temperature_c"}, cp)
    length = fld.num(t, "length_m", f"{cp}.length_m", bounds=_INPUT_BOUNDS["length_m"])
    if ("size_mm2" in t) == ("awg" in t):
        raise fld.error(cp, "one conductor size: size_mm2 = ... or awg = ...")
    size = fld.num(t, "size_mm2", f"{cp}.size_mm2", None, bounds=_INPUT_BOUNDS["size_mm2"])
    awg = t.get("awg")
    if awg is not None and not isinstance(awg, (int, str)) or isinstance(awg, bool):
        raise fld.error(f"{cp}.awg", "an AWG size such as 14, 12, 10 or \"1/0\"", awg)
    material = fld.str_(t, "material", f"{cp}.material", "copper",
                        choices=("copper", "aluminium"))
    # 20 C: a cold circuit being switched on (the lowest resistance, the largest inrush)
    temp = fld.num(t, "temperature_c", f"{cp}.temperature_c", 20.0,
                   bounds=_INPUT_BOUNDS["temperature_c"])
    try:
        z = cable_impedance(length, size_mm2=size, awg=awg, material=material,
                            temperature_c=temp)
    except InputError as e:
        raise fld.error(cp, f"a cable pqcalc can compute ({e})") from None
    what = (f"{length:g} m {material} " + (f"{size:g} mm2" if size is not None else f"AWG {awg}")
            + f" at {temp:g} C")
    return float(z.r_ohm), float(z.l_h), what


def _pulse_table(fld: Fields, c: dict, path: str
                 ) -> tuple[tuple[float, ...], tuple[float, ...]] | None:
    """The maker's pulse-withstand table of a circuit's breaker, validated (widths rising,
    allowed peaks not rising)."""
    from ..standards.breakers import table_from_data

    t = fld.table(c, "breaker_pulse_table", f"{path}.breaker_pulse_table", required=False)
    if not t:
        return None
    tp = f"{path}.breaker_pulse_table"
    fld.unknown(t, {"width_s", "peak_a"}, tp)
    try:
        tab = table_from_data({**t, "unit": "A"}, "", "maker's table")
    except InputError as e:
        ln = fld.line(tp)
        raise InputError(f"{fld.path}:{ln}: {tp}.{e}" if ln else f"{fld.path}: {tp}.{e}") from None
    return tuple(tab.width_s), tuple(tab.peaks)


def _jitter(fld: Fields, c: dict, path: str, dimmer: str) -> float:
    """A circuit's firing spread [deg]: >= 0, and only behind a dimmer."""
    sd = _num(fld, c, "dimmer_jitter_deg", f"{path}.dimmer_jitter_deg", Circuit,
              default_of(Circuit, "dimmer_jitter_deg"))
    if sd and dimmer == "none":
        raise fld.error(f"{path}.dimmer_jitter_deg", "no firing spread on a circuit with "
                        "dimmer = \"none\"", sd)
    return float(sd)


def _circuit(fld: Fields, c: Any, path: str, panel: str, supply: SupplySpec,
             fixtures: dict[str, FixtureType]) -> Circuit:
    from ..standards.regions import rule_set

    if not isinstance(c, dict):
        raise fld.error(path, "a table of circuit fields", c)
    if "phase" in c:
        raise fld.error(f"{path}.phase", "the field named `line` (renamed in 0.2: a line is "
                        "L1, L2 or L3)")
    fld.unknown(c, _CIRCUIT_FIELDS, path)

    def dflt(name: str) -> Any:
        return default_of(Circuit, name)

    cid = fld.str_(c, "id", f"{path}.id")
    line = fld.str_(c, "line", f"{path}.line", choices=supply.lines)
    dimmer = fld.str_(c, "dimmer", f"{path}.dimmer", dflt("dimmer"), choices=DIMMER_KINDS)
    cond = _angles(fld, c, "conduction_deg", path, 0.0, 180.0)
    knob = _angles(fld, c, "knob", path, 0.0, 1.0)
    if cond is not None and knob is not None:
        raise fld.error(f"{path}.knob", "either conduction_deg or knob, not both")
    if dimmer == "none" and (knob is not None or (cond is not None and cond != (180.0,))):
        raise fld.error(f"{path}.conduction_deg", "no setting on a circuit with dimmer = \"none\"")
    if knob is not None and dimmer != "leading-edge":
        raise fld.error(f"{path}.knob", "a knob position only for a leading-edge dimmer "
                        "(its firing network maps it); give conduction_deg instead")
    groups = []
    fl = fld.list_(c, "fixtures", f"{path}.fixtures")
    if not fl:
        raise fld.error(f"{path}.fixtures", "at least one {type = \"...\", count = N}")
    for i, g in enumerate(fl):
        gp = f"{path}.fixtures[{i}]"
        if not isinstance(g, dict):
            raise fld.error(gp, "{type = \"...\", count = N}", g)
        fld.unknown(g, {"type", "count"}, gp)
        ftype = fld.str_(g, "type", f"{gp}.type")
        if ftype not in fixtures:
            raise fld.error(f"{gp}.type", "a fixture type defined under [fixtures]: "
                            + ", ".join(sorted(fixtures)), ftype)
        groups.append(FixtureGroup(ftype, fld.count(g, "count", f"{gp}.count",
                                                    bounds_of(FixtureGroup, "count"))))
    switch = fld.str_(c, "dimmer_switch", f"{path}.dimmer_switch", dflt("dimmer_switch"),
                      choices=SWITCH_KINDS)
    dp = _dimmer_params(fld, c, path, dimmer, switch, cond, knob, supply)
    rules = rule_set(supply.rules)
    curve = fld.str_(c, "breaker_curve", f"{path}.breaker_curve", rules.default_breaker,
                     choices=rules.breaker_type_names)
    cable_r, cable_l, cable = _cable(fld, c, path)
    return Circuit(
        id=cid, panel=panel, line=line, groups=tuple(groups),
        breaker_a=_num(fld, c, "breaker_a", f"{path}.breaker_a", Circuit, dflt("breaker_a")),
        breaker_curve=curve,
        breaker_pickup_x_in=fld.num(c, "breaker_pickup_x_in", f"{path}.breaker_pickup_x_in",
                                    None, lo=1.01, hi=100.0),
        breaker_pulse_table=_pulse_table(fld, c, path),
        dimmer=dimmer,
        conduction_deg=cond if cond is not None else dflt("conduction_deg"),
        knob=knob,
        dimmer_rating_w=_num(fld, c, "dimmer_rating_w", f"{path}.dimmer_rating_w", Circuit,
                             dflt("dimmer_rating_w")),
        led_derating=_num(fld, c, "led_derating", f"{path}.led_derating", Circuit,
                          dflt("led_derating")),
        dimmer_min_load_w=_num(fld, c, "dimmer_min_load_w", f"{path}.dimmer_min_load_w", Circuit,
                               dflt("dimmer_min_load_w")),
        dimmer_params=dp,
        dimmer_switch=switch,
        branch_r_ohm=_num(fld, c, "branch_r_ohm", f"{path}.branch_r_ohm", Circuit,
                          dflt("branch_r_ohm")),
        branch_l_h=_num(fld, c, "branch_l_h", f"{path}.branch_l_h", Circuit, dflt("branch_l_h")),
        cable_r_ohm=cable_r, cable_l_h=cable_l, cable=cable,
        conductor_ampacity_a=_num(fld, c, "conductor_ampacity_a", f"{path}.conductor_ampacity_a",
                                  Circuit, dflt("conductor_ampacity_a")),
        dimmer_jitter_deg=_jitter(fld, c, path, dimmer),
    )


def _dimmer_params(fld: Fields, c: dict, path: str, kind: str, switch: str,
                   cond: tuple[float, ...] | None, knob: tuple[float, ...] | None,
                   supply: SupplySpec) -> tuple[tuple[str, float], ...]:
    """A circuit's dimmer component values: names of this dimmer, values in the range of
    their unit, and the dimmer's own rules, checked here so the file names the line."""
    from ..circuits.dimmers import dimmer_params, resolve_dimmer
    from ..circuits.spec import DimmerSpec, Supply

    f = f"{path}.dimmer_params"
    t = fld.table(c, "dimmer_params", f, required=False)
    try:
        sup = Supply(supply.voltage_ln_v, supply.frequency_hz)
    except InputError:
        return _params(fld, t, f)
    units = {r["name"]: r["unit"] for r in dimmer_params(kind, switch, sup)}
    dp = _params(fld, t, f, units)
    if dp:
        setting = {"knob": knob[0]} if knob else {"conduction_deg": (cond or (180.0,))[0]}
        try:
            resolve_dimmer(DimmerSpec(kind, switch=switch, params=dp, **setting), sup)
        except InputError as e:
            raise fld.error(f, f"values this dimmer accepts ({e})") from None
    return dp


def _feeders(fld: Fields, data: dict) -> dict[str, Feeder]:
    feeders: dict[str, Feeder] = {}
    for i, f in enumerate(fld.list_(data, "feeders", "feeders", [])):
        fp = f"feeders[{i}]"
        if not isinstance(f, dict):
            raise fld.error(fp, "a table [[feeders]]", f)
        fld.unknown(f, {"id", "r_ohm", "l_h", "neutral_r_ohm", "neutral_l_h", "description"}, fp)
        fid = fld.str_(f, "id", f"{fp}.id")
        if fid in feeders:
            raise fld.error(f"{fp}.id", "a feeder id not used before", fid)
        feeders[fid] = Feeder(
            fid, _num(fld, f, "r_ohm", f"{fp}.r_ohm", Feeder, default_of(Feeder, "r_ohm")),
            _num(fld, f, "l_h", f"{fp}.l_h", Feeder, default_of(Feeder, "l_h")),
            _num(fld, f, "neutral_r_ohm", f"{fp}.neutral_r_ohm", Feeder, None),
            _num(fld, f, "neutral_l_h", f"{fp}.neutral_l_h", Feeder, None))
    return feeders


def _panels(fld: Fields, data: dict, supply: SupplySpec, fixtures: dict[str, FixtureType],
            feeders: dict[str, Feeder]) -> tuple[Panel, ...]:
    panels = []
    seen_panels: set[str] = set()
    seen_circuits: set[str] = set()
    plist = fld.list_(data, "panels", "panels")
    if not plist:
        raise fld.error("panels", "at least one [[panels]] with circuits")
    for i, pd in enumerate(plist):
        pp = f"panels[{i}]"
        if not isinstance(pd, dict):
            raise fld.error(pp, "a table [[panels]]", pd)
        fld.unknown(pd, {"id", "feeder", "circuits", "neutral_ampacity_a", "line_ampacity_a",
                         "description"}, pp)
        pid = fld.str_(pd, "id", f"{pp}.id")
        if pid in seen_panels:
            raise fld.error(f"{pp}.id", "a panel id not used before", pid)
        seen_panels.add(pid)
        feeder = fld.str_(pd, "feeder", f"{pp}.feeder", None)
        if feeder is not None and feeder not in feeders:
            raise fld.error(f"{pp}.feeder", "a feeder id from [[feeders]]: "
                            + (", ".join(feeders) or "(none defined)"), feeder)
        circuits = []
        for j, c in enumerate(fld.list_(pd, "circuits", f"{pp}.circuits")):
            cp = f"{pp}.circuits[{j}]"
            circ = _circuit(fld, c, cp, pid, supply, fixtures)
            if circ.id in seen_circuits:
                raise fld.error(f"{cp}.id", "a circuit id not used before", circ.id)
            seen_circuits.add(circ.id)
            circuits.append(circ)
        panels.append(Panel(pid, tuple(circuits), feeder,
                            _num(fld, pd, "neutral_ampacity_a", f"{pp}.neutral_ampacity_a",
                                 Panel, None),
                            _num(fld, pd, "line_ampacity_a", f"{pp}.line_ampacity_a", Panel,
                                 None)))
    return tuple(panels)


def _n_scenarios(fld: Fields, panels: tuple[Panel, ...], named: int | None = None) -> int:
    """The number of scenarios: the settings of the circuits that give several; with
    ``named`` (the number of analysis.scenarios names) a circuit that gives another number
    of settings is the one blamed."""
    nscen = 1
    for i, p in enumerate(panels):
        for j, c in enumerate(p.circuits):
            n = c.n_settings
            if n > 1:
                key = "knob" if c.knob is not None else "conduction_deg"
                if named and n != named:
                    raise fld.error(f"panels[{i}].circuits[{j}].{key}",
                                    f"one setting or {named} (one per scenario named in "
                                    "analysis.scenarios)", f"{n} settings")
                if nscen > 1 and n != nscen:
                    raise fld.error(f"panels[{i}].circuits[{j}].{key}",
                                    f"one setting or {nscen} (one per scenario, as another "
                                    "circuit gives)", f"{n} settings")
                nscen = n
    return nscen


def _named_scenarios(data: dict) -> int | None:
    """How many scenario names analysis.scenarios gives (None: not a list of them)."""
    an = data.get("analysis")
    names = an.get("scenarios") if isinstance(an, dict) else None
    return len(names) if isinstance(names, list) and names else None


def _analysis(fld: Fields, data: dict, nscen: int) -> AnalysisOptions:
    an = fld.table(data, "analysis", "analysis", required=False)
    fld.unknown(an, {"supply_interaction", "max_iterations", "tolerance", "scenarios"}, "analysis")
    si = an.get("supply_interaction", default_of(AnalysisOptions, "supply_interaction"))
    if not isinstance(si, bool):
        raise fld.error("analysis.supply_interaction", "true or false", si)
    names = fld.list_(an, "scenarios", "analysis.scenarios", [])
    if names and len(names) != nscen:
        raise fld.error("analysis.scenarios",
                        f"{nscen} name{'s' if nscen > 1 else ''} (one per scenario: the "
                        f"circuits give {nscen} setting{'s' if nscen > 1 else ''})", names)
    for k, x in enumerate(names):
        if not isinstance(x, str):
            raise fld.error(f"analysis.scenarios[{k}]", "a scenario name (text)", x)
        fld.check_text(x, f"analysis.scenarios[{k}]", 100)
    return AnalysisOptions(
        si, _num(fld, an, "max_iterations", "analysis.max_iterations", AnalysisOptions,
                 default_of(AnalysisOptions, "max_iterations")),
        _num(fld, an, "tolerance", "analysis.tolerance", AnalysisOptions,
             default_of(AnalysisOptions, "tolerance")),
        tuple(str(x) for x in names))


def _diversity(fld: Fields, data: dict) -> Diversity:
    dv = fld.table(data, "diversity", "diversity", required=False)
    fld.unknown(dv, {"mode", "draws", "low_deg", "high_deg", "step_deg", "seed"}, "diversity")

    def dflt(name: str) -> Any:
        return default_of(Diversity, name)

    diversity = Diversity(
        fld.str_(dv, "mode", "diversity.mode", dflt("mode"), choices=DIVERSITY_MODES),
        _num(fld, dv, "draws", "diversity.draws", Diversity, dflt("draws")),
        _num(fld, dv, "low_deg", "diversity.low_deg", Diversity, dflt("low_deg")),
        _num(fld, dv, "high_deg", "diversity.high_deg", Diversity, dflt("high_deg")),
        _num(fld, dv, "step_deg", "diversity.step_deg", Diversity, dflt("step_deg")),
        _num(fld, dv, "seed", "diversity.seed", Diversity, dflt("seed")))
    if diversity.low_deg >= diversity.high_deg:
        raise fld.error("diversity.low_deg", f"less than high_deg ({diversity.high_deg:g})",
                        diversity.low_deg)
    return diversity


def _pcc(fld: Fields, data: dict) -> PccSpec:
    from ..standards.ieee519 import EDITIONS, Edition

    pcc = fld.table(data, "pcc", "pcc", required=False)
    fld.unknown(pcc, {"demand_current_a", "short_circuit_a", "ieee519_edition", "voltage_kv"}, "pcc")
    ed = pcc.get("ieee519_edition", default_of(PccSpec, "ieee519_edition"))
    if isinstance(ed, int) and not isinstance(ed, bool):
        ed = str(ed)
    if not isinstance(ed, str) or ed not in EDITIONS:
        raise fld.error("pcc.ieee519_edition", "one of " + ", ".join(EDITIONS), ed)
    return PccSpec(
        _num(fld, pcc, "demand_current_a", "pcc.demand_current_a", PccSpec, None),
        _num(fld, pcc, "short_circuit_a", "pcc.short_circuit_a", PccSpec, None),
        _num(fld, pcc, "voltage_kv", "pcc.voltage_kv", PccSpec, None),
        cast(Edition, ed))


def _compliance(fld: Fields, data: dict) -> ComplianceOptions:
    cp = fld.table(data, "compliance", "compliance", required=False)
    fld.unknown(cp, {"strict_dimmed", "eu_ecodesign", "on_date"}, "compliance")
    strict = cp.get("strict_dimmed", default_of(ComplianceOptions, "strict_dimmed"))
    if not isinstance(strict, bool):
        raise fld.error("compliance.strict_dimmed", "true or false", strict)
    eu = cp.get("eu_ecodesign", default_of(ComplianceOptions, "eu_ecodesign"))
    if eu is not None and not isinstance(eu, bool):
        raise fld.error("compliance.eu_ecodesign", "true or false", eu)
    day = cp.get("on_date")
    if day is not None:
        import datetime as _dt

        if isinstance(day, _dt.datetime):
            day = day.date()
        if not isinstance(day, _dt.date):
            try:
                day = _dt.date.fromisoformat(str(day))
            except ValueError:
                raise fld.error("compliance.on_date", "a date YYYY-MM-DD", day) from None
        day = day.isoformat()
    return ComplianceOptions(strict, eu, day)


_PROJECT_TEXT = ("name", "site", "client", "document_number", "revision", "status", "date",
                 "prepared_by", "checked_by", "approved_by", "engineer", "notes")


def _text(fld: Fields, d: dict, key: str, field_: str) -> str:
    """A text field; a number or a TOML date is taken as written (revision = 2)."""
    v = d.get(key, "")
    if isinstance(v, bool) or isinstance(v, (dict, list)):
        raise fld.error(field_, "text", v)
    return str(v)


def _project(fld: Fields, data: dict) -> Project:
    pj = fld.table(data, "project", "project", required=False)
    fld.unknown(pj, set(_PROJECT_TEXT) | {"revisions"}, "project")
    revs = pj.get("revisions", [])
    if not isinstance(revs, list):
        raise fld.error("project.revisions", "a list of revisions, e.g. revisions = "
                        "[{rev = \"A\", date = \"2026-01-05\", description = \"first issue\", "
                        "by = \"J. Doe\"}] or [[project.revisions]] tables", revs)
    rows = []
    for k, r in enumerate(revs):
        f = f"project.revisions[{k}]"
        if not isinstance(r, dict):
            raise fld.error(f, "a table {rev, date, description, by}", r)
        fld.unknown(r, {"rev", "date", "description", "by"}, f)
        if "rev" not in r:
            raise fld.error(f"{f}.rev", "the revision's mark, e.g. \"A\" or 1 (required)")
        rows.append(Revision(*(_text(fld, r, x, f"{f}.{x}")
                               for x in ("rev", "date", "description", "by"))))
    return Project(**{k: _text(fld, pj, k, f"project.{k}") for k in _PROJECT_TEXT if k in pj},
                   revisions=tuple(rows))


def _report(fld: Fields, data: dict) -> ReportOptions:
    from ..standards.regions import PAPER_SIZES

    rp = fld.table(data, "report", "report", required=False)
    fld.unknown(rp, {"paper"}, "report")
    if "paper" not in rp:
        return ReportOptions()
    v = rp["paper"]
    known = {s.lower(): s for s in PAPER_SIZES}
    if not isinstance(v, str) or v.strip().lower() not in known:
        raise fld.error("report.paper", "one of " + ", ".join(PAPER_SIZES), v)
    return ReportOptions(known[v.strip().lower()])


def load_installation(path: str | Path, captures_outside: bool | None = None) -> Installation:
    """Read and validate an installation file; every error names file, line and field.

    Capture files are read relative to the installation file's folder; one outside it
    (``../x.csv``, an absolute path elsewhere) is refused unless ``captures_outside`` is
    True (None: the environment variable ``PQCALC_CAPTURES_OUTSIDE=1`` says).
    """
    p = Path(path)
    data, fld = read_toml(p)
    fld.unknown(data, _TOP, "")
    project = _project(fld, data)
    supply = _supply(fld, data)
    outside = (captures_outside if captures_outside is not None
               else os.environ.get(CAPTURES_OUTSIDE_ENV, "") == "1")
    fixtures = _fixtures(fld, data, p.parent, supply, outside)
    feeders = _feeders(fld, data)
    panels = _panels(fld, data, supply, fixtures, feeders)
    analysis = _analysis(fld, data, _n_scenarios(fld, panels, _named_scenarios(data)))
    return Installation(project, supply, fixtures, panels, feeders, _diversity(fld, data),
                        analysis, _pcc(fld, data), str(p), compliance=_compliance(fld, data),
                        report=_report(fld, data))
