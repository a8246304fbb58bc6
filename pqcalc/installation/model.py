"""The installation's data: supply, fixture types, panels with circuits, feeders, options.

Frozen dataclasses, filled by :func:`pqcalc.installation.file.load_installation` from an
installation file. Every default value of a field is declared here, once; the file reader
takes its defaults from these declarations.

Option lists (supply systems and their lines, dimmer kinds, dimmer switches, breaker curves,
diversity modes) are declared once, as ``Literal`` types with their tuples of values, and
used by the library, the file validator and the command line.
"""

from __future__ import annotations

from dataclasses import MISSING, dataclass, field, fields
from typing import Any, ClassVar, Literal, get_args

import numpy as np

from ..circuits.ranges import COMPONENT_RANGES
from ..circuits.spec import DIMMER_KINDS, SWITCH_KINDS, DimmerKind, SwitchKind
from ..errors import InputError
from ..io.capture import CsvOptions
from ..io.installation_file import Bounds
from ..standards.ieee519 import Edition

__all__ = [
    "System", "SYSTEMS", "LINE_ANGLES_DEG", "DimmerKind", "DIMMER_KINDS", "SwitchKind",
    "SWITCH_KINDS", "DiversityMode", "DIVERSITY_MODES",
    "Project", "Revision", "ReportOptions", "SourceImpedance", "SupplySpec",
    "ModelledFixture", "MeasuredFixture",
    "FixtureType", "FixtureGroup", "Circuit", "Panel", "Feeder", "Diversity",
    "AnalysisOptions", "PccSpec", "ComplianceOptions", "Installation", "default_of",
    "Bounds", "bounds_of", "PARAM_BOUNDS", "MAX_SCENARIOS",
]

System = Literal["single-phase", "split-phase", "three-phase-wye"]
#: Supply systems and the voltage angle of each line [deg] on the L1 reference. A line is a
#: line conductor (L1, L2, L3); a *conductor* is a line or the neutral N.
LINE_ANGLES_DEG: dict[str, dict[str, float]] = {
    "single-phase": {"L1": 0.0},
    "split-phase": {"L1": 0.0, "L2": 180.0},
    "three-phase-wye": {"L1": 0.0, "L2": -120.0, "L3": 120.0},
}
SYSTEMS: tuple[str, ...] = get_args(System)

DiversityMode = Literal["none", "summation", "monte-carlo"]
DIVERSITY_MODES: tuple[str, ...] = get_args(DiversityMode)


def default_of(cls: type, name: str) -> Any:
    """The declared default of dataclass field ``name`` of ``cls`` (the one place defaults
    live; the file reader asks here)."""
    for f in fields(cls):
        if f.name == name:
            if f.default is not MISSING:
                return f.default
            if f.default_factory is not MISSING:
                return f.default_factory()
            raise KeyError(f"{cls.__name__}.{name} has no default")
    raise KeyError(f"{cls.__name__} has no field {name}")


def bounds_of(cls: type, name: str) -> Bounds | None:
    """The physically sensible range declared beside dataclass field ``name`` of ``cls``
    (``field(metadata=_range(...))``; the file reader holds every value to it)."""
    for f in fields(cls):
        if f.name == name:
            b = f.metadata.get("bounds")
            return b if isinstance(b, Bounds) else None
    raise KeyError(f"{cls.__name__} has no field {name}")


def _range(lo: float, hi: float, why: str, lo_open: bool = False,
           whole: bool = False) -> dict[str, Bounds]:
    return {"bounds": Bounds(lo, hi, why, lo_open, whole)}


_R_OHM = _range(0.0, 10.0, "a source or cable of more than 10 ohm per line could not carry "
                "a lighting load")
_L_H = _range(0.0, 0.1, "0.1 H is 31 ohm at 50 Hz, past any supply or cable")
_AMPS = _range(0.0, 1e5, "a building's conductors", lo_open=True)

