"""Generate the invented campus installation in this folder: ``linden_reach_college.toml``.

Scenario (invented): Linden Reach College, a college campus of twelve buildings on its own
11 kV / 400 V substation, replaces its halogen and incandescent lamps with LED lamps and
keeps most of its wall and rail-mounted dimmers. Every building's lighting is fed from the
substation's main low-voltage board by its own four-core submain (a feeder per panel);
circuits are laid out as an engineer's schedule would list them: a few room types repeated
across floors (a classroom has two dimmed rows of panels, a corridor a switched run of
lamps...), each circuit with its breaker, its branch cable and, where dimmed, its dimmer's
rating and its setting in each of three scenarios:

* ``daytime``: teaching spaces dimmed by daylight, residences dimmed low;
* ``evening``: auditoria and the Great Hall dimmed for presentations and a show,
  residences full;
* ``cleaning``: the cleaners turn every dimmer to full.

Room types (``ROOM_TYPES``) repeat exactly (same lamps, same dimmer), as they do in a
building, so the study's distinct cases stay few; the branch cable runs differ (a few
lengths per room type, rounded to 5 m as a schedule gives them), chosen with a seeded
generator, so the file is the same on every run. Run ``python make_campus.py`` to rewrite it;
edit this script, not the generated file.

Electrical figures and their basis:

* breakers: IEC 60898-1 types B and C, 10 A on 1.5 mm2 and 16 A on 2.5 mm2 branch cable
  (common practice for lighting circuits); the steady load of every circuit is far below In
  (IEC 60364-4-43, 433.1: IB <= In);
* dimmer ratings in filament watts from the usual sizes (400, 600, 1000, 2000 W), with the
  LED load counted at 1 / led_derating = 4 times its watts (common practice); every dimmed
  circuit's load is within its rating by that rule;
* submains: copper, IEC 60228 class 2 largest DC resistance at 20 degC corrected to 70 degC
  (a PVC cable at its operating temperature), 0.08 mohm/m reactance per conductor (common
  practice, from memory): ``pqcalc.circuits.inrush.cable_impedance``, one conductor of its
  loop; the neutral is full size;
* panel ampacities: IEC 60364-5-52 Table B.52.4, reference method C, three loaded copper
  conductors in PVC (from memory): 10 mm2 57 A, 16 mm2 76 A, 25 mm2 96 A, 35 mm2 119 A;
* the source: a 1000 kVA 11/0.4 kV transformer, 6 % impedance, X/R 7 (typical of a
  distribution transformer of that size, common practice).
"""

from __future__ import annotations

import random
from dataclasses import dataclass
from pathlib import Path

from pqcalc.circuits.inrush import cable_impedance

HERE = Path(__file__).parent
OUT = HERE / "linden_reach_college.toml"
SEED = 20261202
SCENARIOS = ("daytime", "evening", "cleaning")

# ---------------------------------------------------------------- fixture types
# id: (model, power_w, description, extra TOML fields)
FIXTURES: dict[str, tuple[str, float, str, str]] = {
    "classroom-panel": ("pfc", 36.0, "36 W 600 x 600 LED panel, active PFC driver, "
                        "phase-cut dimmable", ""),
    "lab-batten": ("pfc", 40.0, "40 W LED batten, active PFC driver (switched)", ""),
    "sports-highbay": ("pfc", 150.0, "150 W LED high bay, active PFC driver (switched)", ""),
    "floodlight": ("pfc", 100.0, "100 W LED floodlight, active PFC driver, photocell "
                   "switched", ""),
    "downlight-9w": ("bulk-cap", 9.0, "9 W retrofit downlight, bulk-capacitor driver",
                     "min_conduction_deg = 45"),
    "gu10-5w": ("bulk-cap", 5.0, "5 W GU10 retrofit lamp, bulk-capacitor driver",
                "min_conduction_deg = 50"),
    "mirror-light": ("bulk-cap", 6.0, "6 W bathroom mirror light, bulk-capacitor driver", ""),
    "corridor-lamp": ("dropper", 5.0, "5 W corridor lamp, capacitive dropper", ""),
    "candle-3w": ("dropper", 3.0, "3 W candle lamp, capacitive dropper", ""),
    "filament-a60": ("sine-follow", 8.0, "8 W A60 filament-style lamp, tapped linear "
                     "(sine-following) driver", ""),
    "gallery-spot": ("sine-follow", 15.0, "15 W track spot, tapped linear driver", ""),
    "post-top": ("sine-follow", 20.0, "20 W post-top lantern, tapped linear driver", ""),
    "reading-pendant": ("pwm-detect", 25.0, "25 W reading pendant, phase-detecting PWM "
                        "driver", ""),
    "stage-halogen": ("resistive", 500.0, "500 W halogen stage flood, kept as it is", ""),
    "house-halogen": ("resistive", 60.0, "60 W halogen house light, kept as it is", ""),
}


