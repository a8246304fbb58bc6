"""Every row of every limit file against its published value.

The expected values below are transcribed from the standards' tables (cited beside each
block) independently of the data files, so a typo in a file shows up here. Data files
store the published units (%, mA/W, A); the loader turns them into fractions, A/W and A,
so comparisons use a relative tolerance of 1e-12 (round-off of the unit conversion only).
"""

from __future__ import annotations

import math

import pytest

from pqcalc.errors import InputError
from pqcalc.standards.limits import (
    CurrentDistortionLimits,
    OrderTable,
    SmallLightingLimits,
    VoltageDistortionLimits,
    known_keys,
    load_limits,
)

REL = 1e-12  # unit conversion round-off only

# IEC 61000-3-2:2018+AMD1:2020, Table 1 (Class A), maximum permissible harmonic current [A]
CLASS_A = {3: 2.30, 5: 1.14, 7: 0.77, 9: 0.40, 11: 0.33, 13: 0.21, 2: 1.08, 4: 0.43, 6: 0.30}
CLASS_A.update({h: 0.15 * 15 / h for h in range(15, 40, 2)})  # Table 1: 0.15 x 15/h
CLASS_A.update({h: 0.23 * 8 / h for h in range(8, 41, 2)})  # Table 1: 0.23 x 8/h

# IEC 61000-3-2:2018 (ed. 5.0), Table 2 (Class C > 25 W) [% of fundamental]; h3 is 30 x lambda
CLASS_C = {2: 2.0, 3: 30.0, 5: 10.0, 7: 7.0, 9: 5.0}
CLASS_C.update({h: 3.0 for h in range(11, 40, 2)})
# IEC 61000-3-2:2018+AMD1:2020 (ed. 5.1), Table 2: h3 27 % (a test laboratory's public
# summary of the AMD1 changes: "from 30 lambda to 27"; secondary), the other rows as ed. 5.0
CLASS_C_5_1 = {**CLASS_C, 3: 27.0}

# IEC 61000-3-2:2018+AMD1:2020, Table 3 (Class D): column 2 [mA/W], column 3 [A]
CLASS_D_PER_WATT = {3: 3.4, 5: 1.9, 7: 1.0, 9: 0.5, 11: 0.35}
CLASS_D_PER_WATT.update({h: 3.85 / h for h in range(13, 40, 2)})
CLASS_D_MAX = {3: 2.30, 5: 1.14, 7: 0.77, 9: 0.40, 11: 0.33, 13: 0.21}
CLASS_D_MAX.update({h: 0.15 * 15 / h for h in range(15, 40, 2)})  # "see Table 1"

# IEEE Std 519-2014 and -2022, Table 2 [% of I_L]: odd bands 3<=h<11 .. 35<=h<=50, and TDD
IEEE519_ROWS = [
    (0, 20, [4.0, 2.0, 1.5, 0.6, 0.3], 5.0),
    (20, 50, [7.0, 3.5, 2.5, 1.0, 0.5], 8.0),
    (50, 100, [10.0, 4.5, 4.0, 1.5, 0.7], 12.0),
    (100, 1000, [12.0, 5.5, 5.0, 2.0, 1.0], 15.0),
    (1000, math.inf, [15.0, 7.0, 6.0, 2.5, 1.4], 20.0),
]


def close(a: float, b: float) -> bool:
    return math.isclose(a, b, rel_tol=REL, abs_tol=0.0)


def test_known_keys_cover_the_issue():
    # the set of tables the compliance work needs (common practice naming); IEC 61000-3-2
    # per edition (5.0: 2018; 5.1: 2018 + AMD1:2020) and without one (the default, 5.1)
    iec = {"class-a", "class-b", "class-c", "class-c:5-25w", "class-d"}
    assert set(known_keys()) == {
        *(f"iec61000-3-2:{t}" for t in iec),
        *(f"iec61000-3-2:{e}:{t}" for e in ("5.0", "5.1") for t in iec),
        "ieee519:2014:current", "ieee519:2022:current",
        "ieee519:2014:voltage", "ieee519:2022:voltage",
    }


def test_every_file_states_standard_edition_table_and_certainty():
    for key in known_keys():
        src = load_limits(key).source
        assert src.standard and src.edition and src.table, key
        assert src.certainty in ("seen", "secondary", "memory", "computed",
                                 "common practice"), key
        if key.startswith("iec61000-3-2:5.0:"):
            assert src.edition == "5.0 (2018)", key
        elif key.startswith("iec61000-3-2:"):
            assert "AMD1:2020" in src.edition, key  # 5.1 and the default


def test_class_a_rows():
    t = load_limits("iec61000-3-2:class-a")
    assert isinstance(t, OrderTable) and not t.relative
    assert set(t.orders) == set(CLASS_A)  # Table 1 lists orders 2..40
    for h, v in CLASS_A.items():
        assert close(t[h].limit, v), h  # IEC 61000-3-2, Table 1


def test_class_b_is_one_and_a_half_class_a():
    t = load_limits("iec61000-3-2:class-b")
    assert set(t.orders) == set(CLASS_A)
    for h, v in CLASS_A.items():
        assert close(t[h].limit, 1.5 * v), h  # IEC 61000-3-2, 7.2: Class B = 1.5 x Table 1


def test_class_c_rows():
    t = load_limits("iec61000-3-2:5.0:class-c")
    assert t.relative and set(t.orders) == set(CLASS_C)  # Table 2: other even orders free
    for h, v in CLASS_C.items():
        assert close(t[h].limit, v / 100), h  # IEC 61000-3-2 ed. 5.0, Table 2
    assert t[3].times_lambda and not t[5].times_lambda  # Table 2: h3 is 30 x lambda
    assert close(t[3].value_at(0.9), 0.27)
    assert t.applies_above_w == 25.0


