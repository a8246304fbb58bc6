"""Sweeps: closed-form check values, the labelled dataset, netCDF, and dask equivalence.

The ideal evaluator is checked against the closed forms of a resistive load behind an ideal
phase cut and against an independent path (sampled waveform -> FFT in pqcalc.spectrum); the
engine (axes, distinct cases, draws, voltage axis, lamp count) is checked with it because its
answers are known exactly; the circuit evaluator is checked against the closed form where the
circuit reduces to it; a LocalCluster run must equal the in-process run bit for bit.
"""

from __future__ import annotations

import math
import socket
import time

import numpy as np
import pytest
import xarray as xr

from pqcalc.errors import InputError
from pqcalc.spectrum import spectrum
from pqcalc.sweep import (
    MAX_ORDER,
    Fixture,
    SweepSpec,
    _interval_terms,
    cases,
    circuit_case,
    ideal_resistive_case,
    parse_range,
    portfolio,
    sweep,
    write_netcdf,
)
from tests.conftest import phase_cut_resistive

LAMP60 = Fixture("lamp60", "resistive", 60.0)
LAMP100 = Fixture("lamp100", "resistive", 100.0)


def _one(c_deg: float, dimmer: str = "leading-edge", v: float = 230.0, fx=LAMP60):
    spec = SweepSpec((fx,), settings=(c_deg,), voltages_v=(v,), dimmer=dimmer)
    return ideal_resistive_case(cases(spec)[0, 0, 0, 0])


# ------------------------------------------------------------------ ideal evaluator
@pytest.mark.parametrize("dimmer", ["leading-edge", "trailing-edge"])
def test_ideal_cut_at_90_deg_matches_closed_forms(dimmer):
    o = _one(90.0, dimmer)
    m = np.abs(o.current_h_a)
    # closed forms of an ideal cut at alpha = 90 deg (computed; REFERENCES "closed forms"):
    # I3/I1 = 53.70 %, I5/I1 = I7/I1 = 17.90 %, PF = 1/sqrt(2), cos phi1 = 0.8436.
    # Tolerance 5e-5: the quoted values are rounded to 4 significant figures.
    assert m[3] / m[1] == pytest.approx(0.5370, abs=5e-5)
    assert m[5] / m[1] == pytest.approx(0.1790, abs=5e-5)
    assert m[7] / m[1] == pytest.approx(0.1790, abs=5e-5)
    assert o.pf == pytest.approx(1 / math.sqrt(2), rel=1e-12)  # exact: P = V^2/(2R)
    assert o.dpf == pytest.approx(0.8436, abs=5e-5)
    # half-wave symmetry: no even orders, no DC (closed form)
    assert np.all(m[0::2] == 0)
    # sign convention (DEVELOPERS.md): leading edge lags (negative phase), trailing leads
    ang = float(np.angle(o.current_h_a[1]))
    assert (ang < 0) if dimmer == "leading-edge" else (ang > 0)


@pytest.mark.parametrize("c_deg", [20.0, 45.0, 120.0, 170.0])
def test_ideal_rms_and_power_closed_form(c_deg):
    # I_rms = (Ipk/sqrt2) sqrt(1 - a/pi + sin 2a / (2 pi)), a = pi - conduction (closed form,
    # REFERENCES "closed forms"); P = I_rms^2 R for a resistor (Joule). Exact to rounding.
    o = _one(c_deg)
    r = 230.0**2 / 60.0
    a = math.pi - math.radians(c_deg)
    ipk = math.sqrt(2) * 230.0 / r
    i_rms = ipk / math.sqrt(2) * math.sqrt(1 - a / math.pi + math.sin(2 * a) / (2 * math.pi))
    assert o.i_rms_a == pytest.approx(i_rms, rel=1e-12)
    assert o.p_w == pytest.approx(i_rms**2 * r, rel=1e-12)
    # Parseval: the orders to h50 hold no more than the rms; carried on to H = 20001 the
    # same series terms hold all of it but the tail of the step at the cut. That step of
    # Ipk sin(a) has odd-order amplitudes -> 2 Ipk sin(a) / (pi h), so the rms^2 beyond H is
    # Ipk^2 sin^2(a) / (pi^2 H) to first order (sum of 1/h^2 over odd h > H ~ 1/(2H)).
    # Tolerance 1e-6: the next term of that estimate is O(1/H^2).
    assert np.sum(np.abs(o.current_h_a) ** 2) <= o.i_rms_a**2 * (1 + 1e-12)
    top = 20001
    total = 0.0
    for h in range(1, top + 1, 2):
        ss, sc = _interval_terms(h, a, math.pi)
        total += ((2 / math.pi) * ipk) ** 2 * (ss**2 + sc**2) / 2
    tail = ipk**2 * math.sin(a) ** 2 / (math.pi**2 * top)
    assert total + tail == pytest.approx(o.i_rms_a**2, rel=1e-6)


