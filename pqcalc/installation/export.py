"""Exports of an assessment: JSON, CSV tables, an xarray Dataset and netCDF.

- :func:`to_json`: the assessment's JSON (the form ``pqcalc assess --json`` prints) with the
  tool version, the per-order spectra of every circuit and node, and the fixture lineup when
  one is given.
- :func:`to_csv`: a folder (or, for a path ending in ``.zip``, a zip archive) of flat tables,
  one row per item, every scenario in the same table:

  ================== ==============================================================
  ``circuits.csv``    one row per scenario and circuit: setting, currents, THD, PF, flags
  ``nodes.csv``       one row per scenario, node (panel, feeder, service) and conductor
                      (L1, L2, L3, N): currents, THD, PF, voltage THD
  ``orders.csv``      one row per scenario, node, conductor and harmonic order 0..50 [A]
  ``circuit_orders.csv`` one row per scenario, circuit and harmonic order 0..50 [A]
  ``checks.csv``      one row per check: where, status, value, limit, source
  ``about.csv``       key, value: project, supply, tool version, units, caution
  ================== ==============================================================

  Columns carry their units in the name (``i_rms_a``, ``thd_i_pct``); ratios are percent,
  as at every edge of pqcalc.
- :func:`to_dataset`: an :class:`xarray.Dataset` with the named dimensions ``scenario``
  (the scenario names), ``circuit``, ``node``, ``conductor`` (L1, L2, L3, N) and ``order``
  (0..50); every variable and coordinate has ``units`` (UDUNITS spelling: ``A``, ``V``,
  ``W``, ``degree``, ``1`` for a fraction or a label) and ``long_name`` attributes, and the
  global ``Conventions`` attribute is ``CF-1.10``. Ratios stay fractions here
  (``thd_i`` = 0.42), as inside pqcalc. Quantities that do not exist for a conductor (a
  neutral's power factor, the fourth conductor of a single-phase node) are NaN, and the
  variable's ``note`` says so.
- :func:`to_netcdf`: that Dataset written with the ``h5netcdf`` engine, atomically, and
  readable with :func:`xarray.open_dataset`.

The writers of :mod:`pqcalc.io.export` write them through a temporary file (or folder) and
a rename: a failure leaves no partial output.

Results that guide conductor, breaker, dimmer or transformer choices carry
:data:`pqcalc.installation.results.CAUTION` (the JSON ``caution`` key, the ``about.csv`` row, the Dataset's
``caution`` attribute).
"""

from __future__ import annotations

import json
import os
from collections.abc import Sequence
from pathlib import Path
from typing import TYPE_CHECKING

import numpy as np

from ..errors import InputError
from ..io.export import CF_CONVENTIONS, check_output_path, csv_text, write_csv_tables, write_netcdf
from ..io.jsonsafe import json_safe
from .lineup import LineupEntry
from .results import Assessment

if TYPE_CHECKING:  # pragma: no cover
    import xarray as xr

__all__ = [
    "CSV_TABLES",
    "assessment_dict",
    "to_json",
    "csv_tables",
    "to_csv",
    "to_dataset",
    "to_netcdf",
]

#: The tables :func:`to_csv` writes, in order.
CSV_TABLES: tuple[str, ...] = ("circuits.csv", "nodes.csv", "orders.csv", "circuit_orders.csv",
                               "checks.csv", "about.csv")

#: Conductor labels of the ``conductor`` dimension.
CONDUCTORS: tuple[str, ...] = ("L1", "L2", "L3", "N")

_NO_NEUTRAL = ("NaN for the neutral (N), where the quantity is not defined, and for "
               "conductors the supply system does not have")


# ------------------------------------------------------------------------------- JSON
def _lineup_dict(lineup: Sequence[LineupEntry] | None) -> list[dict] | None:
    if lineup is None:
        return None
    out = []
    for e in lineup:
        out.append({"fixture": e.fixture, "description": e.description,
                    "verdict": e.verdict,
                    "eu_ecodesign": e.eu_ecodesign, "ecodesign": e.ecodesign,
                    "states": [{"state": s.state, **s.result.to_dict(),
                                "i_h_a": [float(x) for x in s.magnitudes_a],
                                "limits_a": {str(h): v for h, v in sorted(s.limits_a.items())},
                                "light": None if s.light is None else s.light.to_dict()}
                               for s in e.states]})
    return out


