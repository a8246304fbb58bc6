"""The figures of pqcalc, by kind; the public surface is :mod:`pqcalc.plots`.

- :mod:`.style`: the house style (:data:`~.style.STYLE`), the figure factory, the writer;
- :mod:`.spectra`: harmonic spectra against limits, the neutral spectrum;
- :mod:`.curves`: waveforms over a cycle, dimming curves, panel currents, light output.
"""