#: Component values of the circuit models (fixture ``params``, circuit ``dimmer_params``),
#: by the unit the model gives each one (:data:`pqcalc.circuits.ranges.COMPONENT_RANGES`, the
#: one declaration the solver also holds given values to).
PARAM_BOUNDS: dict[str, Bounds] = {unit: Bounds(lo, hi, why)
                                   for unit, (lo, hi, why) in COMPONENT_RANGES.items()}

#: The most scenarios (settings per circuit) a file may give: each is a whole study
#: (1,000 took 11.6 s and 431 MB, and the report would be unreadable).
MAX_SCENARIOS = 100


@dataclass(frozen=True)
class Revision:
    """One row of the document's revision table."""

    rev: str
    date: str = ""
    description: str = ""
    by: str = ""


@dataclass(frozen=True)
class Project:
    """What a reviewer files the study by: the title block and the revision table of the
    report. ``engineer`` is the older name of ``prepared_by`` (used when that is blank)."""

    name: str = ""
    site: str = ""
    engineer: str = ""
    date: str = ""
    notes: str = ""
    client: str = ""
    document_number: str = ""
    revision: str = ""
    status: str = ""
    prepared_by: str = ""
    checked_by: str = ""
    approved_by: str = ""
    revisions: tuple[Revision, ...] = ()

    @property
    def preparer(self) -> str:
        return self.prepared_by or self.engineer

    def to_dict(self) -> dict[str, Any]:
        """The JSON form: every field, the revisions as a list of objects."""
        d = {f.name: getattr(self, f.name) for f in fields(self)}
        d["revisions"] = [vars(r) for r in self.revisions]
        return d


@dataclass(frozen=True)
class ReportOptions:
    """The PDF submittal: ``paper`` "A4" or "Letter"; None: the rule set's (A4 for IEC,
    Letter for US)."""

    paper: str | None = None


@dataclass(frozen=True)
class SourceImpedance:
    """Series R-L per line [ohm], [H], and the same for the neutral return path."""

    r_ohm: float = field(default=0.0, metadata=_R_OHM)
    l_h: float = field(default=0.0, metadata=_L_H)
    neutral_r_ohm: float = field(default=0.0, metadata=_R_OHM)
    neutral_l_h: float = field(default=0.0, metadata=_L_H)

    def __post_init__(self) -> None:
        for name in ("r_ohm", "l_h", "neutral_r_ohm", "neutral_l_h"):
            v = getattr(self, name)
            if not (np.isfinite(v) and v >= 0):
                raise InputError(f"{name}: expected a non-negative number, got {v}")

    def __add__(self, other: SourceImpedance) -> SourceImpedance:
        return SourceImpedance(self.r_ohm + other.r_ohm, self.l_h + other.l_h,
                               self.neutral_r_ohm + other.neutral_r_ohm,
                               self.neutral_l_h + other.neutral_l_h)

    @property
    def is_zero(self) -> bool:
        return (self.r_ohm + self.l_h + self.neutral_r_ohm + self.neutral_l_h) == 0

    def magnitude_ohm(self, frequency_hz: float) -> float:
        """|Z| of the line at the fundamental [ohm]."""
        return float(abs(self.r_ohm + 2j * np.pi * frequency_hz * self.l_h))

    def short_circuit_current_a(self, v_ln_v: float, frequency_hz: float) -> float:
        """Prospective bolted short-circuit current ``V_LN / |Z_line|`` [A] (line impedance only)."""
        z = self.magnitude_ohm(frequency_hz)
        return float("inf") if z == 0 else v_ln_v / z