@dataclass(frozen=True)
class RoomType:
    """One kind of branch circuit, repeated across the campus."""

    what: str
    fixtures: tuple[tuple[str, int], ...]
    breaker_a: int = 10
    curve: str = "B"
    dimmer: str = "none"
    switch: str = "triac"
    settings: tuple[int, int, int] | None = None     # conduction [deg] per scenario
    rating_w: int | None = None
    min_load_w: int | None = None
    lengths_m: tuple[int, ...] = (15, 20, 25)

    @property
    def size_mm2(self) -> float:
        return 2.5 if self.breaker_a > 10 else 1.5


LE, TE, NO = "leading-edge", "trailing-edge", "none"
ROOM_TYPES: dict[str, RoomType] = {
    # teaching: two rows of panels per classroom on a trailing-edge rail dimmer each
    "class-window": RoomType("classroom, window row", (("classroom-panel", 6),), dimmer=TE,
                             settings=(110, 180, 180), rating_w=1000, min_load_w=40),
    "class-inner": RoomType("classroom, inner row", (("classroom-panel", 6),), dimmer=TE,
                            settings=(150, 180, 180), rating_w=1000, min_load_w=40),
    "seminar": RoomType("seminar room downlights", (("downlight-9w", 14),), dimmer=LE,
                        settings=(135, 150, 180), rating_w=600, min_load_w=40),
    "staff-office": RoomType("staff offices", (("classroom-panel", 8),), curve="C"),
    "corridor": RoomType("corridor", (("corridor-lamp", 20),), curve="C",
                         lengths_m=(30, 40)),
    "stair": RoomType("stair and landing", (("corridor-lamp", 12),), curve="C",
                      lengths_m=(20, 30)),
    "toilets": RoomType("toilets", (("gu10-5w", 10),), curve="C", lengths_m=(15, 25)),
    # auditoria: house downlights and a presenter's wash on triac dimmers
    "lt-house": RoomType("auditorium house lights", (("downlight-9w", 16),),
                         dimmer=LE, settings=(150, 90, 180), rating_w=1000, min_load_w=40,
                         lengths_m=(20, 30)),
    "lt-presenter": RoomType("auditorium presenter's wash", (("house-halogen", 4),),
                             dimmer=LE, settings=(180, 120, 180), rating_w=600,
                             lengths_m=(20, 30)),
    # library: reading pendants on transistor (electronic leading-edge) dimmers
    "lib-reading": RoomType("reading room pendants", (("reading-pendant", 8),), dimmer=LE,
                            switch="transistor", settings=(150, 120, 180), rating_w=1000),
    "lib-stacks": RoomType("book stacks", (("lab-batten", 8),), curve="C"),
    "lib-display": RoomType("display cases", (("gu10-5w", 12),), dimmer=LE,
                            settings=(135, 100, 180), rating_w=400, min_load_w=25,
                            lengths_m=(15, 25)),
    # science and studios
    "lab": RoomType("laboratory battens", (("lab-batten", 8),), curve="C"),
    "prep-room": RoomType("prep room downlights", (("downlight-9w", 10),), curve="C",
                          lengths_m=(15, 25)),
    "gallery": RoomType("gallery track", (("gallery-spot", 8),), dimmer=LE,
                        switch="transistor", settings=(150, 120, 180), rating_w=600,
                        lengths_m=(20, 30)),
    # Great Hall: stage floods and house lights on the existing thyristor dimmer rack
    "gh-stage": RoomType("stage floods", (("stage-halogen", 2),), breaker_a=16, curve="C",
                         dimmer=LE, settings=(150, 120, 180), rating_w=2000,
                         lengths_m=(30, 40)),
    "gh-house-halogen": RoomType("house lights (halogen kept)", (("house-halogen", 8),),
                                 dimmer=LE, settings=(180, 100, 180), rating_w=1000,
                                 lengths_m=(30, 40)),
    "gh-house-mixed": RoomType("house lights (part retrofitted)",
                               (("downlight-9w", 12), ("house-halogen", 2)), dimmer=LE,
                               settings=(180, 100, 180), rating_w=1000, lengths_m=(30, 40)),
    "gh-foyer": RoomType("foyer chandeliers", (("candle-3w", 10), ("filament-a60", 4)),
                         dimmer=TE, settings=(150, 120, 180), rating_w=400,
                         lengths_m=(20, 30)),
    # sports centre
    "highbay": RoomType("sports hall high bays", (("sports-highbay", 6),), breaker_a=16,
                        curve="C", lengths_m=(30, 40)),
    "changing": RoomType("changing rooms", (("downlight-9w", 12),), curve="C"),
    # refectory
    "ref-pendant": RoomType("dining pendants", (("reading-pendant", 6),), dimmer=TE,
                            settings=(180, 120, 180), rating_w=1000, min_load_w=40),
    "ref-downlight": RoomType("dining downlights", (("downlight-9w", 16),), dimmer=TE,
                              settings=(150, 110, 180), rating_w=1000, min_load_w=40),
    "kitchen": RoomType("kitchen battens", (("lab-batten", 8),), curve="C"),
    # residences: bedrooms switched, common rooms on triac dimmers
    "res-bedrooms": RoomType("bedrooms (six rooms)", (("filament-a60", 6),
                                                      ("mirror-light", 6)), curve="C",
                             lengths_m=(20, 30)),
    "res-common": RoomType("common room", (("filament-a60", 10),), dimmer=LE,
                           settings=(90, 150, 180), rating_w=400, min_load_w=40),
    "res-kitchen": RoomType("shared kitchen", (("classroom-panel", 4),), curve="C"),
    # administration
    "adm-office": RoomType("open office", (("classroom-panel", 8),), curve="C"),
    "adm-meeting": RoomType("meeting room", (("downlight-9w", 10),), dimmer=LE,
                            switch="transistor", settings=(150, 120, 180), rating_w=400,
                            min_load_w=25),
    # grounds: long runs on 16 A breakers and 2.5 mm2 cable
    "ext-flood": RoomType("car park floodlights", (("floodlight", 4),), breaker_a=16,
                          curve="C", lengths_m=(60, 80)),
    "ext-path": RoomType("path lanterns", (("post-top", 8),), breaker_a=16, curve="C",
                         lengths_m=(80, 100)),
}


