"""A lamp's flicker under the flickermeter's test fluctuations, and under firing jitter.

Sources: IEC 61000-4-15:2010 Table 5 (rectangular fluctuations giving Pst = 1, 230 V 50 Hz:
39 changes/min 0.894 %, 110 changes/min 0.722 %, 1620 changes/min 0.407 %; seen in a public
transcription of the standard's tables); IEC TR 61547-1:2015 clause 4 (a lamp is judged by
its Pst_LM under the fluctuation that gives Pst = 1 on an incandescent lamp). Closed-form
properties are derived beside each check.
"""

from __future__ import annotations

import numpy as np
import pytest

from pqcalc.circuits import DimmerSpec, LoadGroup, Supply
from pqcalc.errors import InputError
from pqcalc.light import (
    dimmer_jitter_pst_lm,
    reference_fluctuation,
    voltage_fluctuation_immunity,
)
from pqcalc.light.flickermeter import light_gain_of_reference_lamp

SUPPLY = Supply(230.0, 50.0)
NONE = DimmerSpec("none")


@pytest.mark.parametrize("cpm,dvv_pct", [(39, 0.894), (110, 0.722), (1620, 0.407)])
def test_reference_fluctuation_reproduces_table_5(cpm, dvv_pct):
    # IEC 61000-4-15:2010 Table 5, within the standard's +-5 %
    d = reference_fluctuation(cpm / 120.0, "rectangular")
    assert 100 * d == pytest.approx(dvv_pct, rel=0.05)


def test_reference_lamp_is_a_tungsten_lamp():
    # The voltage meter's weighting (lamp and eye) over the light meter's (eye alone),
    # both scaled to P_inst, is the relative light change per relative voltage change of
    # the lamp the two standards assume. Quasi-statically a gas-filled tungsten lamp gives
    # about 3.4 to 3.8 (light ~ V^3.4..3.8: handbook exponent, from memory), and its
    # filament's heat capacity makes it fall with frequency.
    g = light_gain_of_reference_lamp(np.array([0.1, 1.0, 8.8, 25.0]))
    assert 3.3 < g[0] < 3.9
    assert np.all(np.diff(g) < 0)


def test_incandescent_model_gives_pst_lm_near_one():
    # IEC TR 61547-1's light meter was scaled on 60 W incandescent lamps so that their
    # light under a Pst = 1 fluctuation reads Pst_LM = 1. The project's filament model
    # (light ~ P^2.125 with P ~ V^2: gain 4.25; 25 ms thermal time constant: both common
    # practice, from memory) should land near 1: at 8.8 Hz its gain 4.25 / |1 + j 2 pi 8.8
    # 0.025| = 2.49 against the reference lamp's 2.52 (above). Tolerance 15 %: the model's
    # quasi-static exponent is 12 % above the reference lamp's.
    for fm, shape in [(8.8, "sine"), (2.0, "sine"), (39 / 120, "rectangular")]:
        r = voltage_fluctuation_immunity(SUPPLY, NONE, [LoadGroup("resistive", 60.0)],
                                         modulation_hz=fm, shape=shape)
        assert r.reference_pst == pytest.approx(1.0)
        assert r.pst_lm == pytest.approx(1.0, rel=0.15)
    # without the thermal response the quasi-static filament is the plain ratio 4.25/2.52
    q = voltage_fluctuation_immunity(SUPPLY, NONE, [LoadGroup("resistive", 60.0)],
                                     thermal=False)
    assert q.light_voltage_gain == pytest.approx(4.25, rel=0.01)
    assert q.pst_lm == pytest.approx(4.25 / float(light_gain_of_reference_lamp(8.8)),
                                     rel=0.02)


def test_constant_output_driver_is_immune():
    # a two-stage (pfc) driver holds its LED current: its light does not follow the supply
    r = voltage_fluctuation_immunity(SUPPLY, NONE, [LoadGroup("pfc", 20.0)])
    assert r.pst_lm == pytest.approx(0.0, abs=1e-9)
    assert r.light_voltage_gain == pytest.approx(0.0, abs=1e-9)


