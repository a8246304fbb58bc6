"""The package's type annotations hold (it ships ``py.typed``): mypy, with the settings of
``[tool.mypy]`` in pyproject.toml, finds no error in the whole package, and every public
function of the modules listed in ``CLEAN_MODULES`` is annotated (the list grows until it is
the whole package: the solver's modules and the command line are not there yet).
"""

from __future__ import annotations

import ast
import importlib.util
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]

CLEAN_MODULES = (
    "pqcalc.errors",
    "pqcalc.waveform",
    "pqcalc.spectrum",
    "pqcalc.metrics",
    "pqcalc.analysis",
    "pqcalc.standards",
    "pqcalc.standards.iec61000_3_2",
    "pqcalc.standards.ieee519",
    "pqcalc.standards.limits",
    "pqcalc.standards.results",
    "pqcalc.io",
    "pqcalc.io.record",
    "pqcalc.io.capture",
    "pqcalc.io.comtrade",
    "pqcalc.io.windows",
    "pqcalc.io.installation_file",
    "pqcalc.plotting",
    "pqcalc.plotting.style",
    "pqcalc.plotting.spectra",
    "pqcalc.plotting.curves",
    "pqcalc.plots",
    "pqcalc.report",
    "pqcalc.reporting.pdf",
    "pqcalc.reporting.story",
    "pqcalc.reporting.assumptions",
    "pqcalc.reporting.sources",
    "pqcalc.io.jsonsafe",
    "pqcalc.io.export",
    "pqcalc.io.atomic",
    "pqcalc.installation",
    "pqcalc.installation.model",
    "pqcalc.installation.file",
    "pqcalc.installation.cases",
    "pqcalc.installation.sums",
    "pqcalc.installation.interaction",
    "pqcalc.installation.checks",
    "pqcalc.installation.diversity",
    "pqcalc.installation.results",
    "pqcalc.installation.scenario",
    "pqcalc.installation.assess",
    "pqcalc.installation.lineup",
    "pqcalc.installation.export",
    "pqcalc.standards.regions",
    "pqcalc.standards.breakers",
)


def _path(module: str) -> Path:
    p = ROOT.joinpath(*module.split("."))
    return p / "__init__.py" if p.is_dir() else p.with_suffix(".py")


def test_listed_modules_exist() -> None:
    missing = [m for m in CLEAN_MODULES if not _path(m).is_file()]
    assert not missing, f"CLEAN_MODULES names modules that are not there: {missing}"


def test_mypy_finds_no_error(tmp_path_factory: pytest.TempPathFactory) -> None:
    if importlib.util.find_spec("mypy") is None:
        pytest.fail("mypy is not installed; it is part of the test extras: "
                    "pip install -e '.[test]'")
    cache = tmp_path_factory.mktemp("mypy_cache")
    cmd = [sys.executable, "-m", "mypy", "--config-file", str(ROOT / "pyproject.toml"),
           "--cache-dir", str(cache), "--no-error-summary", "--show-error-codes", "pqcalc"]
    r = subprocess.run(cmd, cwd=ROOT, capture_output=True, text=True, timeout=900)
    assert r.returncode == 0, f"mypy exit {r.returncode} on pqcalc:\n{r.stdout}{r.stderr}"


def _unannotated(path: Path) -> list[str]:
    """Public functions and methods (of public classes) with a parameter or the return
    left unannotated; ``self``/``cls`` and the return of ``__init__`` excepted."""
    out = []
    tree = ast.parse(path.read_text(encoding="utf-8"))
    found: list[tuple[str, ast.FunctionDef | ast.AsyncFunctionDef, bool]] = []
    for node in tree.body:
        if isinstance(node, (ast.FunctionDef, ast.AsyncFunctionDef)):
            found.append((node.name, node, False))
        elif isinstance(node, ast.ClassDef) and not node.name.startswith("_"):
            found += [(f"{node.name}.{n.name}", n, True) for n in node.body
                      if isinstance(n, (ast.FunctionDef, ast.AsyncFunctionDef))]
    for name, fn, is_method in found:
        last = name.rpartition(".")[2]
        if last.startswith("_") and last != "__init__":
            continue
        a = fn.args
        params = a.posonlyargs + a.args + a.kwonlyargs
        static = any(isinstance(d, ast.Name) and d.id == "staticmethod"
                     for d in fn.decorator_list)
        if is_method and not static and params:
            params = params[1:]  # self or cls
        bare = [p.arg for p in params if p.annotation is None]
        bare += [f"*{v.arg}" for v in (a.vararg, a.kwarg) if v is not None and v.annotation is None]
        if fn.returns is None and last != "__init__":
            bare.append("return")
        if bare:
            out.append(f"{path.relative_to(ROOT)}:{fn.lineno}: {name}: {', '.join(bare)}")
    return out


def test_public_functions_are_annotated() -> None:
    bare = [line for m in CLEAN_MODULES for line in _unannotated(_path(m))]
    assert not bare, "public functions without annotations:\n" + "\n".join(bare)


def test_annotation_check_sees_a_bare_function(tmp_path: Path, monkeypatch) -> None:
    # The checker itself, on a small module: one bare public function, one annotated,
    # one private (not counted), one method whose self needs no annotation.
    src = tmp_path / "m.py"
    src.write_text(
        "def f(x, y: int) -> int: ...\n"
        "def g(x: int) -> int: ...\n"
        "def _h(x): ...\n"
        "class C:\n"
        "    def __init__(self, a: int): ...\n"
        "    def m(self, b): ...\n", encoding="utf-8")
    monkeypatch.setattr(sys.modules[__name__], "ROOT", tmp_path)
    assert _unannotated(src) == ["m.py:1: f: x", "m.py:6: C.m: b, return"]
