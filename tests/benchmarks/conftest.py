"""The benchmarks are collected when this folder is named (``python -m pytest
tests/benchmarks -q -s``) or a file in it is; the suite's own run skips the folder
(``norecursedirs`` in pyproject.toml), so they never run as tests."""

from __future__ import annotations

import pytest


def pytest_collect_file(file_path, parent):
    # (a file named on the command line is collected by pytest itself)
    if file_path.suffix == ".py" and file_path.name.startswith("bench_") and \
            not parent.session.isinitpath(file_path):
        return pytest.Module.from_parent(parent, path=file_path)
    return None