def test_pst_lm_is_proportional_to_the_fluctuation():
    # small-signal linearity: the light change is proportional to dV/V, P_inst to its
    # square, so Pst_LM doubles when dV/V doubles (the lamp's curve is smooth: 5 % here)
    g = [LoadGroup("dropper", 9.0)]
    a = voltage_fluctuation_immunity(SUPPLY, NONE, g, dv_v=0.003)
    b = voltage_fluctuation_immunity(SUPPLY, NONE, g, dv_v=0.006)
    assert b.pst_lm == pytest.approx(2 * a.pst_lm, rel=0.05)
    assert a.pst_lm > 0.5  # a dropper follows the supply: a real immunity question


def test_modulation_frequency_outside_the_quasi_static_range():
    g = [LoadGroup("dropper", 9.0)]
    with pytest.raises(InputError, match=r"modulation_hz: expected .* to 12.5 Hz"):
        voltage_fluctuation_immunity(SUPPLY, NONE, g, modulation_hz=20.0)
    with pytest.raises(InputError, match="modulation_hz"):
        voltage_fluctuation_immunity(SUPPLY, NONE, g, modulation_hz=0.0)
    with pytest.raises(InputError, match="shape"):
        voltage_fluctuation_immunity(SUPPLY, NONE, g, shape="triangle")
    with pytest.raises(InputError, match="dv_v"):
        voltage_fluctuation_immunity(SUPPLY, NONE, g, dv_v=-0.01)


# ------------------------------------------------------------------ firing jitter
DIM = DimmerSpec("leading-edge", conduction_deg=120.0, switch="transistor")
DROPPER = [LoadGroup("dropper", 9.0)]
OBS = 60.0  # a 60 s observation keeps the suite fast; the default is the standard's 600 s


def test_negative_jitter_is_refused():
    with pytest.raises(InputError, match=r"jitter_deg: expected a standard deviation >= 0"):
        dimmer_jitter_pst_lm(SUPPLY, DIM, DROPPER, -1.0)
    with pytest.raises(InputError, match="dimmer"):
        dimmer_jitter_pst_lm(SUPPLY, NONE, DROPPER, 1.0)


def test_zero_jitter_is_the_steady_state():
    r = dimmer_jitter_pst_lm(SUPPLY, DIM, DROPPER, 0.0)
    assert r.pst_lm == r.pst_lm_steady
    assert r.pst_lm < 0.5  # a symmetric cut repeats every half cycle: 100 Hz, no flicker


def test_jitter_makes_flicker_and_is_reproducible():
    a = dimmer_jitter_pst_lm(SUPPLY, DIM, DROPPER, 1.0, seed=3, observation_s=OBS)
    b = dimmer_jitter_pst_lm(SUPPLY, DIM, DROPPER, 1.0, seed=3, observation_s=OBS)
    c = dimmer_jitter_pst_lm(SUPPLY, DIM, DROPPER, 2.0, seed=3, observation_s=OBS)
    assert a.pst_lm == b.pst_lm  # seeded: the same firing sequence
    assert a.pst_lm > 1.0 > a.pst_lm_steady
    # small-signal: white jitter of sigma makes light noise proportional to sigma, and
    # Pst_LM proportional to the noise amplitude (P_inst to its power): doubling sigma
    # nearly doubles Pst_LM (the +-3 sigma clipping and the dimming curve's bend: 20 %)
    assert c.pst_lm == pytest.approx(2 * a.pst_lm, rel=0.2)


def test_jitter_record_too_short_for_the_observation():
    with pytest.raises(InputError, match="observation_s"):
        dimmer_jitter_pst_lm(SUPPLY, DIM, DROPPER, 1.0, observation_s=1.0)