@dataclass(frozen=True)
class PanelPlan:
    id: str
    where: str
    feeder_m: int
    feeder_mm2: float
    rooms: tuple[tuple[str, int], ...]   # (room type, number of circuits)


def floor(pid: str, where: str, m: int, mm2: float, classrooms: int,
          extra: tuple[tuple[str, int], ...] = ()) -> PanelPlan:
    """A teaching floor: two dimmed rows per classroom, corridors, a stair, toilets."""
    rooms = (("class-window", classrooms), ("class-inner", classrooms), ("corridor", 2),
             ("stair", 1), ("toilets", 2)) + extra
    return PanelPlan(pid, where, m, mm2, rooms)


PANELS: tuple[PanelPlan, ...] = (
    PanelPlan("LIB-G", "Library, ground floor", 85, 25, (
        ("lib-reading", 6), ("lib-stacks", 6), ("lib-display", 4), ("corridor", 2),
        ("toilets", 2))),
    PanelPlan("LIB-1", "Library, first floor", 95, 25, (
        ("lib-reading", 8), ("lib-stacks", 6), ("seminar", 4), ("stair", 2))),
    PanelPlan("LIB-2", "Library, second floor", 105, 25, (
        ("lib-reading", 6), ("lib-stacks", 8), ("seminar", 2), ("stair", 2), ("toilets", 1))),
    floor("TN-G", "North teaching block, ground floor", 140, 25, 6,
          (("staff-office", 2),)),
    floor("TN-1", "North teaching block, first floor", 150, 25, 7, (("seminar", 2),)),
    floor("TN-2", "North teaching block, second floor", 160, 25, 7, (("seminar", 2),)),
    floor("TN-3", "North teaching block, third floor", 170, 25, 6, (("staff-office", 3),)),
    floor("TS-G", "South teaching block, ground floor", 120, 16, 6, (("seminar", 2),)),
    floor("TS-1", "South teaching block, first floor", 130, 16, 7, ()),
    floor("TS-2", "South teaching block, second floor", 140, 16, 6, (("staff-office", 2),)),
    PanelPlan("SCI-G", "Science building, ground floor", 210, 25, (
        ("lab", 9), ("prep-room", 4), ("corridor", 3), ("toilets", 2), ("stair", 1))),
    PanelPlan("SCI-1", "Science building, first floor", 220, 25, (
        ("lab", 9), ("prep-room", 3), ("seminar", 2), ("corridor", 3), ("stair", 1))),
    PanelPlan("LT-1", "Auditoria A and B", 60, 16, (
        ("lt-house", 8), ("lt-presenter", 4), ("corridor", 2), ("stair", 2), ("toilets", 2))),
    PanelPlan("GH-STAGE", "Great Hall, stage dimmer rack", 45, 35, (
        ("gh-stage", 12), ("gh-house-halogen", 3), ("gh-house-mixed", 3))),
    PanelPlan("GH-HOUSE", "Great Hall, house and foyer", 50, 16, (
        ("gh-house-mixed", 6), ("gh-foyer", 6), ("corridor", 2), ("toilets", 2),
        ("stair", 2))),
    PanelPlan("SPC-1", "Sports centre", 260, 25, (
        ("highbay", 9), ("changing", 6), ("corridor", 2), ("toilets", 2))),
    PanelPlan("REF-1", "Refectory", 110, 16, (
        ("ref-pendant", 6), ("ref-downlight", 6), ("kitchen", 4), ("toilets", 2),
        ("corridor", 1))),
    PanelPlan("ADM-1", "Administration building", 70, 16, (
        ("adm-office", 8), ("adm-meeting", 4), ("corridor", 3), ("toilets", 2), ("stair", 1))),
    PanelPlan("ART-1", "Art studios and gallery", 180, 16, (
        ("gallery", 8), ("lab", 6), ("corridor", 2), ("toilets", 2))),
    PanelPlan("RES-A1", "Residence A, floors 0-1", 300, 25, (
        ("res-bedrooms", 10), ("res-common", 3), ("res-kitchen", 3), ("corridor", 3))),
    PanelPlan("RES-A2", "Residence A, floors 2-3", 310, 25, (
        ("res-bedrooms", 10), ("res-common", 3), ("res-kitchen", 3), ("corridor", 3))),
    PanelPlan("RES-B1", "Residence B, floors 0-1", 340, 35, (
        ("res-bedrooms", 10), ("res-common", 3), ("res-kitchen", 3), ("corridor", 3))),
    PanelPlan("RES-B2", "Residence B, floors 2-3", 350, 35, (
        ("res-bedrooms", 10), ("res-common", 3), ("res-kitchen", 3), ("corridor", 3))),
    PanelPlan("EXT-1", "Grounds: car parks and paths", 30, 16, (
        ("ext-flood", 6), ("ext-path", 9))),
)