@pytest.mark.parametrize("edge,dimmer",
                         [("leading", "leading-edge"), ("trailing", "trailing-edge")])
@pytest.mark.parametrize("c_deg", [30.0, 90.0, 150.0])
def test_ideal_series_equals_fft_of_the_sampled_waveform(edge, dimmer, c_deg):
    # An independent path: the chopped sine sampled at 65536 points per cycle (mid-sample
    # instants) through pqcalc.spectrum's DFT. Tolerance 3e-4 of I1: the cut does not fall
    # on a sample, and a step misplaced by up to half a sample moves each phasor by about
    # Ipk * (pi / 65536) / pi, ~1.2e-4 of I1 at 30 deg (measured 1.2e-4).
    w = phase_cut_resistive(math.radians(180 - c_deg), edge, 230.0, 230.0**2 / 60.0)
    s = spectrum(w, MAX_ORDER)
    o = _one(c_deg, dimmer)
    assert np.max(np.abs(s.current_a - o.current_h_a)) <= 3e-4 * o.i1_rms_a
    assert w.p_w == pytest.approx(o.p_w, rel=3e-4)


def test_zero_conduction_is_an_off_lamp_with_a_flag():
    # no conduction, no current (closed form); ratios to a zero fundamental are undefined,
    # so they are NaN and the case carries the flag that says so
    o = _one(0.0)
    assert o.i_rms_a == 0 and o.p_w == 0 and np.all(o.current_h_a == 0)
    assert o.flags == ("no-current",) and math.isnan(o.thd_i) and math.isnan(o.pf)


def test_ideal_refuses_other_models_and_knobs():
    with pytest.raises(InputError, match="resistive lamps only"):
        ideal_resistive_case(cases(SweepSpec((Fixture("d", "pfc", 40.0),)))[0, 0, 0, 0])
    spec = SweepSpec((LAMP60,), settings=(0.5,), setting_kind="knob")
    with pytest.raises(InputError, match="conduction-angle"):
        ideal_resistive_case(cases(spec)[0, 0, 0, 0])


# ------------------------------------------------------------------------ the engine
def _spec(**kw):
    base = dict(fixtures=(LAMP60, LAMP100), settings=(45.0, 90.0, 135.0, 180.0),
                voltages_v=(220.0, 230.0, 240.0))
    base.update(kw)
    return SweepSpec(**base)