def assessment_dict(assessment: Assessment, lineup: Sequence[LineupEntry] | None = None) -> dict:
    """The assessment as a JSON-ready dict: :meth:`Assessment.to_dict` plus the tool
    version, per-order magnitudes [A] of each circuit and node per scenario, and the
    lineup."""
    from .. import __version__

    d = dict(assessment.to_dict())
    d["pqcalc_version"] = __version__
    d["units"] = ("SI; currents A rms, voltages V rms, power W, angles deg; keys ending _pct "
                  "are percent; i_h_a lists magnitudes [A rms] of orders 0..50")
    spectra = []
    for s in assessment.scenarios:
        spectra.append({
            "scenario": s.name,
            "circuits": {c.id: [float(x) for x in c.magnitudes_a]
                         for c in s.circuits if c.magnitudes_a is not None},
            "nodes": {p.id: {**{ln: [float(x) for x in r.magnitudes_a]
                                for ln, r in p.lines.items()},
                             **({"N": [float(x) for x in p.neutral.magnitudes_a]}
                                if p.neutral is not None else {})}
                      for p in _nodes(s)},
        })
    d["spectra_i_h_a"] = spectra
    lu = _lineup_dict(lineup)
    if lu is not None:
        d["lineup"] = lu
    return d


def to_json(assessment: Assessment, lineup: Sequence[LineupEntry] | None = None,
            indent: int | None = 2) -> str:
    """The assessment as JSON text (see :func:`assessment_dict`).

    Non-finite numbers are refused (:class:`~pqcalc.errors.InputError`), never written as
    ``NaN``; a missing value is ``null``.
    """
    return json.dumps(json_safe(assessment_dict(assessment, lineup)), indent=indent) + "\n"


# -------------------------------------------------------------------------------- rows
def _nodes(s) -> tuple:
    return tuple(s.panels) + tuple(s.feeders) + (s.transformer,)


def _finite(x: float) -> float | None:
    """A check's figure, or None (an empty cell) where it has none (NaN)."""
    return float(x) if np.isfinite(x) else None


def _pct(x) -> float | None:
    return None if x is None else 100.0 * float(x)


def circuit_rows(assessment: Assessment) -> list[dict]:
    """One dict per scenario and circuit (the rows of ``circuits.csv``)."""
    rows = []
    for s in assessment.scenarios:
        for c in s.circuits:
            st = [k.status for k in c.checks]
            rows.append({
                "scenario": s.name, "circuit": c.id, "panel": c.panel, "line": c.line,
                "conduction_deg": c.setting_deg, "knob": c.knob,
                "i_rms_a": c.i_rms_a, "i1_rms_a": c.i1_a, "i_peak_a": c.i_peak_a,
                "thd_i_pct": _pct(c.thd_i), "p_w": c.p_w, "pf": c.pf, "dpf": c.dpf,
                "inrush_peak_a": _finite(c.inrush_peak_a),
                "checks_failed": st.count("fail"), "checks_warned": st.count("warn"),
                "flags": ";".join(c.flags),
            })
    return rows


def node_rows(assessment: Assessment) -> list[dict]:
    """One dict per scenario, node and conductor (the rows of ``nodes.csv``)."""
    rows = []
    for s in assessment.scenarios:
        for p in _nodes(s):
            st = [k.status for k in p.checks]
            common = {"scenario": s.name, "node": p.id, "kind": p.kind}
            for ln, r in p.lines.items():
                rows.append({**common, "conductor": ln, "i_rms_a": r.i_rms_a,
                             "i1_rms_a": r.i1_a, "i_peak_a": r.i_peak_a,
                             "thd_i_pct": _pct(r.thd_i), "i3_pct_of_rms": r.i3_pct_of_rms,
                             "p_w": r.p_w, "pf": r.pf, "dpf": r.dpf, "v_rms_v": r.v_rms_v,
                             "thd_v_pct": _pct(r.thd_v), "ratio_to_max_line": None,
                             "triplen_share_pct": None, "k_factor": p.k_factor,
                             "harmonic_loss_factor": p.harmonic_loss_factor,
                             "checks_failed": st.count("fail"),
                             "checks_warned": st.count("warn")})
            n = p.neutral
            if n is not None:
                rows.append({**common, "conductor": "N", "i_rms_a": n.i_rms_a,
                             "i1_rms_a": float(n.magnitudes_a[1]), "i_peak_a": n.i_peak_a,
                             "thd_i_pct": None, "i3_pct_of_rms": (
                                 100.0 * float(n.magnitudes_a[3]) / n.i_rms_a
                                 if n.i_rms_a > 0 else None),
                             "p_w": None, "pf": None, "dpf": None, "v_rms_v": None,
                             "thd_v_pct": None, "ratio_to_max_line": n.ratio_to_max_line,
                             "triplen_share_pct": _pct(n.triplen_share),
                             "k_factor": p.k_factor,
                             "harmonic_loss_factor": p.harmonic_loss_factor,
                             "checks_failed": st.count("fail"),
                             "checks_warned": st.count("warn")})
    return rows


