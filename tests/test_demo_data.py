"""The demo data agree with the installation files that use them.

Every measured fixture type of each demo installation: the capture's measured power against
the fixture type's declared ``power_w``, and the capture's header (its ``#`` lines, written by
``demo_installations/make_demo_captures.py``) naming the site of the installation that uses
it and no other. The references are the installation files themselves.
"""

from __future__ import annotations

from pathlib import Path

import pytest

from pqcalc.installation import load_installation
from pqcalc.installation.model import MeasuredFixture
from pqcalc.io.capture import load_capture, record_to_waveform

DEMO = Path(__file__).resolve().parents[1] / "demo_installations"
INSTALLATIONS = sorted(DEMO.glob("*.toml"))

# The generator sets the LED load so that the full-output capture draws the declared power;
# 3 % leaves room for the recorder noise, the capacitor's start-up in the first cycles and
# the resampling onto whole cycles, while the inconsistency this guards against (9 W
# declared, 11.76 W measured: +31 %) fails it by far.
POWER_TOLERANCE = 0.03


def measured_fixtures():
    out = []
    for path in INSTALLATIONS:
        inst = load_installation(path)
        for fid, ft in inst.fixtures.items():
            if isinstance(ft, MeasuredFixture):
                out.append(pytest.param(path, fid, id=f"{path.stem}:{fid}"))
    return out


def header(capture: Path) -> dict[str, str]:
    """The ``# key: value`` lines before the first data line of a CSV capture."""
    out = {}
    for line in capture.read_text(encoding="utf-8").splitlines():
        if not line.startswith("#"):
            break
        key, sep, value = line[1:].partition(":")
        if sep:
            out[key.strip()] = value.strip()
    return out


def project_name(path: Path) -> str:
    """The installation's own name: its project name up to the first " - " (what a site
    line calls it)."""
    return load_installation(path).project.name.split(" - ")[0].strip()


def test_some_demo_installation_uses_a_capture():
    # otherwise the checks below would pass by checking nothing
    assert measured_fixtures()


@pytest.mark.parametrize("path,fid", measured_fixtures())
def test_measured_power_is_the_declared_power(path, fid):
    ft = load_installation(path).fixtures[fid]
    w = record_to_waveform(load_capture(ft.capture, ft.capture_options))
    assert w.p_w is not None, f"{ft.capture}: no voltage channel, the power is not measured"
    assert w.p_w == pytest.approx(ft.power_w, rel=POWER_TOLERANCE), (
        f"{path.name}: fixtures.{fid}: declared {ft.power_w} W, the capture draws {w.p_w:.2f} W")
    declared = header(Path(ft.capture)).get("declared_power_w")
    if declared is not None:
        assert float(declared) == ft.power_w


@pytest.mark.parametrize("path,fid", measured_fixtures())
def test_capture_header_names_its_own_site_and_no_other(path, fid):
    ft = load_installation(path).fixtures[fid]
    text = "\n".join(f"{k}: {v}" for k, v in header(Path(ft.capture)).items())
    own = project_name(path)
    assert own in header(Path(ft.capture)).get("site", ""), (
        f"{Path(ft.capture).name}: its site line should name {own!r}")
    for other in INSTALLATIONS:
        if other == path:
            continue
        inst = load_installation(other)
        for name in (project_name(other), inst.project.site):
            assert name not in text, f"{Path(ft.capture).name} names {name!r}"


def test_every_demo_capture_header_names_a_site_that_uses_it():
    # the demo folder's other captures (e.g. the dimmed record, used by tests and the
    # tutorial rather than by an installation file) name the same invented site as the
    # installation their generator describes, never a site that has no file here
    names = {project_name(p) for p in INSTALLATIONS}
    for capture in sorted(DEMO.glob("*.csv")):
        site = header(capture).get("site", "")
        assert any(n in site for n in names), f"{capture.name}: site {site!r}"