def test_dataset_dims_coords_and_units():
    ds = sweep(_spec(draws=2), ideal_resistive_case)
    assert ds.sizes == {"setting": 4, "fixture": 2, "voltage": 3, "draw": 3, "order": 51}
    assert list(ds.fixture.values) == ["lamp60", "lamp100"]
    assert list(ds.model.values) == ["resistive", "resistive"]
    assert ds.setting.attrs["units"] == "deg" and ds.voltage.attrs["units"] == "V"
    for name in ("i_rms_a", "i1_rms_a", "p_w", "i_h_a"):
        assert ds[name].attrs["units"] in ("A", "W")
    for name in ("thd_i", "pf", "dpf", "crest_factor"):
        assert ds[name].attrs["units"] == "1"  # fractions inside (DEVELOPERS.md)
    assert ds.i_h_a.dims == ("setting", "fixture", "voltage", "draw", "order")
    assert ds.i_h_phase_rad.attrs["units"] == "rad"
    assert "light_rel" not in ds  # the ideal evaluator gives no light output
    assert "licensed professional" in ds.attrs["caution"]
    assert ds.attrs["cases"] == 4 * 2 * 3 * 3
    # every value is finite: no silent NaN
    for name in ("i_rms_a", "thd_i", "pf", "p_w", "i_h_a"):
        assert np.all(np.isfinite(ds[name].values))
    # the dataset's THD is the sum over orders 2..40 of its own magnitudes (IEC 61000-3-2
    # THD definition, orders 2..40, from memory)
    m = ds.i_h_a.values
    thd = np.sqrt(np.sum(m[..., 2:41] ** 2, axis=-1)) / m[..., 1]
    np.testing.assert_allclose(ds.thd_i.values, thd, rtol=1e-12)


def test_voltage_axis_keeps_the_lamp_built_for_the_rated_voltage():
    # The components are fixed at the rated 230 V, so a resistor draws P = V^2 / R
    # (Ohm's law): P(V) = 60 W * (V / 230)^2 at full conduction. Exact to rounding.
    ds = sweep(_spec(), ideal_resistive_case)
    p = ds.p_w.sel(setting=180.0, fixture="lamp60", draw=0)
    np.testing.assert_allclose(p.values, 60.0 * (ds.voltage.values / 230.0) ** 2, rtol=1e-12)


def test_undimmed_cases_are_evaluated_once():
    # dimmer "none": the setting does not change the circuit, so 4 settings x 2 fixtures x
    # 3 voltages reduce to 2 x 3 distinct cases (design rule: cost grows with distinct cases)
    calls = []

    def counting(case):
        calls.append(case)
        return ideal_resistive_case(case)

    ds = sweep(_spec(dimmer="none"), counting)
    assert len(calls) == 6 and ds.attrs["distinct_cases"] == 6
    # and every setting row holds the same (undimmed) figures: PF = 1 for a resistor
    np.testing.assert_allclose(ds.pf.values, 1.0, rtol=1e-12)  # to rounding


def test_lamp_count_scales_current_linearly():
    # n identical resistors in parallel draw n times the current (Kirchhoff), any cut
    one = sweep(_spec(), ideal_resistive_case)
    five = sweep(_spec(lamps=5), ideal_resistive_case)
    np.testing.assert_allclose(five.i_h_a.values, 5 * one.i_h_a.values, rtol=1e-12)
    np.testing.assert_allclose(five.thd_i.values, one.thd_i.values, rtol=1e-12)


def test_monte_carlo_draws_are_reproducible_and_within_tolerance():
    spec = _spec(draws=20, tolerance=0.1, seed=7)
    a = sweep(spec, ideal_resistive_case)
    b = sweep(spec, ideal_resistive_case)
    xr.testing.assert_identical(a, b)  # a pure function of (seed, draw, fixture name)
    p = a.p_w.sel(setting=180.0, voltage=230.0)
    # draw 0 is nominal: the rated power exactly
    np.testing.assert_allclose(p.sel(draw=0).values, [60.0, 100.0], rtol=1e-12)
    # R within +-10 % gives P = V^2/R within [P/1.1, P/0.9] (Ohm's law)
    rated = np.array([60.0, 100.0])[:, None]
    assert np.all(p.values >= rated / 1.1 - 1e-9) and np.all(p.values <= rated / 0.9 + 1e-9)
    assert np.unique(p.values).size > 30  # the draws do differ
    # other seed, other draws
    c = sweep(_spec(draws=20, tolerance=0.1, seed=8), ideal_resistive_case)
    assert not np.array_equal(c.p_w.values, a.p_w.values)


