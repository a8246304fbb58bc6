"""Shared fixtures and helpers for the test suite."""

from __future__ import annotations

import numpy as np
import pytest

from pqcalc.waveform import Waveform


def phase_cut_resistive(
    alpha_rad: float,
    edge: str = "leading",
    v_rms: float = 230.0,
    r_ohm: float = 100.0,
    n: int = 1 << 16,
    f: float = 50.0,
) -> Waveform:
    """An ideal phase-cut resistive load sampled at mid-sample instants (halves the
    discretisation error of the step edges)."""
    wt = 2 * np.pi * (np.arange(n) + 0.5) / n
    v = np.sqrt(2) * v_rms * np.sin(wt)
    ph = wt % np.pi
    on = ph >= alpha_rad if edge == "leading" else ph <= np.pi - alpha_rad
    return Waveform(np.where(on, v / r_ohm, 0.0), n * f, f, v, 1)


@pytest.fixture
def cut90() -> Waveform:
    return phase_cut_resistive(np.pi / 2)
