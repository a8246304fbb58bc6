"""Regional rule sets (pqcalc.standards.regions): the data files against the standards' text
as found in public sources, the defaults from the supply, and the rules as functions.

Each check names its source and how sure it is ("seen" in a public copy of the text,
"secondary" in public material quoting or applying it, "memory" recalled, "common practice").
"""

from __future__ import annotations

import dataclasses
import doctest
import math

import pytest

from pqcalc.errors import InputError
from pqcalc.standards import regions
from pqcalc.standards.regions import (
    adjustment_factor,
    default_rule_set,
    instantaneous_band,
    load_figures,
    neutral_band_iec,
    neutral_figures,
    neutral_sizing_iec,
    neutral_sizing_nec,
    paper,
    rule_set,
)


@pytest.fixture(scope="module")
def iec():
    return rule_set("IEC")


@pytest.fixture(scope="module")
def us():
    return rule_set("US")


# ---------------------------------------------------------------- the files
def test_known_rule_sets_and_frozen(iec):
    assert regions.known_rule_sets() == ("IEC", "US")
    assert rule_set("iec") is iec  # case-insensitive, one object per set
    with pytest.raises(dataclasses.FrozenInstanceError):
        iec.name = "US"  # type: ignore[misc]


def test_every_value_has_source_and_certainty(iec, us):
    for rs in (iec, us):
        assert rs.certainty in regions.CERTAINTIES
        for b in rs.breaker_types:
            assert b.standard and b.certainty in regions.CERTAINTIES and b.note
        assert rs.load.standard and rs.load.clause and rs.load.certainty in regions.CERTAINTIES
        assert rs.neutral.standard and rs.neutral.certainty in regions.CERTAINTIES
        assert rs.paper_default.certainty in regions.CERTAINTIES


def test_iec60898_bands(iec):
    # IEC 60898-1:2015, standard ranges of instantaneous tripping: B above 3 In up to and
    # including 5 In, C above 5 up to 10 In, D above 10 up to 20 In (secondary: quoted in
    # IS/IEC 60898-1 reference values "Type B 3 to 5 times rated current (In)... Type C 5 to
    # 10... Type D 10 to 20", and in a maker's test table: 3/5/10 In no tripping within
    # 0.1 s, 5/10/20 In tripping within 0.1 s).
    got = {b.name: (b.k_min, b.k_max) for b in iec.breaker_types}
    assert got == {"B": (3.0, 5.0), "C": (5.0, 10.0), "D": (10.0, 20.0)}
    assert iec.default_breaker == "B"


def test_us_breaker_types(us):
    # UL 489 sets no letter band; "TM" is a typical fixed-instantaneous range recalled from
    # makers' curves (memory, said so in the data). UL 489-listed DIN-rail breakers marked
    # with an IEC curve carry the IEC 60898-1 band (secondary: a maker's data sheet lists
    # "Compliance IEC / UL489" with "Tripping curve D").
    tm = us.breaker("tm")
    assert (tm.k_min, tm.k_max) == (5.0, 20.0) and tm.certainty == "memory"
    assert {b.name: (b.k_min, b.k_max) for b in us.breaker_types if b.name != "TM"} == {
        "B": (3.0, 5.0), "C": (5.0, 10.0), "D": (10.0, 20.0)}
    assert us.default_breaker == "TM"


def test_nec_210_20_a_values(us):
    # NEC 210.20(A) (seen, quoted in a maker's data bulletin): "the rating of the overcurrent
    # device shall not be less than the noncontinuous load plus 125 percent of the continuous
    # load"; exception for assemblies listed for 100 % operation.
    assert us.continuous_load_factor == 1.25
    assert us.load.certainty == "seen"
    assert "100 percent" in us.load.exception
    assert us.load.clause.startswith("210.20(A)")


def test_iec_has_no_continuous_factor(iec):
    # IEC 60364-4-43:2008, 433.1: IB <= In <= IZ and I2 <= 1.45 IZ (secondary: DIN VDE 0100-430
    # summary, BS 7671 433.1 (i)-(iii)); no 80 % rule in the IEC text.
    assert iec.continuous_load_factor is None
    assert iec.load.rule == "IB <= In <= IZ and I2 <= 1.45 IZ"
    # IEC 60898-1 conventional tripping current I2 = 1.45 In (secondary: IS/IEC 60898-1
    # reference values "Conventional Tripping Current 1.45 times rated current").
    assert iec.load.conventional_tripping_factor == 1.45
    # The data says what is practice and what is not a rule (no 80 % in IEC).
    assert "Not a standard's rule" in iec.load.common_practice
    assert "80 %" in iec.load.common_practice