def order_rows(assessment: Assessment) -> list[dict]:
    """One dict per scenario, node, conductor and order 0..50 (``orders.csv``)."""
    rows = []
    for s in assessment.scenarios:
        for p in _nodes(s):
            mags = {ln: r.magnitudes_a for ln, r in p.lines.items()}
            if p.neutral is not None:
                mags["N"] = p.neutral.magnitudes_a
            for ln, m in mags.items():
                i1 = float(m[1])
                for h, v in enumerate(m):
                    rows.append({"scenario": s.name, "node": p.id, "kind": p.kind,
                                 "conductor": ln, "order": h, "i_h_a": float(v),
                                 "i_h_pct_of_i1": 100.0 * float(v) / i1 if i1 > 0 else None})
    return rows


def circuit_order_rows(assessment: Assessment) -> list[dict]:
    """One dict per scenario, circuit and order 0..50 (``circuit_orders.csv``)."""
    rows = []
    for s in assessment.scenarios:
        for c in s.circuits:
            if c.magnitudes_a is None:
                continue
            i1 = float(c.magnitudes_a[1])
            for h, v in enumerate(c.magnitudes_a):
                rows.append({"scenario": s.name, "circuit": c.id, "panel": c.panel,
                             "line": c.line, "order": h, "i_h_a": float(v),
                             "i_h_pct_of_i1": 100.0 * float(v) / i1 if i1 > 0 else None})
    return rows


def check_rows(assessment: Assessment) -> list[dict]:
    """One dict per check of every scenario (``checks.csv``)."""
    rows = []
    for s in assessment.scenarios:
        items = [("circuit", c.id, c.checks) for c in s.circuits]
        items += [(p.kind, p.id, p.checks) for p in _nodes(s)]
        items.append(("installation", "", s.checks))
        for kind, ident, checks in items:
            for k in checks:
                rows.append({"scenario": s.name, "where": kind, "id": ident, "check": k.name,
                             "status": k.status, "value": _finite(k.value), "limit": _finite(k.limit),
                             "unit": k.unit, "message": k.message, "source": k.source})
    return rows


def about_rows(assessment: Assessment) -> list[dict]:
    """Key-value rows describing the export (``about.csv``)."""
    from .. import __version__

    inst = assessment.installation
    pj = inst.project
    sup = inst.supply
    kv = [("project", pj.name), ("site", pj.site), ("engineer", pj.engineer),
          ("date", pj.date), ("installation_file", inst.path), ("pqcalc_version", __version__),
          ("supply_system", sup.system), ("voltage_ln_v", sup.voltage_ln_v),
          ("frequency_hz", sup.frequency_hz), ("design_scenario", assessment.design.name),
          ("scenarios", ";".join(s.name for s in assessment.scenarios)),
          ("verdict", "fail" if assessment.failed else "pass"),
          ("units", "SI; currents A rms, voltages V rms, power W, angles deg; columns ending "
                    "_pct are percent; THD over orders 2..40"),
          ("empty_cell", "a quantity that does not exist for that row (e.g. the power factor "
                         "of a neutral)"),
          ("caution", assessment.caution)]
    return [{"key": k, "value": v} for k, v in kv]


