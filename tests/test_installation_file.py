"""Installation files: reading, and one-line errors naming file, line and field (exit 2)."""

from __future__ import annotations

import shutil
from pathlib import Path

import pytest
from click.testing import CliRunner

from pqcalc.cli import main
from pqcalc.errors import InputError
from pqcalc.installation import load_installation

DEMO = Path(__file__).resolve().parents[1] / "demo_installations"

BASE = """\
[project]
name = "Test building"

[supply]
system = "three-phase-wye"
voltage_ln_v = 230
frequency_hz = 50
source_r_ohm = 0.02
source_l_h = 5e-5

[fixtures.dl]
capture = "downlight_full.csv"
power_w = 9

[[panels]]
id = "P1"

[[panels.circuits]]
id = "c1"
line = "L1"
breaker_a = 16
breaker_curve = "C"
fixtures = [{type = "dl", count = 20}]

[[panels.circuits]]
id = "c2"
line = "L2"
fixtures = [
  {type = "dl", count = 20},
]
"""


@pytest.fixture
def folder(tmp_path):
    shutil.copy(DEMO / "downlight_full.csv", tmp_path)
    return tmp_path


def write(folder: Path, text: str) -> Path:
    p = folder / "site.toml"
    p.write_text(text)
    return p


def test_reads_the_base_file(folder):
    inst = load_installation(write(folder, BASE))
    assert [c.id for c in inst.circuits] == ["c1", "c2"]
    assert inst.n_lamps == 40
    assert inst.circuits[0].breaker_curve == "C"


def test_capture_only_installation_assesses(folder):
    r = CliRunner().invoke(main, ["assess", str(write(folder, BASE)), "--json"])
    assert r.exit_code in (0, 1), r.output
    import json

    d = json.loads(r.output)
    assert {"circuits", "panels"} <= set(d)
    c = d["circuits"][0]
    assert {"id", "panel", "line", "i_rms_a", "thd_i_pct", "pf", "flags"} <= set(c)
    p = d["panels"][0]
    assert {"L1", "L2", "L3"} == set(p["lines"])
    assert {"i_rms_a", "ratio_to_max_line", "triplen_share_pct"} <= set(p["neutral"])
    # Linearity (20 lamps = 20 x one lamp on a stiff supply): both circuits carry the same
    assert d["circuits"][0]["i_rms_a"] == pytest.approx(d["circuits"][1]["i_rms_a"], rel=1e-3)


CASES = [
    # (replace this, with this, expected field path in the message, expected line)
    ('type = "dl", count = 20}]', 'type = "spot", count = 20}]',
     "panels[0].circuits[0].fixtures[0].type", 23),
    ('line = "L2"', 'line = "L7"', "panels[0].circuits[1].line", 27),
    ('breaker_curve = "C"', 'breaker_curve = "K"', "panels[0].circuits[0].breaker_curve", 22),
    ('id = "c1"\nline = "L1"', 'id = "c1"\nline = "L1"\ndimmer = "rotary"',
     "panels[0].circuits[0].dimmer", 21),
    ('type = "dl", count = 20}]', 'type = "dl", count = 2.5}]',
     "panels[0].circuits[0].fixtures[0].count", 23),
    ('type = "dl", count = 20}]', 'type = "dl", count = -3}]',
     "panels[0].circuits[0].fixtures[0].count", 23),
    ('capture = "downlight_full.csv"', 'capture = "missing.csv"', "fixtures.dl.capture", 12),
    ('id = "c2"', 'id = "c1"', "panels[0].circuits[1].id", 26),
    ("breaker_a = 16", 'breaker_a = "16 A"', "panels[0].circuits[0].breaker_a", 21),
    ('system = "three-phase-wye"', 'system = "single-phase"', "panels[0].circuits[1].line", 27),
    ("voltage_ln_v = 230", "voltage_ln_v = 2300", "supply.voltage_ln_v", 6),
    # a regional rule set that does not exist; a breaker type the set does not know
    ('system = "three-phase-wye"', 'system = "three-phase-wye"\nrules = "EU"', "supply.rules", 6),
    ('breaker_curve = "C"', 'breaker_curve = "TM"', "panels[0].circuits[0].breaker_curve", 22),
    # a cable without a length; a pulse-withstand table whose allowed peak rises with width
    ('breaker_curve = "C"', 'breaker_curve = "C"\ncable = {size_mm2 = 1.5}',
     "panels[0].circuits[0].cable.length_m", 23),
    ('breaker_curve = "C"',
     'breaker_curve = "C"\nbreaker_pulse_table = {width_s = [1e-4, 1e-3], peak_a = [200, 300]}',
     "panels[0].circuits[0].breaker_pulse_table.peak_a[1]", 23),
]