#: IEC 60364-5-52 Table B.52.4, method C, three loaded copper conductors, PVC [A]
#: (from memory)
AMPACITY_A = {10.0: 57, 16.0: 76, 25.0: 96, 35.0: 119}


def circuit_lines(pid: str, k: int, rt: RoomType, line: str, length: int) -> list[str]:
    out = ["", "[[panels.circuits]]", f'id = "{pid.replace("-", "")}-{k:02d}"',
           f'line = "{line}"', f'description = "{rt.what}"',
           f"breaker_a = {rt.breaker_a}", f'breaker_curve = "{rt.curve}"',
           f"cable = {{length_m = {length}, size_mm2 = {rt.size_mm2:g}}}"]
    if rt.dimmer != NO:
        out.append(f'dimmer = "{rt.dimmer}"')
        if rt.dimmer == LE and rt.switch != "triac":
            out.append(f'dimmer_switch = "{rt.switch}"')
        assert rt.settings is not None
        out.append(f"conduction_deg = [{', '.join(str(s) for s in rt.settings)}]")
        out.append(f"dimmer_rating_w = {rt.rating_w}")
        if rt.min_load_w is not None:
            out.append(f"dimmer_min_load_w = {rt.min_load_w}")
    fx = ", ".join(f'{{type = "{f}", count = {n}}}' for f, n in rt.fixtures)
    out.append(f"fixtures = [{fx}]")
    return out


def check_room_type(name: str, rt: RoomType) -> None:
    """The schedule's own rules: steady load under In, a dimmer within its rating."""
    watts = {f: n * FIXTURES[f][1] for f, n in rt.fixtures}
    total = sum(watts.values())
    # steady current at 230 V with a power factor of 0.3, below any of these drivers' at
    # the settings used (common practice: droppers and bulk-cap lamps behind a dimmer)
    assert total / (230.0 * 0.3) <= rt.breaker_a, name
    if rt.dimmer != NO:
        filament = sum(w for f, w in watts.items() if FIXTURES[f][0] == "resistive")
        assert rt.rating_w is not None and filament + (total - filament) / 0.25 <= rt.rating_w, name
        assert rt.min_load_w is None or total >= rt.min_load_w, name