def test_table_e52_1_rows(iec):
    # IEC 60364-5-52:2009 Table E.52.1 (rows seen in BS 7671:2008 Table 4Aa, the UK adoption):
    # 0-15 %: 1.0 on the line current; >15-33 %: 0.86 line; >33-45 %: 0.86 neutral;
    # >45 %: 1.0 neutral.
    rows = [(b.above_pct, b.up_to_pct, b.factor, b.basis) for b in iec.neutral.bands]
    assert rows == [(0.0, 15.0, 1.0, "line"), (15.0, 33.0, 0.86, "line"),
                    (33.0, 45.0, 0.86, "neutral"), (45.0, None, 1.0, "neutral")]


def test_table_310_15_c_1_rows(us):
    # NEC Table 310.15(C)(1) (2014 number 310.15(B)(3)(a), seen in a public copy): 4-6: 80,
    # 7-9: 70, 10-20: 50, 21-30: 45, 31-40: 40, 41 and above: 35 percent.
    rows = [(r.first, r.last, r.factor) for r in us.neutral.adjustment]
    assert rows == [(1, 3, 1.0), (4, 6, 0.8), (7, 9, 0.7), (10, 20, 0.5), (21, 30, 0.45),
                    (31, 40, 0.4), (41, None, 0.35)]
    # 310.15(E)(3) "major portion" read as more than half (common practice).
    assert us.neutral.nonlinear_major_share == 0.5


def test_paper_sizes(iec, us):
    # ISO 216 A4 = 210 x 297 mm; Letter = 8.5 x 11 in = 215.9 x 279.4 mm (secondary: public
    # paper-size references).
    assert (iec.paper_size, iec.paper_default.width_mm, iec.paper_default.height_mm) == (
        "A4", 210.0, 297.0)
    assert us.paper_size == "Letter"
    assert us.paper_default.size_in == pytest.approx((8.5, 11.0), abs=1e-12)
    assert paper(iec, "Letter").size_in == pytest.approx((8.5, 11.0), abs=1e-12)
    assert paper(us, "A4").width_mm == 210.0
    assert paper(us) is us.paper_default
    with pytest.raises(InputError, match="paper: expected one of A4, Letter, got 'A3'"):
        paper(us, "A3")


def test_bad_data_file_is_one_clear_line():
    # A data file whose Table E.52.1 rows leave a gap is refused with the file and field.
    from importlib import resources
    text = resources.files("pqcalc.standards_limits").joinpath("region_iec.toml").read_text(
        encoding="utf-8")
    bad = text.replace("above_pct = 33.0", "above_pct = 34.0")
    with pytest.raises(InputError) as e:
        regions._read("region_x.toml", bad)
    assert str(e.value).startswith("standards_limits/region_x.toml: neutral.band[2].above_pct")
    with pytest.raises(InputError, match="breaker.0.: expected 0 < k_min < k_max"):
        regions._read("region_x.toml", text.replace("k_max = 5.0", "k_max = 2.0"))


# ---------------------------------------------------------------- defaults from the supply
@pytest.mark.parametrize("v, f, name", [
    (230.0, 50.0, "IEC"),                  # IEC 60038 230/400 V (secondary)
    (400.0 / math.sqrt(3), 50.0, "IEC"),   # 400 V line-to-line -> 230.9 V line-to-neutral
    (120.0, 60.0, "US"),                   # 120/208Y and 120/240 V (ANSI C84.1, secondary)
    (208.0 / math.sqrt(3), 60.0, "US"),
    (277.0, 60.0, "US"),                   # 277/480Y V
])
def test_default_from_supply(v, f, name):
    assert default_rule_set(v, f).name == name


@pytest.mark.parametrize("v, f", [(230.0, 60.0), (120.0, 50.0), (127.0, 60.0), (220.0, 60.0)])
def test_other_supplies_must_choose(v, f):
    # Not the brief's IEC or US combinations: the user chooses, the message names the field.
    with pytest.raises(InputError) as e:
        default_rule_set(v, f)
    msg = str(e.value)
    assert msg.startswith("supply.rules: ") and f"{v:g} V {f:g} Hz" in msg
    assert '"IEC" or "US"' in msg and "\n" not in msg


def test_bad_supply_numbers():
    with pytest.raises(InputError, match="positive voltage"):
        default_rule_set(float("nan"), 50.0)


# ---------------------------------------------------------------- bad names
def test_unknown_rule_set_lists_known():
    with pytest.raises(InputError) as e:
        rule_set("EU")
    assert str(e.value) == ("supply.rules: unknown regional rule set 'EU'; expected one of "
                            "IEC, US")