@pytest.mark.parametrize("key", ["iec61000-3-2:5.1:class-c", "iec61000-3-2:class-c"])
def test_class_c_rows_edition_5_1(key):
    t = load_limits(key)
    assert t.relative and set(t.orders) == set(CLASS_C_5_1)
    for h, v in CLASS_C_5_1.items():
        assert close(t[h].limit, v / 100), h  # ed. 5.1, Table 2
    assert not t[3].times_lambda and close(t[3].value_at(0.5), 0.27)  # 27 %, not x lambda
    assert t[3].certainty == "secondary" and t[5].certainty == "seen"
    assert t.applies_above_w == 25.0


def test_class_d_rows():
    t = load_limits("iec61000-3-2:class-d")
    assert set(t.orders) == set(CLASS_D_PER_WATT)
    for h in CLASS_D_PER_WATT:
        assert close(t[h].per_watt_a_w, CLASS_D_PER_WATT[h] * 1e-3), h  # Table 3, column 2
        assert close(t[h].limit, CLASS_D_MAX[h]), h  # Table 3, column 3


def test_small_lighting_options():
    t = load_limits("iec61000-3-2:class-c:5-25w")
    assert isinstance(t, SmallLightingLimits)
    assert (t.applies_from_w, t.applies_up_to_w) == (5.0, 25.0)  # 7.4.2: 5 W to 25 W
    # option a: Table 3 column 2 (Class D per watt)
    for h, v in CLASS_D_PER_WATT.items():
        assert close(t.option_a[h].per_watt_a_w, v * 1e-3), h
    # option b: h3 86 %, h5 61 %; waveform test 5 % threshold, 60 / 65 / 90 deg (7.4.2 b)
    assert {x.order: x.limit for x in t.option_b.limits} == pytest.approx({3: 0.86, 5: 0.61},
                                                                          rel=REL)
    w = t.waveform
    assert (w.threshold_of_peak, w.reach_by_deg, w.peak_by_deg, w.stay_until_deg) == \
        pytest.approx((0.05, 60.0, 65.0, 90.0), rel=REL)
    # option c (AMD1:2020, 7.4.2 c): THD 70 %, h2 5, h3 35, h5 25, h7 30, h9 20, h11 20 %
    assert {x.order: x.limit for x in t.option_c.limits} == pytest.approx(
        {2: 0.05, 3: 0.35, 5: 0.25, 7: 0.30, 9: 0.20, 11: 0.20}, rel=REL)
    assert t.thd_limit == pytest.approx(0.70, rel=REL)
    assert t.thd_max_order == 40  # THD to h40 (from memory)


@pytest.mark.parametrize("edition", ["2014", "2022"])
def test_ieee519_current_rows(edition):
    t = load_limits(f"ieee519:{edition}:current")
    assert isinstance(t, CurrentDistortionLimits)
    assert (t.voltage_kv_min, t.voltage_kv_max) == (0.12, 69.0)  # Table 2: 120 V - 69 kV
    assert t.bands == ((2, 11), (11, 17), (17, 23), (23, 35), (35, 51))
    assert len(t.rows) == len(IEEE519_ROWS)
    for row, (lo, hi, odd, tdd) in zip(t.rows, IEEE519_ROWS, strict=True):
        assert (row.isc_il_from, row.isc_il_below) == (lo, hi)  # IEEE 519, Table 2 rows
        assert row.odd == pytest.approx([v / 100 for v in odd], rel=REL)  # Table 2 columns
        assert row.tdd == pytest.approx(tdd / 100, rel=REL)  # Table 2, TDD column


def test_ieee519_even_order_treatment():
    # IEEE 519-2014, Table 2 note: even harmonics 25 % of the odd limits (seen)
    assert load_limits("ieee519:2014:current").even == ((50, 0.25, "seen"),)
    # IEEE 519-2022: 50 % up to h = 6, 100 % above (secondary summary, memory)
    assert load_limits("ieee519:2022:current").even == ((6, 0.5, "memory"),
                                                        (50, 1.0, "memory"))


@pytest.mark.parametrize("edition", ["2014", "2022"])
def test_ieee519_voltage_rows(edition):
    t = load_limits(f"ieee519:{edition}:voltage")
    assert isinstance(t, VoltageDistortionLimits)
    got = [(r.up_to_kv, r.individual, r.thd, r.certainty) for r in t.rows]
    # IEEE 519, Table 1: <= 1 kV 5 / 8 %; 1-69 kV 3 / 5 % (seen); 69-161 kV 1.5 / 2.5 %,
    # > 161 kV 1.0 / 1.5 % (from memory)
    want = [(1.0, 0.05, 0.08, "seen"), (69.0, 0.03, 0.05, "seen"),
            (161.0, 0.015, 0.025, "memory"), (math.inf, 0.01, 0.015, "memory")]
    for g, w in zip(got, want, strict=True):
        assert g[0] == w[0] and g[3] == w[3]
        assert g[1:3] == pytest.approx(w[1:3], rel=REL)


def test_unknown_key_lists_the_known_ones():
    with pytest.raises(InputError) as e:
        load_limits("iec61000-3-2:class-e")
    msg = str(e.value)
    assert "class-e" in msg and "iec61000-3-2:class-c:5-25w" in msg
    assert "ieee519:2014:current" in msg
    assert "\n" not in msg  # one line
