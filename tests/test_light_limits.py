"""The EU ecodesign limits for light sources: the data file against the regulation's values,
and the verdicts.

Values transcribed independently of the data file, with their sources:
- Regulation (EU) 2021/341, Annex IV point 2(a), amending Table 4 of Regulation (EU)
  2019/2020, Annex II: SVM <= 0.9 at full load, and from 1 September 2024 SVM <= 0.4 (seen:
  public copy of the amending text);
- Regulation (EU) 2019/2020, Annex II Table 4: Pst_LM <= 1.0 at full load (secondary:
  public summaries quoting the regulation); displacement factor: no limit at P <= 5 W,
  >= 0.5 above 5 W, >= 0.7 above 10 W, >= 0.9 above 25 W (secondary; the row boundaries
  from memory);
- application from 1 September 2021 (seen in a public summary).
"""

from __future__ import annotations

import datetime as dt

import pytest

from pqcalc.errors import InputError
from pqcalc.light import eu_ecodesign_check, load_eu_light_source_limits
from pqcalc.standards.limits import known_keys


def test_file_values():
    lim = load_eu_light_source_limits()
    assert lim.applies_from == dt.date(2021, 9, 1)
    before, after = dt.date(2024, 8, 31), dt.date(2024, 9, 1)
    assert lim.find("svm", before).limit == 0.9
    assert lim.find("svm", after).limit == 0.4
    assert lim.find("svm", after).certainty == "seen"
    assert lim.find("pst_lm", after).limit == 1.0
    df = {p: lim.find("displacement_factor", after, p).limit
          for p in (3.0, 5.0, 5.01, 10.0, 10.01, 25.0, 25.01, 200.0)}
    assert df == {3.0: None, 5.0: None, 5.01: 0.5, 10.0: 0.5, 10.01: 0.7, 25.0: 0.7,
                  25.01: 0.9, 200.0: 0.9}
    for r in lim.requirements:
        assert r.certainty in ("seen", "secondary", "memory")
        assert r.source_note  # every value says where it comes from


def test_the_harmonic_tables_are_untouched():
    # the file is read by pqcalc.light only; the harmonic loader does not list it
    assert not any("eu" in k for k in known_keys())


def test_verdicts_at_full_load():
    r = eu_ecodesign_check(svm=0.6, pst_lm=0.3, power_w=9.0, displacement_factor=0.55,
                           on_date="2025-01-01")
    got = {v.quantity: v.verdict for v in r.verdicts}
    assert got == {"pst_lm": "pass", "svm": "fail", "displacement_factor": "pass"}
    assert r.verdict == "fail"
    # the same lamp before September 2024: SVM 0.6 <= 0.9 passes
    r = eu_ecodesign_check(svm=0.6, pst_lm=0.3, power_w=9.0, displacement_factor=0.55,
                           on_date=dt.date(2023, 1, 1))
    assert r.verdict == "pass"
    svm_row = [v for v in r.verdicts if v.quantity == "svm"][0]
    assert svm_row.requirement.limit == 0.9
    assert "2019/2020" in svm_row.citation


def test_displacement_factor_rows():
    day = "2025-01-01"
    small = eu_ecodesign_check(power_w=5.0, displacement_factor=0.1, on_date=day)
    assert [v.verdict for v in small.verdicts if v.quantity == "displacement_factor"] == \
        ["no limit"]
    big = eu_ecodesign_check(power_w=30.0, displacement_factor=0.85, on_date=day)
    assert [v.verdict for v in big.verdicts if v.quantity == "displacement_factor"] == ["fail"]


def test_dimmed_state_is_informative_and_exemptions():
    r = eu_ecodesign_check(svm=3.0, pst_lm=5.0, on_date="2025-01-01", full_load=False)
    assert r.verdict == "informative"
    assert {v.verdict for v in r.verdicts if v.value is not None} == {"informative"}
    e = eu_ecodesign_check(svm=3.0, on_date="2025-01-01", strobe_exempt=True)
    assert [v.verdict for v in e.verdicts if v.quantity == "svm"] == ["exempt"]
    old = eu_ecodesign_check(svm=3.0, on_date="2020-01-01")
    assert {v.verdict for v in old.verdicts} == {"not in force"}


def test_bad_input():
    with pytest.raises(InputError, match="on_date"):
        eu_ecodesign_check(svm=0.1, on_date="September 2024")
    with pytest.raises(InputError, match="displacement_factor"):
        eu_ecodesign_check(displacement_factor=1.5)
    with pytest.raises(InputError, match="svm"):
        eu_ecodesign_check(svm=-1.0)