def test_unknown_breaker_type_lists_known(iec, us):
    with pytest.raises(InputError) as e:
        instantaneous_band(iec, "K", 16.0)
    assert str(e.value) == ("breaker type 'K' is not known to the IEC rule set; expected one "
                            "of B, C, D")
    with pytest.raises(InputError, match="'TM' is not known to the IEC rule set"):
        iec.breaker("TM")  # a US type on an IEC project
    with pytest.raises(InputError, match="expected one of TM, B, C, D"):
        us.breaker("Z")


# ---------------------------------------------------------------- breaker band
def test_instantaneous_band_figures(iec, us):
    # IEC 60898-1 type B, 10 A: 30-50 A rms; peaks sqrt(2) x (closed form).
    b = instantaneous_band(iec, "b", 10.0)
    assert (b.low_a, b.high_a) == (30.0, 50.0)
    assert b.low_peak_a == pytest.approx(30.0 * math.sqrt(2), rel=1e-15)
    assert b.certainty == "secondary" and "IEC 60898-1" in b.source
    # A US thermal-magnetic 20 A breaker: memory, and the message says so.
    t = instantaneous_band(us, "TM", 20.0)
    assert (t.low_a, t.high_a) == (100.0, 400.0)
    assert "memory" in t.message and "maker" in t.message
    # The maker's figures override the set's band.
    m = instantaneous_band(us, "TM", 20.0, k_override=(8.0, 12.0))
    assert (m.low_a, m.high_a, m.certainty) == (160.0, 240.0, "seen")
    with pytest.raises(InputError, match="k_min < k_max"):
        instantaneous_band(us, "TM", 20.0, k_override=(12.0, 8.0))
    with pytest.raises(InputError, match="breaker_a: expected a positive rating"):
        instantaneous_band(iec, "C", 0.0)


# ---------------------------------------------------------------- load rule
def test_nec_80_percent_rule(us):
    # NEC 210.20(A): a 20 A device carries at most 20 / 1.25 = 16 A of continuous load
    # (the "80 %" rule is this inverse of 125 %, closed form).
    (ok,) = load_figures(us, 20.0, 16.0)
    assert ok.status == "pass" and ok.value == pytest.approx(20.0) and ok.limit == 20.0
    (bad,) = load_figures(us, 20.0, 16.01)
    assert bad.status == "fail" and bad.value == pytest.approx(20.0125)
    # Mixed load: 5 A noncontinuous + 125 % of 12 A = 20 A (closed form).
    (mix,) = load_figures(us, 20.0, 12.0, noncontinuous_a=5.0)
    assert mix.value == pytest.approx(20.0) and mix.status == "pass"
    assert "12.00 A (60 % of the rating)" in mix.message
    # Exception: an assembly listed for 100 % operation.
    (full,) = load_figures(us, 20.0, 19.0, listed_100_pct=True)
    assert full.status == "pass" and full.value == pytest.approx(19.0)
    assert full.source.startswith("NFPA 70 (NEC) 2023, 210.20(A)")


def test_iec_coordination_no_80_percent(iec):
    # IEC 60364-4-43 433.1: IB <= In, no continuous-load factor: 16 A on a 16 A breaker
    # passes where the NEC would fail it.
    (ib,) = load_figures(iec, 16.0, 16.0)
    assert ib.status == "pass" and ib.value == 16.0 and ib.limit == 16.0
    assert load_figures(iec, 16.0, 16.5)[0].status == "fail"
    # In <= IZ; with I2 = 1.45 In this also gives I2 <= 1.45 IZ.
    ib, iz = load_figures(iec, 16.0, 10.0, ampacity_a=17.5)
    assert iz.status == "pass" and (iz.value, iz.limit) == (16.0, 17.5)
    assert load_figures(iec, 16.0, 10.0, ampacity_a=15.0)[1].status == "fail"


def test_load_bad_input(us):
    with pytest.raises(InputError, match="continuous load: expected a current >= 0"):
        load_figures(us, 20.0, -1.0)
    with pytest.raises(InputError, match="breaker_a"):
        load_figures(us, float("inf"), 1.0)


# ---------------------------------------------------------------- neutral: IEC Annex E
@pytest.mark.parametrize("pct, factor, basis", [
    (0.0, 1.0, "line"), (15.0, 1.0, "line"),           # 0-15 %: 1.0 on the line current
    (15.01, 0.86, "line"), (33.0, 0.86, "line"),       # >15-33 %: 0.86 on the line current
    (33.01, 0.86, "neutral"), (45.0, 0.86, "neutral"),  # >33-45 %: 0.86 on the neutral
    (45.01, 1.0, "neutral"), (90.0, 1.0, "neutral"),   # >45 %: 1.0 on the neutral
])
def test_table_e52_1_bands(pct, factor, basis):
    # IEC 60364-5-52:2009 Table E.52.1 (rows seen in BS 7671:2008 Table 4Aa); the upper
    # edges belong to the lower row (">15-33" etc.).
    b = neutral_band_iec(pct)
    assert (b.factor, b.basis) == (factor, basis)


