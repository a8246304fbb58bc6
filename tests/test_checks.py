"""Circuit and panel checks against the tables they come from."""

from __future__ import annotations

import numpy as np
import pytest

from pqcalc import metrics
from pqcalc.installation import checks as ck


@pytest.mark.parametrize(
    "pct, factor, basis",
    [(0.0, 1.0, "line"), (15.0, 1.0, "line"), (15.001, 0.86, "line"), (33.0, 0.86, "line"),
     (33.001, 0.86, "neutral"), (45.0, 0.86, "neutral"), (45.001, 1.0, "neutral"),
     (90.0, 1.0, "neutral")],
)
def test_iec_60364_5_52_table_e521_band_edges(pct, factor, basis):
    # IEC 60364-5-52:2009, Annex E, Table E.52.1: 0-15 % 1.0 on line current; 15-33 % 0.86
    # on line current; 33-45 % 0.86 on neutral current; > 45 % 1.0 on neutral current.
    assert ck.neutral_factor_iec(pct) == (factor, basis)


def test_neutral_conductor_sizing_current():
    # Arithmetic of Table E.52.1 (a case like the annex's own example, from memory): 40 % third
    # harmonic, line 39 A:
    # neutral 3 * 0.4 * 39 = 46.8 A, sized on 46.8 / 0.86 = 54.4 A.
    c = ck.neutral_conductor(40.0, 39.0, 46.8, neutral_ampacity_a=50.0)
    assert c.value == pytest.approx(54.42, abs=0.01)
    assert c.status == "fail"


def test_breaker_bands_iec_60898():
    # IEC 60898-1 instantaneous bands: C curve 5-10 In; 16 A -> 80..160 A rms, peaks
    # 113.1..226.3 A.
    assert ck.breaker_inrush(100.0, 16.0, "C").status == "pass"
    assert ck.breaker_inrush(150.0, 16.0, "C").status == "warn"
    # above the band: still a warning (the pulses are far shorter than the band's test
    # current, common practice), never a failure on the peak alone
    assert ck.breaker_inrush(230.0, 16.0, "C").status == "warn"
    m = ck.breaker_max_fixtures(10.0, 0.1, 16.0, "B")
    # B: 3 * 16 * sqrt2 = 67.9 A -> 6 lamps of 10 A inrush; steady 0.8*16/0.1 = 128
    assert m == {"inrush_bound": 6, "steady_bound": 128, "max_fixtures": 6}


def test_transformer_derating_c57110():
    # IEEE C57.110 worked example spectrum: F_HL = 8.3476; with P_EC-R = 0.1 pu the maximum
    # load is sqrt(1.1 / (1 + 0.83476)) = 0.7743 pu of rated current.
    m = np.zeros(26)
    m[[1, 5, 7, 11, 13, 17, 19, 23, 25]] = [1, .20, .14, .091, .077, .058, .056, .043, .040]
    f = float(metrics.harmonic_loss_factor(m))
    c = ck.transformer_derating(f, float(metrics.k_factor(m)), 100.0, 145.0, 0.1)
    assert c.details["i_max_pu"] == pytest.approx(np.sqrt(1.1 / (1 + 0.1 * 8.3476)), rel=1e-6)
    assert c.details["i_max_pu"] == pytest.approx(0.7743, abs=1e-4)
    assert c.details["k_rating_needed"] == 9  # common practice: next K rating above 8.35
    assert c.status == "pass"


def test_dimmer_derating_and_minimum_load():
    # Common practice: LED load against the filament rating times a derating factor.
    assert ck.dimmer_load(200, 600, 0.25, None, 200).status == "fail"
    assert ck.dimmer_load(100, 600, 0.25, None, 100).status == "pass"
    assert ck.dimmer_load(10, 600, 0.25, 25.0, 10).status == "warn"


def test_neutral_above_the_tables_figure_is_sized_on_itself():
    # Table E.52.1 assumes the neutral carries the 3rd harmonic of balanced lines; with 18 %
    # third harmonic it sizes on the line current / 0.86 (IEC 60364-5-52 Annex E). A neutral
    # that carries more (9th, 15th ... add too) is sized on its own current (conservative,
    # common practice), and an ampacity between the two figures fails.
    c = ck.neutral_conductor(18.0, 3.0, 4.3, neutral_ampacity_a=4.0, imbalance=0.0)
    assert c.details["table_sizing_a"] == pytest.approx(3.0 / 0.86)
    assert c.value == pytest.approx(4.3)
    assert c.status == "fail"
