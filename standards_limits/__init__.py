"""Limit tables of the harmonic-emission standards, as data (see the files here)."""