def test_annex_e_worked_example():
    # IEC 60364-5-52:2009 Annex E worked example (from memory): a 39 A three-phase circuit.
    # 20 % third harmonic: sized on 39 / 0.86 = 45.3 A; 40 %: neutral 39 x 0.4 x 3 = 46.8 A,
    # sized on 46.8 / 0.86 = 54.4 A; 50 %: neutral 58.5 A, factor 1.0.
    assert neutral_sizing_iec(20.0, 39.0).value == pytest.approx(39.0 / 0.86)
    f40 = neutral_sizing_iec(40.0, 39.0)
    assert f40.value == pytest.approx(46.8 / 0.86) and f40.basis == "neutral"
    assert neutral_sizing_iec(50.0, 39.0).value == pytest.approx(58.5)
    # A measured neutral current above the table's sizing current is the sizing current.
    assert neutral_sizing_iec(20.0, 39.0, neutral_current_a=60.0).value == 60.0
    # Against an ampacity.
    assert neutral_sizing_iec(40.0, 39.0, ampacity_a=57.0).status == "pass"
    assert neutral_sizing_iec(40.0, 39.0, ampacity_a=50.0).status == "fail"
    # Single-phase: the table does not apply; the neutral carries the line current.
    sp = neutral_sizing_iec(80.0, 10.0, system="single-phase")
    assert (sp.value, sp.status) == (10.0, "info") and "Table E.52.1 is for" in sp.message
    with pytest.raises(InputError, match="third-harmonic content"):
        neutral_band_iec(-1.0)


# ---------------------------------------------------------------- neutral: NEC 310.15
def test_nec_adjustment_factors():
    # NEC Table 310.15(C)(1) (seen as 2014 Table 310.15(B)(3)(a)).
    cases = {1: 1.0, 3: 1.0, 4: 0.8, 6: 0.8, 7: 0.7, 9: 0.7, 10: 0.5, 20: 0.5, 21: 0.45,
             30: 0.45, 31: 0.4, 40: 0.4, 41: 0.35, 200: 0.35}
    assert {n: adjustment_factor(n) for n in cases} == cases
    with pytest.raises(InputError, match="whole number >= 1"):
        adjustment_factor(0)


def test_nec_neutral_counts():
    # 310.15(E)(3): 4-wire wye, major portion non-linear -> the neutral counts: 3 lines + N
    # = 4 conductors -> 80 %.
    f = neutral_sizing_nec(0.9, "three-phase-wye", ampacity_a=30.0, current_a=20.0)
    assert (f.neutral_counts, f.current_carrying, f.factor) == (True, 4, 0.8)
    assert f.limit == pytest.approx(24.0) and f.status == "pass"
    # Not the major portion: (E)(1), the neutral is not counted: 3 conductors, 100 %.
    g = neutral_sizing_nec(0.4, "three-phase-wye")
    assert (g.neutral_counts, g.current_carrying, g.factor, g.status) == (False, 3, 1.0, "info")
    # (E)(2): two phases and the neutral of a wye system: counted.
    assert neutral_sizing_nec(0.0, "three-phase-wye", lines=2).neutral_counts is True
    # (E)(1) split-phase 3-wire: not counted.
    assert neutral_sizing_nec(1.0, "split-phase").neutral_counts is False
    # Two such circuits in one raceway: 4 + 4 = 8 conductors -> 70 %.
    h = neutral_sizing_nec(0.9, "three-phase-wye", other_current_carrying=4)
    assert (h.current_carrying, h.factor) == (8, 0.7)
    with pytest.raises(InputError, match="system: expected one of"):
        neutral_sizing_nec(0.9, "delta")
    with pytest.raises(InputError, match="non-linear share"):
        neutral_sizing_nec(1.5)


def test_neutral_figures_dispatch(iec, us):
    # One call for either region: the method follows the rule set.
    a = neutral_figures(iec, system="three-phase-wye", line_current_a=39.0,
                        third_harmonic_pct=40.0)
    assert a.method == "iec-annex-e" and a.value == pytest.approx(46.8 / 0.86)
    b = neutral_figures(us, system="three-phase-wye", line_current_a=16.0,
                        neutral_current_a=20.0, nonlinear_share=0.9, ampacity_a=30.0)
    assert b.method == "nec-310.15" and b.value == 20.0 and b.limit == pytest.approx(24.0)


# ---------------------------------------------------------------- docstrings
def test_docstring_examples_run():
    # The module's examples are part of its documentation: they must hold.
    res = doctest.testmod(regions, optionflags=doctest.ELLIPSIS)
    assert res.attempted > 5 and res.failed == 0