def test_netcdf_round_trip(tmp_path):
    ds = sweep(_spec(draws=1), ideal_resistive_case)
    out = tmp_path / "sweep.nc"
    write_netcdf(ds, out)
    back = xr.open_dataset(out, engine="h5netcdf").load()
    back.close()
    xr.testing.assert_identical(back, ds)
    assert back.i_h_a.attrs["units"] == "A"
    assert [p.name for p in tmp_path.iterdir()] == ["sweep.nc"]  # no temporary left


def test_write_netcdf_refuses_missing_folder_and_leaves_nothing(tmp_path):
    ds = sweep(_spec(), ideal_resistive_case)
    with pytest.raises(InputError, match="does not exist"):
        write_netcdf(ds, tmp_path / "missing" / "s.nc")
    assert list(tmp_path.iterdir()) == []


# ------------------------------------------------------------------ bad input
@pytest.mark.parametrize("kw,match", [
    (dict(settings=()), "empty"),
    (dict(settings=(190.0,)), "outside 0..180"),
    (dict(settings=(1.5,), setting_kind="knob"), "outside 0..1"),
    (dict(settings=(90.0, 90.0)), "once"),
    (dict(voltages_v=()), "empty"),
    (dict(voltages_v=(400.0,)), "100 to 277"),
    (dict(dimmer="phase-magic"), "dimmer"),
    (dict(draws=-1), "draws"),
    (dict(tolerance=1.5), "tolerance"),
    (dict(fixtures=(LAMP60, LAMP60)), "unique"),
    (dict(fixtures=()), "at least one"),
])
def test_bad_specs_name_the_field(kw, match):
    with pytest.raises(InputError, match=match):
        _spec(**kw)


def test_unknown_model_and_power_out_of_range_are_input_errors():
    with pytest.raises(InputError, match="unknown 'halogen'"):
        cases(SweepSpec((Fixture("x", "halogen", 50.0),)))
    with pytest.raises(InputError, match="fixture tiny"):
        cases(SweepSpec((Fixture("tiny", "pfc", 0.5),)))


def test_parse_range():
    assert parse_range("0:180:5") == (0.0, 45.0, 90.0, 135.0, 180.0)
    assert parse_range("220, 230,240") == (220.0, 230.0, 240.0)
    assert parse_range("90:90:1") == (90.0,)
    for bad in ("", "0:180:0", "0:180", "a,b", "1,,2", "0:180:x", "nan"):
        with pytest.raises(InputError):
            parse_range(bad)


def _closed_port() -> int:
    s = socket.socket()
    s.bind(("127.0.0.1", 0))
    port = s.getsockname()[1]
    s.close()  # nothing listens there now
    return port


def test_unreachable_scheduler_is_a_quick_input_error():
    t0 = time.perf_counter()
    with pytest.raises(InputError, match="could not connect within 2 s"):
        sweep(_spec(), ideal_resistive_case, scheduler=f"tcp://127.0.0.1:{_closed_port()}",
              timeout_s=2.0)
    assert time.perf_counter() - t0 < 15.0  # a connection timeout, not a hang


# ------------------------------------------------------------------ circuit evaluator
def test_circuit_solver_reduces_to_the_ideal_cut():
    # A resistive lamp on a stiff supply (no source impedance) behind a trailing-edge
    # dimmer: the circuit solver's answer must approach the closed form. Tolerance 2 %:
    # the model's switch has an on resistance (0.05 ohm against ~880 ohm) and a 20 us
    # turn-off ramp, which moves the cut by ~0.4 deg (common practice values of
    # pqcalc.circuits.dimmers); the filament is the model's hot resistance.
    spec = SweepSpec((LAMP60,), settings=(60.0, 120.0), dimmer="trailing-edge",
                     source_r_ohm=0.0, source_l_h=0.0)
    a = sweep(spec, circuit_case)
    b = sweep(spec, ideal_resistive_case)
    np.testing.assert_allclose(a.i_rms_a.values, b.i_rms_a.values, rtol=0.02)
    np.testing.assert_allclose(a.p_w.values, b.p_w.values, rtol=0.02)
    np.testing.assert_allclose(a.i_h_a.sel(order=[1, 3, 5]).values,
                               b.i_h_a.sel(order=[1, 3, 5]).values, rtol=0.03, atol=2e-4)


