"""The installation model: supply, fixture types, panels with circuits, feeders.

:func:`load_installation` reads and validates an installation file (TOML); the frozen
dataclasses here hold what it says. :mod:`pqcalc.assess` solves and sums it.

File layout (see ``demo_installations/harbour_school.toml`` for a commented example)::

    [project]      name, site, engineer, date, notes
    [supply]       system, voltage_ln_v, frequency_hz, and one of: source_r_ohm/source_l_h,
                   [supply.transformer] kva/impedance_pct/x_over_r, short_circuit_a/x_over_r
    [fixtures.ID]  model + power_w (+ params) | capture (+ capture options); dimming range
    [[feeders]]    id, r_ohm, l_h, neutral_r_ohm, neutral_l_h
    [[panels]]     id, feeder, neutral_ampacity_a, phase_ampacity_a
    [[panels.circuits]]  id, phase, breaker_a, breaker_curve, dimmer, conduction_deg
                   (a number or a list: one per scenario), dimmer_switch (triac |
                   transistor, leading edge), dimmer_rating_w, led_derating,
                   dimmer_min_load_w, fixtures = [{type, count}, ...]
    [analysis]     supply_interaction, scenarios (names), max_iterations
    [diversity]    mode = "none" | "summation" | "monte-carlo", draws, low_deg, high_deg, seed
    [pcc]          demand_current_a, short_circuit_a, ieee519_edition
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path
from typing import Literal, get_args

from .aggregate import LINE_ANGLES_DEG, SYSTEMS
from .checks import BREAKER_CURVES
from .errors import InputError
from .io.capture import CsvOptions
from .io.installation_file import Fields, read_toml
from .supply import SourceImpedance, from_short_circuit, from_transformer

__all__ = [
    "DimmerKind",
    "DIMMER_KINDS",
    "Project",
    "SupplySpec",
    "FixtureType",
    "FixtureGroup",
    "Circuit",
    "Panel",
    "Feeder",
    "Diversity",
    "AnalysisOptions",
    "Installation",
    "load_installation",
]

DimmerKind = Literal["leading-edge", "trailing-edge", "none"]
DIMMER_KINDS: tuple[str, ...] = get_args(DimmerKind)
DiversityMode = Literal["none", "summation", "monte-carlo"]
DIVERSITY_MODES: tuple[str, ...] = get_args(DiversityMode)


@dataclass(frozen=True)
class Project:
    name: str = ""
    site: str = ""
    engineer: str = ""
    date: str = ""
    notes: str = ""


@dataclass(frozen=True)
class SupplySpec:
    """The supply at the service: system, line-to-neutral voltage [V], frequency [Hz], the
    source impedance per line, and transformer data where known."""

    system: str
    voltage_ln_v: float
    frequency_hz: float
    impedance: SourceImpedance
    transformer_kva: float | None = None
    eddy_loss_pu: float = 0.1
    impedance_basis: str = "direct"

    @property
    def lines(self) -> tuple[str, ...]:
        return tuple(LINE_ANGLES_DEG[self.system])

    @property
    def rated_current_a(self) -> float | None:
        """Transformer rated line current [A], when the kVA is known."""
        if self.transformer_kva is None:
            return None
        return self.transformer_kva * 1e3 / (len(self.lines) * self.voltage_ln_v)

    @property
    def short_circuit_a(self) -> float:
        return self.impedance.short_circuit_current_a(self.voltage_ln_v, self.frequency_hz)


@dataclass(frozen=True)
class FixtureType:
    """A fixture type: a circuit model with parameters, or a measured capture."""

    id: str
    power_w: float
    model: str | None = None
    params: tuple[tuple[str, float], ...] = ()
    capture: str | None = None
    capture_options: CsvOptions | None = None
    min_conduction_deg: float = 30.0
    max_conduction_deg: float = 180.0
    description: str = ""

    @property
    def measured(self) -> bool:
        return self.capture is not None

    @property
    def nonlinear(self) -> bool:
        """Everything but a plain filament draws a non-sinusoidal current."""
        return self.model != "resistive"


@dataclass(frozen=True)
class FixtureGroup:
    fixture: str
    count: int


@dataclass(frozen=True)
class Circuit:
    """A branch circuit: one line, one breaker, one dimmer, groups of fixtures."""

    id: str
    panel: str
    phase: str
    groups: tuple[FixtureGroup, ...]
    breaker_a: float = 16.0
    breaker_curve: str = "B"
    dimmer: str = "none"
    conduction_deg: tuple[float, ...] = (180.0,)
    knob: tuple[float, ...] | None = None
    dimmer_rating_w: float | None = None
    led_derating: float = 0.25
    dimmer_min_load_w: float | None = None
    dimmer_params: tuple[tuple[str, float], ...] = ()
    dimmer_switch: str = "triac"
    branch_r_ohm: float = 0.0
    branch_l_h: float = 0.0
    conductor_ampacity_a: float | None = None

    def setting(self, scenario: int) -> tuple[float | None, float | None]:
        """(conduction angle [deg], knob [-]) of this circuit in a scenario."""
        if self.knob is not None:
            k = self.knob[scenario] if len(self.knob) > 1 else self.knob[0]
            return None, k
        c = self.conduction_deg[scenario] if len(self.conduction_deg) > 1 else self.conduction_deg[0]
        return c, None


@dataclass(frozen=True)
class Panel:
    id: str
    circuits: tuple[Circuit, ...]
    feeder: str | None = None
    neutral_ampacity_a: float | None = None
    phase_ampacity_a: float | None = None


@dataclass(frozen=True)
class Feeder:
    id: str
    r_ohm: float = 0.0
    l_h: float = 0.0
    neutral_r_ohm: float | None = None
    neutral_l_h: float | None = None

    @property
    def impedance(self) -> SourceImpedance:
        return SourceImpedance(
            self.r_ohm, self.l_h,
            self.r_ohm if self.neutral_r_ohm is None else self.neutral_r_ohm,
            self.l_h if self.neutral_l_h is None else self.neutral_l_h,
        )


@dataclass(frozen=True)
class Diversity:
    """Independent dimming: summation-law estimate or Monte Carlo over settings."""

    mode: str = "none"
    draws: int = 200
    low_deg: float = 45.0
    high_deg: float = 180.0
    step_deg: float = 5.0
    seed: int = 1


@dataclass(frozen=True)
class AnalysisOptions:
    supply_interaction: bool = True
    max_iterations: int = 8
    #: largest change of any harmonic voltage between iterations [fraction of V1]
    tolerance: float = 2e-4
    scenario_names: tuple[str, ...] = ()


@dataclass(frozen=True)
class Installation:
    project: Project
    supply: SupplySpec
    fixtures: dict[str, FixtureType]
    panels: tuple[Panel, ...]
    feeders: dict[str, Feeder] = field(default_factory=dict)
    diversity: Diversity = Diversity()
    analysis: AnalysisOptions = AnalysisOptions()
    pcc: dict = field(default_factory=dict)
    path: str = ""

    @property
    def circuits(self) -> tuple[Circuit, ...]:
        return tuple(c for p in self.panels for c in p.circuits)

    @property
    def n_scenarios(self) -> int:
        n = 1
        for c in self.circuits:
            n = max(n, len(c.knob) if c.knob is not None else len(c.conduction_deg))
        return n

    def scenario_name(self, k: int) -> str:
        names = self.analysis.scenario_names
        if k < len(names):
            return names[k]
        return "design" if self.n_scenarios == 1 else f"scenario {k + 1}"

    @property
    def n_lamps(self) -> int:
        return sum(g.count for c in self.circuits for g in c.groups)


# ------------------------------------------------------------------------------- reader
_TOP = {"project", "supply", "fixtures", "panels", "feeders", "analysis", "diversity", "pcc"}


def _params(fld: Fields, d: dict, field_: str) -> tuple[tuple[str, float], ...]:
    out = []
    for k, v in d.items():
        if isinstance(v, bool) or not isinstance(v, (int, float)):
            raise fld.error(f"{field_}.{k}", "a number (SI units, as the name says)", v)
        out.append((k, float(v)))
    return tuple(sorted(out))


def _supply(fld: Fields, data: dict) -> SupplySpec:
    d = fld.table(data, "supply", "supply")
    fld.unknown(d, {"system", "voltage_ln_v", "frequency_hz", "source_r_ohm", "source_l_h",
                    "short_circuit_a", "x_over_r", "transformer", "neutral_r_ohm",
                    "neutral_l_h"}, "supply")
    system = fld.str_(d, "system", "supply.system", choices=SYSTEMS)
    v = fld.num(d, "voltage_ln_v", "supply.voltage_ln_v", lo=90.0, hi=300.0)
    f = fld.num(d, "frequency_hz", "supply.frequency_hz", lo=45.0, hi=65.0)
    lines = len(LINE_ANGLES_DEG[system])
    kva = None
    eddy = 0.1
    given = [k for k in ("source_r_ohm", "short_circuit_a", "transformer") if k in d]
    if len(given) > 1:
        raise fld.error(f"supply.{given[1]}",
                        "one way to give the source impedance: source_r_ohm/source_l_h, "
                        "short_circuit_a/x_over_r or [supply.transformer]")
    if "transformer" in d:
        t = fld.table(d, "transformer", "supply.transformer")
        fld.unknown(t, {"kva", "impedance_pct", "x_over_r", "eddy_loss_pu"}, "supply.transformer")
        kva = fld.num(t, "kva", "supply.transformer.kva", positive=True)
        z = from_transformer(kva, fld.num(t, "impedance_pct", "supply.transformer.impedance_pct",
                                          lo=0.5, hi=20.0),
                             fld.num(t, "x_over_r", "supply.transformer.x_over_r", 5.0, nonneg=True),
                             v, f, lines)
        eddy = fld.num(t, "eddy_loss_pu", "supply.transformer.eddy_loss_pu", 0.1, nonneg=True)
        basis = "transformer"
    elif "short_circuit_a" in d:
        z = from_short_circuit(fld.num(d, "short_circuit_a", "supply.short_circuit_a", positive=True),
                               fld.num(d, "x_over_r", "supply.x_over_r", 3.0, nonneg=True), v, f)
        basis = "short-circuit current"
    else:
        z = SourceImpedance(fld.num(d, "source_r_ohm", "supply.source_r_ohm", 0.0, nonneg=True),
                            fld.num(d, "source_l_h", "supply.source_l_h", 0.0, nonneg=True))
        basis = "direct"
    z = SourceImpedance(z.r_ohm, z.l_h,
                        fld.num(d, "neutral_r_ohm", "supply.neutral_r_ohm", 0.0, nonneg=True),
                        fld.num(d, "neutral_l_h", "supply.neutral_l_h", 0.0, nonneg=True))
    return SupplySpec(system, v, f, z, kva, eddy, basis)


def _model_ids() -> tuple[str, ...]:
    from .circuits import MODELS  # the circuit models' stable ids

    return tuple(MODELS)


def _fixtures(fld: Fields, data: dict, base: Path) -> dict[str, FixtureType]:
    d = fld.table(data, "fixtures", "fixtures")
    if not d:
        raise fld.error("fixtures", "at least one fixture type [fixtures.NAME]")
    out = {}
    for fid, t in d.items():
        path = f"fixtures.{fid}"
        if not isinstance(t, dict):
            raise fld.error(path, "a table of the fixture type's fields", t)
        fld.unknown(t, {"model", "power_w", "params", "capture", "current_col", "voltage_col",
                        "time_col", "sample_rate_hz", "current_scale", "voltage_scale",
                        "min_conduction_deg", "max_conduction_deg", "description"}, path)
        if ("model" in t) == ("capture" in t):
            raise fld.error(path, "either model = \"...\" or capture = \"file\" (one of them)")
        power = fld.num(t, "power_w", f"{path}.power_w", positive=True) if "model" in t else \
            fld.num(t, "power_w", f"{path}.power_w", 0.0, nonneg=True)
        lo = fld.num(t, "min_conduction_deg", f"{path}.min_conduction_deg", 30.0, lo=0.0, hi=180.0)
        hi = fld.num(t, "max_conduction_deg", f"{path}.max_conduction_deg", 180.0, lo=0.0, hi=180.0)
        if lo >= hi:
            raise fld.error(f"{path}.min_conduction_deg", f"less than max_conduction_deg ({hi:g})", lo)
        desc = fld.str_(t, "description", f"{path}.description", "")
        if "model" in t:
            model = fld.str_(t, "model", f"{path}.model", choices=_model_ids())
            params = _params(fld, fld.table(t, "params", f"{path}.params", required=False),
                             f"{path}.params")
            out[fid] = FixtureType(fid, power, model, params, None, None, lo, hi, desc)
        else:
            cap = fld.str_(t, "capture", f"{path}.capture")
            cp = (base / cap) if not Path(cap).is_absolute() else Path(cap)
            if not cp.is_file():
                raise fld.error(f"{path}.capture", "an existing capture file", str(cp))
            opts = CsvOptions(
                current_col=t.get("current_col"), voltage_col=t.get("voltage_col"),
                time_col=t.get("time_col"),
                sample_rate_hz=fld.num(t, "sample_rate_hz", f"{path}.sample_rate_hz", None, positive=True),
                current_scale=fld.num(t, "current_scale", f"{path}.current_scale", 1.0, positive=True),
                voltage_scale=fld.num(t, "voltage_scale", f"{path}.voltage_scale", 1.0, positive=True),
            )
            out[fid] = FixtureType(fid, power, None, (), str(cp), opts, lo, hi, desc)
    return out


def _angles(fld: Fields, c: dict, key: str, path: str, lo: float, hi: float) -> tuple | None:
    if key not in c:
        return None
    v = c[key]
    vals = v if isinstance(v, list) else [v]
    if not vals:
        raise fld.error(f"{path}.{key}", "a number or a non-empty list of numbers", v)
    out = []
    for i, x in enumerate(vals):
        if isinstance(x, bool) or not isinstance(x, (int, float)) or not lo <= x <= hi:
            raise fld.error(f"{path}.{key}" + (f"[{i}]" if isinstance(v, list) else ""),
                            f"a number from {lo:g} to {hi:g}", x)
        out.append(float(x))
    return tuple(out)


_CIRCUIT_FIELDS = {"id", "phase", "breaker_a", "breaker_curve", "dimmer", "conduction_deg",
                   "knob", "dimmer_rating_w", "led_derating", "dimmer_min_load_w",
                   "dimmer_params", "dimmer_switch", "fixtures", "branch_r_ohm", "branch_l_h",
                   "conductor_ampacity_a", "description"}


def _circuit(fld: Fields, c: dict, path: str, panel: str, supply: SupplySpec,
             fixtures: dict[str, FixtureType]) -> Circuit:
    if not isinstance(c, dict):
        raise fld.error(path, "a table of circuit fields", c)
    fld.unknown(c, _CIRCUIT_FIELDS, path)
    cid = fld.str_(c, "id", f"{path}.id")
    phase = fld.str_(c, "phase", f"{path}.phase", choices=supply.lines)
    dimmer = fld.str_(c, "dimmer", f"{path}.dimmer", "none", choices=DIMMER_KINDS)
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
        groups.append(FixtureGroup(ftype, fld.count(g, "count", f"{gp}.count")))
    dp = _params(fld, fld.table(c, "dimmer_params", f"{path}.dimmer_params", required=False),
                 f"{path}.dimmer_params")
    return Circuit(
        id=cid, panel=panel, phase=phase, groups=tuple(groups),
        breaker_a=fld.num(c, "breaker_a", f"{path}.breaker_a", 16.0, positive=True),
        breaker_curve=fld.str_(c, "breaker_curve", f"{path}.breaker_curve", "B",
                               choices=tuple(BREAKER_CURVES)),
        dimmer=dimmer,
        conduction_deg=cond if cond is not None else (180.0,),
        knob=knob,
        dimmer_rating_w=fld.num(c, "dimmer_rating_w", f"{path}.dimmer_rating_w", None, positive=True),
        led_derating=fld.num(c, "led_derating", f"{path}.led_derating", 0.25, lo=0.01, hi=1.0),
        dimmer_min_load_w=fld.num(c, "dimmer_min_load_w", f"{path}.dimmer_min_load_w", None,
                                  nonneg=True),
        dimmer_params=dp,
        dimmer_switch=fld.str_(c, "dimmer_switch", f"{path}.dimmer_switch", "triac",
                               choices=("triac", "transistor")),
        branch_r_ohm=fld.num(c, "branch_r_ohm", f"{path}.branch_r_ohm", 0.0, nonneg=True),
        branch_l_h=fld.num(c, "branch_l_h", f"{path}.branch_l_h", 0.0, nonneg=True),
        conductor_ampacity_a=fld.num(c, "conductor_ampacity_a", f"{path}.conductor_ampacity_a",
                                     None, positive=True),
    )


def load_installation(path: str | Path) -> Installation:
    """Read and validate an installation file; every error names file, line and field."""
    p = Path(path)
    data, fld = read_toml(p)
    fld.unknown(data, _TOP, "")
    pj = fld.table(data, "project", "project", required=False)
    fld.unknown(pj, {"name", "site", "engineer", "date", "notes"}, "project")
    project = Project(**{k: str(v) for k, v in pj.items()})
    supply = _supply(fld, data)
    fixtures = _fixtures(fld, data, p.parent)

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
            fid, fld.num(f, "r_ohm", f"{fp}.r_ohm", 0.0, nonneg=True),
            fld.num(f, "l_h", f"{fp}.l_h", 0.0, nonneg=True),
            fld.num(f, "neutral_r_ohm", f"{fp}.neutral_r_ohm", None, nonneg=True),
            fld.num(f, "neutral_l_h", f"{fp}.neutral_l_h", None, nonneg=True))

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
        fld.unknown(pd, {"id", "feeder", "circuits", "neutral_ampacity_a", "phase_ampacity_a",
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
        clist = fld.list_(pd, "circuits", f"{pp}.circuits")
        for j, c in enumerate(clist):
            cp = f"{pp}.circuits[{j}]"
            circ = _circuit(fld, c, cp, pid, supply, fixtures)
            if circ.id in seen_circuits:
                raise fld.error(f"{cp}.id", "a circuit id not used before", circ.id)
            seen_circuits.add(circ.id)
            circuits.append(circ)
        panels.append(Panel(pid, tuple(circuits), feeder,
                            fld.num(pd, "neutral_ampacity_a", f"{pp}.neutral_ampacity_a", None,
                                    positive=True),
                            fld.num(pd, "phase_ampacity_a", f"{pp}.phase_ampacity_a", None,
                                    positive=True)))

    inst_circuits = [c for p_ in panels for c in p_.circuits]
    nscen = 1
    for c in inst_circuits:
        n = len(c.knob) if c.knob is not None else len(c.conduction_deg)
        if n > 1:
            if nscen > 1 and n != nscen:
                raise InputError(
                    f"{p}: circuit {c.id}: {n} settings, but another circuit has {nscen}; "
                    "expected one setting or the same number of settings (one per scenario)")
            nscen = n

    an = fld.table(data, "analysis", "analysis", required=False)
    fld.unknown(an, {"supply_interaction", "max_iterations", "tolerance", "scenarios"}, "analysis")
    si = an.get("supply_interaction", True)
    if not isinstance(si, bool):
        raise fld.error("analysis.supply_interaction", "true or false", si)
    names = fld.list_(an, "scenarios", "analysis.scenarios", [])
    if names and len(names) != nscen:
        raise fld.error("analysis.scenarios", f"{nscen} names (one per scenario)", names)
    analysis = AnalysisOptions(
        si, int(fld.num(an, "max_iterations", "analysis.max_iterations", 8, lo=1, hi=50)),
        fld.num(an, "tolerance", "analysis.tolerance", 2e-4, positive=True),
        tuple(str(x) for x in names))

    dv = fld.table(data, "diversity", "diversity", required=False)
    fld.unknown(dv, {"mode", "draws", "low_deg", "high_deg", "step_deg", "seed"}, "diversity")
    diversity = Diversity(
        fld.str_(dv, "mode", "diversity.mode", "none", choices=DIVERSITY_MODES),
        int(fld.num(dv, "draws", "diversity.draws", 200, lo=1, hi=100000)),
        fld.num(dv, "low_deg", "diversity.low_deg", 45.0, lo=0.0, hi=180.0),
        fld.num(dv, "high_deg", "diversity.high_deg", 180.0, lo=0.0, hi=180.0),
        fld.num(dv, "step_deg", "diversity.step_deg", 5.0, lo=0.5, hi=90.0),
        int(fld.num(dv, "seed", "diversity.seed", 1)))
    if diversity.low_deg >= diversity.high_deg:
        raise fld.error("diversity.low_deg", f"less than high_deg ({diversity.high_deg:g})",
                        diversity.low_deg)

    pcc = fld.table(data, "pcc", "pcc", required=False)
    fld.unknown(pcc, {"demand_current_a", "short_circuit_a", "ieee519_edition", "voltage_kv"}, "pcc")
    for k in ("demand_current_a", "short_circuit_a", "voltage_kv"):
        if k in pcc:
            fld.num(pcc, k, f"pcc.{k}", positive=True)

    return Installation(project, supply, fixtures, tuple(panels), feeders, diversity, analysis,
                        dict(pcc), str(p))