@dataclass(frozen=True)
class SupplySpec:
    """The supply at the service: system, line-to-neutral voltage [V], frequency [Hz], the
    source impedance per line, and transformer data where known."""

    system: str
    voltage_ln_v: float = field(metadata=_range(
        100.0, 277.0, "line to neutral: what the circuit models are built for, "
        "pqcalc.circuits.spec.Supply"))
    frequency_hz: float = field(metadata=_range(45.0, 65.0, "50 Hz or 60 Hz mains"))
    impedance: SourceImpedance = SourceImpedance()
    transformer_kva: float | None = field(default=None, metadata=_range(
        1.0, 1e5, "a building's service transformer", lo_open=True))
    #: rated winding eddy-current loss P_EC-R [pu] (typical of a dry-type unit, from memory)
    eddy_loss_pu: float = field(default=0.1, metadata=_range(
        0.0, 2.0, "rated eddy loss over I2R loss: a few percent to about 1 (from memory)"))
    impedance_basis: str = "direct"
    #: the regional rule set (``"IEC"`` or ``"US"``; :mod:`pqcalc.standards.regions`)
    rules: str = "IEC"

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
class _Fixture:
    id: str
    power_w: float = field(metadata=_range(0.0, 1e4, "one luminaire's rated input power; "
                                         "0 for a measured one: not declared"))
    min_conduction_deg: float = field(default=30.0, metadata=_range(0.0, 180.0, "a half cycle"))
    max_conduction_deg: float = field(default=180.0, metadata=_range(0.0, 180.0, "a half cycle"))
    description: str = ""
    #: the equipment dims itself (built-in dimming): its dimmed states are part of its
    #: IEC 61000-3-2 verdict; False: dimmed by an independent dimmer, dimmed states
    #: informative (pqcalc.standards.iec61000_3_2.evaluate_dimmable)
    builtin_dimming: bool = field(default=False, kw_only=True)


@dataclass(frozen=True)
class ModelledFixture(_Fixture):
    """A fixture type from a circuit model of :mod:`pqcalc.circuits` with its rated power
    [W] and component overrides (SI units, as each name says)."""

    model: str = "resistive"
    params: tuple[tuple[str, float], ...] = ()

    measured: ClassVar[bool] = False
    capture: ClassVar[None] = None
    capture_options: ClassVar[None] = None

    @property
    def nonlinear(self) -> bool:
        """Everything but a plain filament draws a non-sinusoidal current."""
        return self.model != "resistive"


@dataclass(frozen=True)
class MeasuredFixture(_Fixture):
    """A fixture type from a measured capture (CSV or COMTRADE), used as recorded;
    ``power_w`` is the declared power (needed when the capture has no voltage)."""

    capture: str = ""
    capture_options: CsvOptions | None = None

    measured: ClassVar[bool] = True
    model: ClassVar[None] = None
    params: ClassVar[tuple[tuple[str, float], ...]] = ()
    nonlinear: ClassVar[bool] = True


FixtureType = ModelledFixture | MeasuredFixture


@dataclass(frozen=True)
class FixtureGroup:
    fixture: str
    count: int = field(metadata=_range(
        1, 10_000, "a 16 A 230 V circuit feeds a few hundred lamps; 10,000 leaves room for a "
        "circuit standing for a whole floor", whole=True))