# ------------------------------------------------------------------ distributed
@pytest.fixture(scope="module")
def dask_client():
    distributed = pytest.importorskip("dask.distributed")
    cluster = distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                                       dashboard_address=None)
    client = distributed.Client(cluster)
    yield client
    client.close()
    cluster.close()


def test_local_cluster_equals_in_process(dask_client):
    # the same numbers bit for bit: each case is a pure function of its inputs
    spec = _spec(draws=3, seed=3)
    local = sweep(spec, ideal_resistive_case)
    remote = sweep(spec, ideal_resistive_case, client=dask_client, chunk_size=7)
    xr.testing.assert_identical(remote, local)
    # and with the circuit solver (a few quick resistive and active-PFC cases)
    spec = SweepSpec((LAMP60, Fixture("pfc40", "pfc", 40.0)), settings=(90.0, 150.0),
                     dimmer="trailing-edge")
    xr.testing.assert_identical(sweep(spec, circuit_case, client=dask_client),
                                sweep(spec, circuit_case))


def test_evaluator_errors_come_back_from_the_workers(dask_client):
    spec = SweepSpec((Fixture("d", "pfc", 40.0),))
    with pytest.raises(InputError, match="resistive lamps only"):
        sweep(spec, ideal_resistive_case, client=dask_client)


# ------------------------------------------------------------------ portfolio
def _building(path, lamps: int, system: str = "three-phase-wye"):
    lines = ["[project]", f'name = "Block {lamps}"', "[supply]", f'system = "{system}"',
             "voltage_ln_v = 230", "frequency_hz = 50", "source_r_ohm = 0.0",
             "source_l_h = 0.0", "[analysis]", "supply_interaction = false",
             "[fixtures.lamp]", 'model = "resistive"', "power_w = 100",
             "[[panels]]", 'id = "P1"']
    for ph in (["L1", "L2", "L3"] if system == "three-phase-wye" else ["L1"]):
        lines += ["[[panels.circuits]]", f'id = "C{ph}"', f'line = "{ph}"',
                  f'fixtures = [{{type = "lamp", count = {lamps}}}]']
    path.write_text("\n".join(lines) + "\n")
    return path


def test_portfolio_one_row_per_building(tmp_path):
    a = _building(tmp_path / "north.toml", 10)
    b = _building(tmp_path / "south.toml", 4, "single-phase")
    ds = portfolio([a, b])
    assert list(ds.building.values) == ["north", "south"]
    # undimmed resistive lamps on a stiff supply: I = n P / V per line (Ohm's law); the
    # balanced three-phase neutral carries no current (phasor sum of a balanced set).
    # Tolerance 1e-3: the model's hot resistance is exactly V^2/P; what remains is the
    # solver's switch on-resistance and grid sampling.
    assert float(ds.i_line_max_a.sel(building="north")) == pytest.approx(10 * 100 / 230,
                                                                         rel=1e-3)
    assert float(ds.i_neutral_a.sel(building="north")) < 1e-3 * 10 * 100 / 230
    assert float(ds.i_line_max_a.sel(building="south")) == pytest.approx(4 * 100 / 230,
                                                                         rel=1e-3)
    assert np.isnan(float(ds.i_neutral_a.sel(building="south")))  # documented: single-phase
    assert ds.p_w.attrs["units"] == "W"
    assert set(ds.verdict.values) <= {"pass", "fail"}
    out = tmp_path / "p.nc"
    write_netcdf(ds, out)
    back = xr.open_dataset(out, engine="h5netcdf").load()
    back.close()
    xr.testing.assert_identical(back, ds)
