"""Figures for the submittal: spectra against limits, waveforms, dimming curves, panels, light.

Every function here is pure and data-first: it takes plain numbers (arrays, mappings, a
:class:`~pqcalc.spectrum.Spectrum` or :class:`~pqcalc.waveform.Waveform`) and returns a
:class:`matplotlib.figure.Figure` built with the object-oriented API. Nothing touches the
pyplot state machine or opens a window, so the module works on any backend and on servers.
:func:`save_figure` writes PNG, SVG or PDF, chosen by the file suffix, through a temporary
file and a rename (never a half-written file); use it rather than ``Figure.savefig``, since
it applies the house style while rendering too (hatch widths and font embedding are read at
render time). The style goes through :func:`matplotlib.rc_context`, which sets matplotlib's
global parameters for its duration: build figures in one thread at a time (dask workers in
separate processes are fine).

The look is one house style, :data:`STYLE`, applied through :func:`matplotlib.rc_context`
while a figure is built and while it is saved: sized for the text width of an A4 or letter
page, readable when printed in grayscale (fills differ in lightness and hatching, lines in
dash pattern), every axis labelled with its unit, and constrained layout so nothing is
clipped.

Values arrive in SI units and fractions, as everywhere in pqcalc; percent appears only on
the axes and in the annotations. Figures whose numbers bear on conductor, breaker or
transformer choices (panel currents, the neutral spectrum) carry a one-line caution
deferring to the local electrical code and a licensed professional.

The code lives in :mod:`pqcalc.plotting`; this module is its short surface.

Examples
--------
>>> import numpy as np
>>> from pqcalc.plots import spectrum_figure
>>> fig = spectrum_figure(np.array([0, 1.0, 0, 0.3, 0, 0.1]), limits={3: 0.25, 5: 0.2},
...                       limits_label="example limits", max_order=5)
>>> [b.get_hatch() for b in fig.axes[0].patches][:4]   # orders 2..5: only h3 is over
[None, '////', None, None]
"""

from __future__ import annotations

from .plotting.curves import (
    cut_intervals_deg,
    dimming_curve_figure,
    light_figure,
    panel_figure,
    waveform_figure,
)
from .plotting.spectra import (
    LimitMarks,
    exceeding_orders,
    limit_marks,
    neutral_spectrum_figure,
    order_magnitudes,
    spectrum_figure,
)
from .plotting.style import (
    CAUTION,
    FIGURE_FORMATS,
    PHASE_NAMES,
    STYLE,
    SpectrumUnit,
    new_figure,
    save_figure,
)

__all__ = [
    "STYLE",
    "FIGURE_FORMATS",
    "SpectrumUnit",
    "PHASE_NAMES",
    "CAUTION",
    "order_magnitudes",
    "exceeding_orders",
    "LimitMarks",
    "limit_marks",
    "cut_intervals_deg",
    "new_figure",
    "spectrum_figure",
    "waveform_figure",
    "dimming_curve_figure",
    "panel_figure",
    "neutral_spectrum_figure",
    "light_figure",
    "save_figure",
]
