"""``pqcalc assess`` on a terminal: every line fits ``COLUMNS`` (100 when unset), findings
are printed under their circuit's row, and counts are in the right number.

The installation is the invented one of tests/test_report.py (demo captures, a modelled
lamp behind a leading-edge dimmer, a 60-character fixture-type id).
"""

from __future__ import annotations

import re

import pytest
from click.testing import CliRunner

from pqcalc.cli import main

from .test_report import LONG_ID, make_site


@pytest.fixture(scope="module")
def site(tmp_path_factory):
    folder = tmp_path_factory.mktemp("site")
    # a 24 A load of 100 W filament lamps on a 16 A breaker: a failed check to print
    p = make_site(folder, extra='[fixtures.fil]\nmodel = "resistive"\npower_w = 100\n'
                  '[[panels.circuits]]\nid = "a-rather-long-circuit-identifier-7"\n'
                  'line = "L1"\nfixtures = [{type = "fil", count = 55}]\n')
    return p


@pytest.mark.parametrize("columns", [None, "60", "80", "132"])
def test_every_line_fits_the_terminal(site, columns):
    env = {"COLUMNS": columns} if columns else {}
    r = CliRunner().invoke(main, ["assess", str(site)], env=env)
    assert r.exit_code == 1, r.output  # the overloaded breaker fails
    width = int(columns) if columns else 100
    lines = r.output.splitlines()
    assert max(len(ln) for ln in lines) <= width, max(lines, key=len)
    whole = " ".join(ln.strip() for ln in lines)
    assert "a-rather-long-circuit-identifier-7" in whole
    assert LONG_ID[:20] in whole


def test_findings_are_under_their_row_not_on_it(site):
    r = CliRunner().invoke(main, ["assess", str(site)], env={"COLUMNS": "100"})
    lines = r.output.splitlines()
    k = next(i for i, ln in enumerate(lines) if ln.strip().startswith(
        "a-rather-long-circuit-identifier-7"))
    # a long id stands on its own line; the row follows with its status; the finding below
    row = lines[k + 1]
    assert row.rstrip().endswith("FAIL") and "breaker" not in row
    below = []
    for ln in lines[k + 2:]:
        if not ln.startswith(" " * 6):  # the next row, or the end of the table
            break
        below.append(ln)
    assert any(re.match(r"\s+FAIL breaker load: ", ln) for ln in below), below


def test_counts_are_in_the_right_number(site):
    r = CliRunner().invoke(main, ["assess", str(site)])
    out = r.output
    for wrong in (r"\b1 circuits\b", r"\b1 iterations\b", r"\b1 warnings\b",
                  r"\b1 checks\b", r"\b1 scenarios\b", r"\b1 lamps\b"):
        assert not re.search(wrong, out), wrong
    assert re.search(r"\b1 check failed\b|\b\d+ checks failed\b", out)