def build() -> str:
    rng = random.Random(SEED)
    for name, rt in ROOM_TYPES.items():
        check_room_type(name, rt)
    n_circuits = sum(n for p in PANELS for _, n in p.rooms)
    out = [
        "# pqcalc installation file: an invented example, generated by make_campus.py",
        f"# (seed {SEED}); edit the script and run it again rather than this file.",
        "#",
        "# Linden Reach College (an invented scenario): a college campus of twelve buildings",
        f"# ({len(PANELS)} lighting panels, {n_circuits} branch circuits) moves its halogen and",
        "# incandescent lamps to LED and keeps most of its dimmers. 400/230 V, 50 Hz, from the",
        "# college's own 1000 kVA substation; each panel has its own submain from the main",
        "# low-voltage board. Three scenarios: daytime, evening (presentations, a show in the",
        "# Great Hall), cleaning (every dimmer at full).",
        "#",
        "# Regional rules: IEC (IEC 60364 wiring, IEC 60898-1 type B and C breakers, neutral",
        "# sizing to IEC 60364-5-52 Annex E). Submain impedances: IEC 60228 class 2 copper at",
        "# 70 degC and 0.08 mohm/m reactance per conductor (see make_campus.py).",
        "#",
        "# Run:  pqcalc assess demo_installations/linden_reach_college.toml",
        "",
        "[project]",
        'name = "Linden Reach College - campus lighting retrofit"',
        'site = "Linden Reach campus, Harrowmere (invented)"',
        'engineer = "C. Placeholder, estates engineering"',
        'date = "2026-12-02"',
        'notes = "Dimmers kept except where the lamp list calls for trailing-edge modules; '
        'stage floods and some house lights stay halogen."',
        "",
        "[supply]",
        'system = "three-phase-wye"',
        "voltage_ln_v = 230",
        "frequency_hz = 50",
        'rules = "IEC"                     # IEC 60364 / IEC 60898-1 (stated, not defaulted)',
        "[supply.transformer]              # 11/0.4 kV campus substation",
        "kva = 1000",
        "impedance_pct = 6.0",
        "x_over_r = 7.0",
        "",
        "[analysis]",
        "supply_interaction = true         # lamps re-solved under their panel's distorted voltage",
        f"scenarios = [{', '.join(repr(s).replace(chr(39), chr(34)) for s in SCENARIOS)}]",
        "",
        "[pcc]",
        "# the point of common coupling: the substation's low-voltage terminals",
        "demand_current_a = 950           # the campus's maximum demand, fundamental [A]",
        "",
        "# ---------------------------------------------------------------- fixture types",
    ]
    for fid, (model, p, desc, extra) in FIXTURES.items():
        out += [f"[fixtures.{fid}]", f'model = "{model}"', f"power_w = {p:g}",
                f'description = "{desc}"']
        if extra:
            out.append(extra)
        out.append("")
    out.append("# ---------------------------------------------------------------- submains "
               "(one per panel)")
    out.append("# r_ohm, l_h: one phase conductor; the neutral is full size (same impedance)")
    for p in PANELS:
        z = cable_impedance(p.feeder_m, size_mm2=p.feeder_mm2, temperature_c=70.0,
                            basis="iec60228")
        out += ["[[feeders]]", f'id = "SM-{p.id}"',
                f'description = "{p.feeder_m} m four-core {p.feeder_mm2:g} mm2 copper to '
                f'{p.id}"',
                f"r_ohm = {z.r_ohm / 2:.5f}", f"l_h = {z.l_h / 2:.3e}", ""]
    out.append("# ---------------------------------------------------------------- panels and "
               "circuits")
    for p in PANELS:
        amp = AMPACITY_A[p.feeder_mm2]
        n = sum(k for _, k in p.rooms)
        out += ["", f"# {p.where}: {n} circuits", "[[panels]]", f'id = "{p.id}"',
                f'description = "{p.where}"', f'feeder = "SM-{p.id}"',
                f"line_ampacity_a = {amp}", f"neutral_ampacity_a = {amp}"]
        k = 0
        for room, count in p.rooms:
            rt = ROOM_TYPES[room]
            for _ in range(count):
                line = f"L{k % 3 + 1}"
                k += 1
                out += circuit_lines(p.id, k, rt, line, rng.choice(rt.lengths_m))
    return "\n".join(out) + "\n"


def main() -> None:
    OUT.write_text(build(), encoding="utf-8")
    print(f"wrote {OUT}")


if __name__ == "__main__":
    main()