def csv_tables(assessment: Assessment) -> dict[str, str]:
    """The CSV tables as ``{file name: text}`` (see :data:`CSV_TABLES`)."""
    return {
        "circuits.csv": csv_text(circuit_rows(assessment)),
        "nodes.csv": csv_text(node_rows(assessment)),
        "orders.csv": csv_text(order_rows(assessment)),
        "circuit_orders.csv": csv_text(circuit_order_rows(assessment), [
            "scenario", "circuit", "panel", "line", "order", "i_h_a", "i_h_pct_of_i1"]),
        "checks.csv": csv_text(check_rows(assessment), [
            "scenario", "where", "id", "check", "status", "value", "limit", "unit", "message",
            "source"]),
        "about.csv": csv_text(about_rows(assessment)),
    }


def to_csv(assessment: Assessment, folder: str | os.PathLike) -> Path:
    """Write the CSV tables into ``folder``, or into a zip archive when it ends in ``.zip``
    (:func:`pqcalc.io.export.write_csv_tables`). Returns the path written."""
    return write_csv_tables(csv_tables(assessment), folder)


# ---------------------------------------------------------------------------- xarray
def _units(da, units: str, long_name: str, note: str | None = None):
    da.attrs["units"] = units
    da.attrs["long_name"] = long_name
    if note:
        da.attrs["note"] = note
    return da


def _f(x) -> float:
    return np.nan if x is None else float(x)