@dataclass(frozen=True)
class Circuit:
    """A branch circuit: one line, one breaker, one dimmer, groups of fixtures."""

    id: str
    panel: str
    line: str
    groups: tuple[FixtureGroup, ...]
    breaker_a: float = field(default=16.0, metadata=_range(
        0.5, 630.0, "final-circuit breakers, 0.5 A to 630 A"))
    #: breaker type of the rule set (IEC: B, C, D; US: TM, B, C, D); "" = the set's default
    breaker_curve: str = ""
    #: the maker's instantaneous pickup [x In] (needed for a US thermal-magnetic breaker's
    #: pulse withstand; overrides the rule set's band where given)
    breaker_pickup_x_in: float | None = None
    #: the maker's pulse-withstand table: (widths at half peak [s], allowed peaks [A])
    breaker_pulse_table: tuple[tuple[float, ...], tuple[float, ...]] | None = None
    dimmer: str = "none"
    #: dimmer settings as conduction angles [deg], one per scenario (or one for all)
    conduction_deg: tuple[float, ...] = (180.0,)
    #: or knob positions [-] of a leading-edge dimmer's firing network
    knob: tuple[float, ...] | None = None
    dimmer_rating_w: float | None = field(default=None, metadata=_range(
        0.0, 1e5, "wall dimmers to dimmer racks", lo_open=True))
    #: usable share of a filament-watt dimmer rating for LED load [-] (common practice)
    led_derating: float = field(default=0.25, metadata=_range(0.01, 1.0, "a share"))
    dimmer_min_load_w: float | None = field(default=None, metadata=_range(
        0.0, 1e4, "a dimmer's minimum load"))
    dimmer_params: tuple[tuple[str, float], ...] = ()
    dimmer_switch: str = "triac"
    #: branch impedance given directly, loop (line + neutral) [ohm], [H]
    branch_r_ohm: float = field(default=0.0, metadata=_R_OHM)
    branch_l_h: float = field(default=0.0, metadata=_L_H)
    #: the branch cable's loop impedance from its length, size and material [ohm], [H]
    cable_r_ohm: float = 0.0
    cable_l_h: float = 0.0
    cable: str = ""
    conductor_ampacity_a: float | None = field(default=None, metadata=_AMPS)
    #: random spread of the dimmer's firing angle, standard deviation per half cycle [deg]
    #: (0: none); turned into Pst_LM by pqcalc.light.dimmer_jitter_pst_lm
    dimmer_jitter_deg: float = field(default=0.0, metadata=_range(
        0.0, 30.0, "a standard deviation of the firing angle; past 30 deg the dimmer no "
        "longer holds a setting"))

    def setting(self, scenario: int) -> tuple[float | None, float | None]:
        """(conduction angle [deg], knob [-]) of this circuit's dimmer in a scenario."""
        if self.knob is not None:
            k = self.knob[scenario] if len(self.knob) > 1 else self.knob[0]
            return None, k
        c = self.conduction_deg[scenario] if len(self.conduction_deg) > 1 else self.conduction_deg[0]
        return c, None

    @property
    def loop_r_ohm(self) -> float:
        """The branch's loop resistance: given plus cable [ohm]."""
        return self.branch_r_ohm + self.cable_r_ohm

    @property
    def loop_l_h(self) -> float:
        """The branch's loop inductance: given plus cable [H]."""
        return self.branch_l_h + self.cable_l_h

    @property
    def n_settings(self) -> int:
        return len(self.knob) if self.knob is not None else len(self.conduction_deg)


@dataclass(frozen=True)
class Panel:
    id: str
    circuits: tuple[Circuit, ...]
    feeder: str | None = None
    neutral_ampacity_a: float | None = field(default=None, metadata=_AMPS)
    line_ampacity_a: float | None = field(default=None, metadata=_AMPS)


@dataclass(frozen=True)
class Feeder:
    id: str
    r_ohm: float = field(default=0.0, metadata=_R_OHM)
    l_h: float = field(default=0.0, metadata=_L_H)
    neutral_r_ohm: float | None = field(default=None, metadata=_R_OHM)
    neutral_l_h: float | None = field(default=None, metadata=_L_H)

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
    draws: int = field(default=200, metadata=_range(
        1, 10_000, "10,000 draws give a 95th percentile to a fraction of a percent",
        whole=True))
    low_deg: float = field(default=45.0, metadata=_range(0.0, 180.0, "a half cycle"))
    high_deg: float = field(default=180.0, metadata=_range(0.0, 180.0, "a half cycle"))
    step_deg: float = field(default=5.0, metadata=_range(0.5, 90.0, "a dimmer's setting step"))
    seed: int = field(default=1, metadata=_range(
        0, 2**32 - 1, "the seeds numpy's generator takes", whole=True))


