"""The campus demo is what it says: a campus-sized installation, loaded only (no assessment).

``demo_installations/linden_reach_college.toml`` is written by
``demo_installations/make_campus.py``; the tests below read the file as a user would
(:func:`pqcalc.installation.load_installation`) and hold it to the description in the
script's docstring and the README: at least 20 panels and 400 branch circuits, three named
scenarios, supply interaction on, every driver model and every kind of dimmer present, a
transformer source and a submain impedance on every panel, the IEC rule set stated. The
committed file is the script's output (so the script kept beside it is the one that made
it). The campus is assessed by ``tests/benchmarks/bench_installation.py``, on demand.
"""

from __future__ import annotations

import importlib.util
import re
import sys
from collections import Counter
from pathlib import Path

import pytest

from pqcalc.circuits import MODELS
from pqcalc.installation import load_installation
from pqcalc.installation.model import ModelledFixture

DEMO = Path(__file__).resolve().parents[1] / "demo_installations"
CAMPUS = DEMO / "linden_reach_college.toml"


@pytest.fixture(scope="module")
def campus():
    return load_installation(CAMPUS)


def test_campus_size_scenarios_and_interaction(campus):
    # the size the demo promises (README, "A campus"); the scenarios are named
    assert len(campus.panels) >= 20
    assert len(campus.circuits) >= 400
    assert campus.n_scenarios == 3
    assert campus.analysis.scenario_names == ("daytime", "evening", "cleaning")
    assert campus.analysis.supply_interaction is True


def test_campus_mixes_every_model_and_dimmer(campus):
    used = {g.fixture for c in campus.circuits for g in c.groups}
    models = {campus.fixtures[f].model for f in used
              if isinstance(campus.fixtures[f], ModelledFixture)}
    assert models == set(MODELS)
    kinds = Counter((c.dimmer, c.dimmer_switch if c.dimmer == "leading-edge" else "")
                    for c in campus.circuits)
    for kind in (("leading-edge", "triac"), ("leading-edge", "transistor"),
                 ("trailing-edge", ""), ("none", "")):
        assert kinds[kind] >= 5, kind
    # mixed settings: a dimmed circuit's scenarios differ, and several settings are used
    dimmed = [c for c in campus.circuits if c.dimmer != "none"]
    assert all(len(set(c.conduction_deg)) > 1 for c in dimmed)
    assert len({a for c in dimmed for a in c.conduction_deg}) >= 6
    # some circuits hold two fixture types
    assert any(len(c.groups) > 1 for c in campus.circuits)


def test_campus_supply_feeders_and_rules(campus):
    assert campus.supply.impedance_basis == "transformer"
    assert campus.supply.rules == "IEC"
    # stated in the file, not taken from the supply's default
    assert re.search(r'^rules\s*=\s*"IEC"', CAMPUS.read_text(), re.M)
    for p in campus.panels:
        f = campus.feeders[p.feeder]
        assert f.r_ohm > 0 and f.l_h > 0, p.id
        assert p.neutral_ampacity_a is not None and p.line_ampacity_a is not None
    # each line of the three-phase supply carries about a third of the circuits
    lines = Counter(c.line for c in campus.circuits)
    assert set(lines) == {"L1", "L2", "L3"}
    assert max(lines.values()) < 1.2 * min(lines.values())


def test_campus_schedule_within_its_breakers_and_dimmers(campus):
    for c in campus.circuits:
        watts = {g.fixture: g.count * campus.fixtures[g.fixture].power_w for g in c.groups}
        total = sum(watts.values())
        # steady load under the breaker's rating (IEC 60364-4-43:2008, 433.1: IB <= In),
        # bounded from the rated watts at 230 V with a power factor of 0.3, below any of
        # these drivers' at the settings used (common practice: capacitive droppers and
        # bulk-capacitor lamps behind a dimmer are the lowest, about 0.3 to 0.6)
        assert total / (230.0 * 0.3) <= c.breaker_a, c.id
        # a dimmer's filament-watt rating: filament watts plus LED watts / derating
        # (common practice, the rule pqcalc's dimmer check applies)
        if c.dimmer != "none":
            assert c.dimmer_rating_w is not None, c.id
            filament = sum(w for f, w in watts.items()
                           if campus.fixtures[f].model == "resistive")
            assert filament + (total - filament) / c.led_derating <= c.dimmer_rating_w, c.id
        # branch cable given for every circuit: 1.5 mm2 on 10 A, 2.5 mm2 on 16 A
        # (common practice for IEC lighting circuits)
        assert c.cable_r_ohm > 0
        assert ("1.5 mm2" in c.cable) == (c.breaker_a == 10), c.id


def test_campus_file_is_the_scripts_output(monkeypatch):
    # the committed file and its generator agree (deterministic: seeded)
    spec = importlib.util.spec_from_file_location("make_campus", DEMO / "make_campus.py")
    assert spec is not None and spec.loader is not None
    mod = importlib.util.module_from_spec(spec)
    monkeypatch.setitem(sys.modules, "make_campus", mod)  # its dataclasses look it up
    spec.loader.exec_module(mod)
    assert mod.build() == CAMPUS.read_text(encoding="utf-8")
