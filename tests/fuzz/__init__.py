"""Fuzzing of the readers and the command line (hypothesis); see DEVELOPERS.md, Fuzzing."""