@pytest.mark.parametrize("old, new, field, line", CASES)
def test_bad_input_is_one_line_with_file_line_field(folder, old, new, field, line):
    assert old in BASE
    p = write(folder, BASE.replace(old, new, 1))
    r = CliRunner().invoke(main, ["assess", str(p)])
    assert r.exit_code == 2, r.output
    msg = r.stderr.strip() if hasattr(r, "stderr") else r.output.strip()
    assert "\n" not in msg and "Traceback" not in msg
    assert f"site.toml:{line}: {field}: expected" in msg


def test_not_toml_and_empty_and_directory(folder):
    for text in ("this is [not toml", ""):
        r = CliRunner().invoke(main, ["assess", str(write(folder, text))])
        assert r.exit_code == 2 and "site.toml" in r.output
    r = CliRunner().invoke(main, ["assess", str(folder)])
    assert r.exit_code == 2 and "directory" in r.output


def test_regional_rules_default_from_the_supply():
    # The rule set follows the supply when the file names none (common practice: 230/400 V
    # 50 Hz is designed to IEC 60364, 120/208 V 60 Hz to the US NEC): the school is IEC,
    # the office US; their breakers default to the set's usual type.
    from pathlib import Path

    demo = Path(__file__).resolve().parents[1] / "demo_installations"
    school = load_installation(demo / "harbour_school.toml")
    office = load_installation(demo / "cedar_row_offices.toml")
    assert (school.supply.rules, office.supply.rules) == ("IEC", "US")
    assert {c.breaker_curve for c in office.circuits} <= {"TM", "B", "C", "D"}


def test_compliance_on_date(folder):
    # The date the rules are taken at is data: a submittal is judged on its own date
    # (common practice), so a file's [compliance] on_date (or its project date) makes the
    # output the same on any day; a date that is not one is a located error.
    p = write(folder, BASE + '\n[compliance]\non_date = "2024-08-31"\n')
    assert load_installation(p).compliance.on_date == "2024-08-31"
    p = write(folder, BASE + '\n[compliance]\non_date = "last spring"\n')
    r = CliRunner().invoke(main, ["assess", str(p)])
    assert r.exit_code == 2 and "compliance.on_date: expected a date YYYY-MM-DD" in r.output


def test_a_wrong_length_setting_list_is_blamed_on_its_circuit(folder):
    # three scenarios named; circuit c2 gives two settings: the error names c2's line and
    # field, not analysis.scenarios
    text = BASE.replace('[[panels]]', '[analysis]\nscenarios = ["day", "evening", "night"]\n\n'
                        '[[panels]]', 1).replace(
        'id = "c2"\nline = "L2"\n', 'id = "c2"\nline = "L2"\ndimmer = "leading-edge"\n'
        'conduction_deg = [180, 90]\n')
    p = write(folder, text)
    line = text.splitlines().index("conduction_deg = [180, 90]") + 1
    with pytest.raises(InputError, match=rf"site\.toml:{line}: panels\[0\]\.circuits\[1\]\."
                                         r"conduction_deg: expected one setting or 3 \(one per "
                                         r"scenario named in analysis\.scenarios\), got '2 "
                                         r"settings'"):
        load_installation(p)
    # no circuit gives several settings: then the names are what is wrong
    one = BASE.replace('[[panels]]', '[analysis]\nscenarios = ["day", "night"]\n\n[[panels]]', 1)
    with pytest.raises(InputError, match=r"analysis\.scenarios: expected 1 name \(one per "
                                         r"scenario: the circuits give 1 setting\)"):
        load_installation(write(folder, one))