@dataclass(frozen=True)
class AnalysisOptions:
    supply_interaction: bool = True
    #: passes of the supply interaction, the stiff-supply pass included: the demos settle
    #: in 3-4; the campus demo in 6-7 (its dimmed rectifier lamps at the resonant ends of
    #: long feeders take the most)
    max_iterations: int = field(default=12, metadata=_range(
        1, 50, "the interaction settles in a few passes", whole=True))
    #: largest mismatch of any harmonic voltage between what a circuit was solved under and
    #: what the currents make at its panel [fraction of V1]
    tolerance: float = field(default=2e-4, metadata=_range(
        1e-9, 0.1, "of the fundamental voltage"))
    scenario_names: tuple[str, ...] = ()


@dataclass(frozen=True)
class PccSpec:
    """The point of common coupling for IEEE 519: the building's maximum demand current
    [A], the short-circuit current there [A] (default: from the source impedance), the
    nominal line-to-line voltage [kV] (default: from the supply) and the edition."""

    demand_current_a: float | None = field(default=None, metadata=_AMPS)
    short_circuit_a: float | None = field(default=None, metadata=_range(
        0.0, 1e7, "a point of common coupling's short-circuit current", lo_open=True))
    voltage_kv: float | None = field(default=None, metadata=_range(
        0.1, 1000.0, "line to line at the point of common coupling"))
    ieee519_edition: Edition = "2022"

    def to_dict(self) -> dict:
        return {k: v for k, v in vars(self).items() if v is not None}


@dataclass(frozen=True)
class ComplianceOptions:
    """How the fixture lineup is judged: ``strict_dimmed`` holds the dimmed states behind
    independent dimmers to pass/fail (an owner's requirement beyond IEC 61000-3-2);
    ``eu_ecodesign`` applies the EU ecodesign rules for light sources (Regulation (EU)
    2019/2020) at full output, None: by the supply (on for 230/400 V 50 Hz,
    :func:`pqcalc.installation.lineup.eu_ecodesign_default`)."""

    strict_dimmed: bool = False
    eu_ecodesign: bool | None = None
    #: the date the rules are taken at (ISO ``YYYY-MM-DD``); None: the project's date when
    #: it is one, else today (a submittal is judged on the rules of its own date)
    on_date: str | None = None


@dataclass(frozen=True)
class Installation:
    project: Project
    supply: SupplySpec
    fixtures: dict[str, FixtureType]
    panels: tuple[Panel, ...]
    feeders: dict[str, Feeder] = field(default_factory=dict)
    diversity: Diversity = Diversity()
    analysis: AnalysisOptions = AnalysisOptions()
    pcc: PccSpec = PccSpec()
    path: str = ""
    compliance: ComplianceOptions = field(default=ComplianceOptions(), kw_only=True)
    report: ReportOptions = field(default=ReportOptions(), kw_only=True)

    @property
    def circuits(self) -> tuple[Circuit, ...]:
        return tuple(c for p in self.panels for c in p.circuits)

    @property
    def n_scenarios(self) -> int:
        return max((c.n_settings for c in self.circuits), default=1)

    def scenario_name(self, k: int) -> str:
        names = self.analysis.scenario_names
        if k < len(names):
            return names[k]
        return "design" if self.n_scenarios == 1 else f"scenario {k + 1}"

    @property
    def n_lamps(self) -> int:
        return sum(g.count for c in self.circuits for g in c.groups)

    @property
    def has_source_impedance(self) -> bool:
        return not self.supply.impedance.is_zero or any(
            (f.r_ohm + f.l_h) > 0 for f in self.feeders.values())

    def nonlinear_share(self) -> float:
        """Share of the connected (rated) load drawn by non-linear fixtures [-]."""
        tot = nl = 0.0
        for c in self.circuits:
            for g in c.groups:
                ft = self.fixtures[g.fixture]
                w = g.count * ft.power_w
                tot += w
                nl += w if ft.nonlinear else 0.0
        return nl / tot if tot > 0 else 0.0