def to_dataset(assessment: Assessment) -> xr.Dataset:
    """The assessment as an :class:`xarray.Dataset` with named dimensions and units.

    Dimensions: ``scenario`` (scenario names), ``circuit`` (circuit ids), ``node`` (panels,
    then feeders, then ``service``: the transformer secondary), ``conductor`` (L1,
    L2, L3, N) and ``order`` (harmonic orders 0..50). Coordinates ``circuit_panel``,
    ``circuit_line`` and ``node_kind`` label the circuits and nodes.

    Variables (all with ``units`` and ``long_name``): per circuit ``circuit_i_rms_a``,
    ``circuit_i1_a``, ``circuit_i_peak_a``, ``circuit_thd_i``, ``circuit_p_w``,
    ``circuit_pf``, ``circuit_dpf``, ``circuit_inrush_peak_a``, ``circuit_conduction_deg``,
    ``circuit_i_h_a`` (by order), ``circuit_status``; per node and conductor ``i_rms_a``,
    ``i1_a``, ``i_peak_a``, ``thd_i``, ``pf``, ``dpf``, ``p_w``, ``v_rms_v``, ``thd_v``,
    ``i_h_a`` (by order); per node ``neutral_ratio``, ``neutral_triplen_share``,
    ``k_factor``, ``harmonic_loss_factor``, ``node_status``. ``*_status`` is the worst
    check status (``fail`` > ``warn`` > ``pass`` > ``info``; ``none`` without checks).
    """
    import xarray as xr

    from .. import __version__

    scen = assessment.scenarios
    inst = assessment.installation
    settings = [s.name for s in scen]
    if len(set(settings)) != len(settings):  # names must label the axis uniquely
        settings = [f"{k + 1}: {n}" for k, n in enumerate(settings)]
    s0 = scen[0]
    circuits = [c.id for c in s0.circuits]
    nodes = [p.id for p in _nodes(s0)]
    kinds = [p.kind for p in _nodes(s0)]
    nh = 51
    for s in scen:
        for c in s.circuits:
            if c.magnitudes_a is not None:
                nh = len(c.magnitudes_a)
                break
    ns, nc, nn, npk = len(scen), len(circuits), len(nodes), len(CONDUCTORS)

    def arr(*shape):
        return np.full(shape, np.nan)

    c_vals = {k: arr(ns, nc) for k in ("i_rms_a", "i1_a", "i_peak_a", "thd_i", "p_w", "pf",
                                       "dpf", "inrush_peak_a", "setting_deg", "knob")}
    c_h = arr(ns, nc, nh)
    c_status = np.full((ns, nc), "none", dtype=object)
    n_vals = {k: arr(ns, nn, npk) for k in ("i_rms_a", "i1_a", "i_peak_a", "thd_i", "pf",
                                            "dpf", "p_w", "v_rms_v", "thd_v")}
    n_h = arr(ns, nn, npk, nh)
    n_node = {k: arr(ns, nn) for k in ("ratio", "triplen", "k", "fhl")}
    n_status = np.full((ns, nn), "none", dtype=object)
    for i, s in enumerate(scen):
        for j, c in enumerate(s.circuits):
            for k in c_vals:
                c_vals[k][i, j] = _f(getattr(c, k))
            if c.magnitudes_a is not None:
                c_h[i, j] = c.magnitudes_a[:nh]
            c_status[i, j] = _worst(c.checks)
        for j, p in enumerate(_nodes(s)):
            for ln, r in p.lines.items():
                q = CONDUCTORS.index(ln)
                for k in n_vals:
                    n_vals[k][i, j, q] = _f(getattr(r, {"i1_a": "i1_a"}.get(k, k)))
                n_h[i, j, q] = r.magnitudes_a[:nh]
            if p.neutral is not None:
                q = CONDUCTORS.index("N")
                n_vals["i_rms_a"][i, j, q] = p.neutral.i_rms_a
                n_vals["i_peak_a"][i, j, q] = p.neutral.i_peak_a
                n_vals["i1_a"][i, j, q] = float(p.neutral.magnitudes_a[1])
                n_h[i, j, q] = p.neutral.magnitudes_a[:nh]
                n_node["ratio"][i, j] = p.neutral.ratio_to_max_line
                n_node["triplen"][i, j] = p.neutral.triplen_share
            n_node["k"][i, j] = p.k_factor
            n_node["fhl"][i, j] = p.harmonic_loss_factor
            n_status[i, j] = _worst(p.checks)

    sc, scn, scnp, scnph = ("scenario", "circuit"), ("scenario", "circuit", "order"), \
        ("scenario", "node", "conductor"), ("scenario", "node", "conductor", "order")
    sn = ("scenario", "node")
    V = xr.Variable
    data = {
        "circuit_i_rms_a": _units(V(sc, c_vals["i_rms_a"]), "A", "circuit current (rms)"),
        "circuit_i1_a": _units(V(sc, c_vals["i1_a"]), "A", "circuit fundamental current (rms)"),
        "circuit_i_peak_a": _units(V(sc, c_vals["i_peak_a"]), "A", "circuit peak current"),
        "circuit_thd_i": _units(V(sc, c_vals["thd_i"]), "1",
                                "circuit current THD, orders 2..40, fraction of I1"),
        "circuit_p_w": _units(V(sc, c_vals["p_w"]), "W", "circuit active power"),
        "circuit_pf": _units(V(sc, c_vals["pf"]), "1", "circuit true power factor"),
        "circuit_dpf": _units(V(sc, c_vals["dpf"]), "1", "circuit displacement power factor"),
        "circuit_inrush_peak_a": _units(V(sc, c_vals["inrush_peak_a"]), "A",
                                        "summed inrush peak of the circuit's lamps"),
        "circuit_conduction_deg": _units(V(sc, c_vals["setting_deg"]), "degree",
                                         "dimmer conduction angle per half cycle",
                                         "NaN without a dimmer or with a knob setting"),
        "circuit_knob": _units(V(sc, c_vals["knob"]), "1", "dimmer knob position 0..1",
                               "NaN where the setting is a conduction angle"),
        "circuit_i_h_a": _units(V(scn, c_h), "A", "circuit harmonic current magnitude (rms)"),
        "circuit_status": _units(V(sc, c_status.astype(str)), "1",
                                 "worst check status of the circuit"),
        "i_rms_a": _units(V(scnp, n_vals["i_rms_a"]), "A", "conductor current (rms)",
                          _NO_NEUTRAL),
        "i1_a": _units(V(scnp, n_vals["i1_a"]), "A", "conductor fundamental current (rms)",
                       _NO_NEUTRAL),
        "i_peak_a": _units(V(scnp, n_vals["i_peak_a"]), "A", "conductor peak current",
                           _NO_NEUTRAL),
        "thd_i": _units(V(scnp, n_vals["thd_i"]), "1",
                        "line current THD, orders 2..40, fraction of I1", _NO_NEUTRAL),
        "pf": _units(V(scnp, n_vals["pf"]), "1", "line true power factor", _NO_NEUTRAL),
        "dpf": _units(V(scnp, n_vals["dpf"]), "1", "line displacement power factor",
                      _NO_NEUTRAL),
        "p_w": _units(V(scnp, n_vals["p_w"]), "W", "line active power", _NO_NEUTRAL),
        "v_rms_v": _units(V(scnp, n_vals["v_rms_v"]), "V",
                          "line-to-neutral voltage (rms) at the node", _NO_NEUTRAL),
        "thd_v": _units(V(scnp, n_vals["thd_v"]), "1",
                        "line-to-neutral voltage THD, orders 2..40, fraction of V1",
                        _NO_NEUTRAL),
        "i_h_a": _units(V(scnph, n_h), "A", "conductor harmonic current magnitude (rms)",
                        _NO_NEUTRAL),
        "neutral_ratio": _units(V(sn, n_node["ratio"]), "1",
                                "neutral rms current / highest line rms current",
                                "NaN where the system has no neutral current computed"),
        "neutral_triplen_share": _units(V(sn, n_node["triplen"]), "1",
                                        "rms of the triplen orders / neutral rms",
                                        "NaN where the system has no neutral current computed"),
        "k_factor": _units(V(sn, n_node["k"]), "1",
                           "K-factor of the most loaded line (UL 1561 / IEEE C57.110)"),
        "harmonic_loss_factor": _units(V(sn, n_node["fhl"]), "1",
                                       "harmonic loss factor F_HL of the most loaded line "
                                       "(IEEE C57.110)"),
        "node_status": _units(V(sn, n_status.astype(str)), "1",
                              "worst check status of the node"),
    }
    label = {"units": "1"}  # labels are dimensionless (CF: units "1")
    coords = {
        "scenario": ("scenario", np.array(settings, dtype=str),
                    {**label, "long_name": "scenario"}),
        "circuit": ("circuit", np.array(circuits, dtype=str),
                    {**label, "long_name": "circuit id"}),
        "node": ("node", np.array(nodes, dtype=str),
                 {**label, "long_name": "summing point: panel, feeder or service"}),
        "conductor": ("conductor", np.array(CONDUCTORS, dtype=str),
                      {**label, "long_name": "conductor (lines and neutral)"}),
        "order": ("order", np.arange(nh), {"long_name": "harmonic order", "units": "1"}),
        "circuit_panel": ("circuit", np.array([c.panel for c in s0.circuits], dtype=str),
                          {**label, "long_name": "panel feeding the circuit"}),
        "circuit_line": ("circuit", np.array([c.line for c in s0.circuits], dtype=str),
                         {**label, "long_name": "line the circuit is connected to"}),
        "node_kind": ("node", np.array(kinds, dtype=str),
                      {**label, "long_name": "kind of summing point"}),
    }
    sup = inst.supply
    pj = inst.project
    attrs = {
        "Conventions": CF_CONVENTIONS,
        "title": f"pqcalc assessment: {pj.name or inst.path}",
        "project": pj.name, "site": pj.site, "engineer": pj.engineer, "date": pj.date,
        "installation_file": inst.path, "pqcalc_version": __version__,
        "supply_system": sup.system, "supply_voltage_ln_v": float(sup.voltage_ln_v),
        "supply_frequency_hz": float(sup.frequency_hz),
        "source_r_ohm": float(sup.impedance.r_ohm), "source_l_h": float(sup.impedance.l_h),
        "design_scenario": settings[assessment.design_index],
        "verdict": "fail" if assessment.failed else "pass",
        "comment": "RMS magnitudes; ratios as fractions (units 1); THD over orders 2..40; "
                   "NaN marks a quantity that does not exist for that conductor",
        "caution": assessment.caution,
    }
    if assessment.diversity is not None:

        attrs["diversity_json"] = json.dumps(json_safe(assessment.diversity.to_dict()))
    return xr.Dataset(data, coords=coords, attrs=attrs)


_RANK = {"none": 0, "info": 1, "pass": 2, "warn": 3, "fail": 4}


def _worst(checks) -> str:
    st = "none"
    for c in checks:
        if _RANK.get(c.status, 0) > _RANK[st]:
            st = c.status
    return st


def to_netcdf(assessment: Assessment, path: str | os.PathLike) -> Path:
    """Write :func:`to_dataset` as netCDF-4 (engine ``h5netcdf``), atomically.

    Read it back with ``xarray.open_dataset(path)``. Raises
    :class:`~pqcalc.errors.InputError` when the folder is missing or read-only, or when the
    ``h5netcdf`` package is not installed (``pip install 'pqcalc[netcdf]'``).
    """
    p = check_output_path(path)
    try:
        import h5netcdf  # noqa: F401
    except ImportError:
        raise InputError("netCDF output needs the h5netcdf package: pip install "
                         "'pqcalc[netcdf]'") from None
    write_netcdf(to_dataset(assessment), p)
    return p
