"""Imports run one way (DEVELOPERS.md, "Layout"; DESIGN.md, "Data flows one way").

The import graph of pqcalc is built from the source with :mod:`ast`, not by importing it:
every ``import`` and ``from ... import`` statement counts, at module level, inside functions
and methods, and under ``if TYPE_CHECKING:`` alike (a late import is still a dependency).
Relative imports are resolved against the importing module's package, and a name taken from
a package's ``__init__`` that the ``__init__`` only re-exports is followed to the submodule
that defines it, so ``from ..io import load_capture`` is an edge to ``pqcalc.io.capture``.
Importing ``pqcalc.a.b`` is not counted as importing ``pqcalc.a`` (Python runs the parent's
``__init__`` first, but that is not a dependency of the importer's own making).

The rules are direct edges (A imports B), checked in ``test_layer_rules``; cycles between
modules are checked in ``test_no_import_cycle``. Edges that break a rule today in files
whose owners are changing them are listed, with the reason, in ``KNOWN_VIOLATIONS``: the
test fails on any violation not listed there AND on a listed one that no longer occurs, so
the list only ever shrinks.

Own test rather than a contract checker from PyPI (import-linter): no further dependency
for CI, and the rules wanted here (direct edges, re-exports followed to their module, cycles
between any two modules of the package) are a few lines of ``ast``; import-linter's
``forbidden`` contracts also chase indirect chains and its cycle contract is between
sibling packages, which is a different question.
"""

from __future__ import annotations

import ast
import sys
from dataclasses import dataclass
from functools import cache
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
PACKAGE = "pqcalc"

# Source folders of the package, as pyproject.toml's [tool.setuptools.package-dir] maps them.
SOURCE_DIRS = {PACKAGE: ROOT / "pqcalc", f"{PACKAGE}.standards_limits": ROOT / "standards_limits"}

# --- the rules ---------------------------------------------------------------------------
IO_FORBIDDEN = (
    "pqcalc.cli", "pqcalc.reporting", "pqcalc.plotting", "pqcalc.report", "pqcalc.plots",
    "pqcalc.sweep", "pqcalc.installation", "pqcalc.assess", "pqcalc.lineup",
)
# The lower layers: circuit physics, the standards' evaluators and the signal core.
# pqcalc.light is where the light-output metrics of flicker.py are moving.
CORE = (
    "pqcalc.circuits", "pqcalc.standards", "pqcalc.waveform", "pqcalc.spectrum",
    "pqcalc.metrics", "pqcalc.analysis", "pqcalc.flicker", "pqcalc.light",
)
CORE_FORBIDDEN = (
    "pqcalc.installation", "pqcalc.assess", "pqcalc.lineup", "pqcalc.reporting",
    "pqcalc.plotting", "pqcalc.cli",
)
# The one place outside pqcalc.cli allowed to import it: `python -m pqcalc` runs the CLI.
CLI_ENTRY_POINTS = {"pqcalc.__main__"}

# (rule, importer, imported). Each entry says why it is tolerated and who removes it.
KNOWN_VIOLATIONS: set[tuple[str, str, str]] = set()


def _in(module: str, prefixes: tuple[str, ...]) -> bool:
    return any(module == p or module.startswith(p + ".") for p in prefixes)


# --- the graph ---------------------------------------------------------------------------
@dataclass(frozen=True)
class Module:
    name: str
    path: Path
    is_package: bool  # an __init__.py

    @property
    def package(self) -> str:
        """The package relative imports start from."""
        return self.name if self.is_package else self.name.rpartition(".")[0]


@cache
def modules() -> dict[str, Module]:
    out: dict[str, Module] = {}
    for base, folder in SOURCE_DIRS.items():
        for path in sorted(folder.rglob("*.py")):
            parts = list(path.relative_to(folder).with_suffix("").parts)
            is_package = parts[-1] == "__init__"
            if is_package:
                parts = parts[:-1]
            name = ".".join([base, *parts])
            out[name] = Module(name, path, is_package)
    return out


@cache
def _tree(name: str) -> ast.Module:
    m = modules()[name]
    return ast.parse(m.path.read_text(encoding="utf-8"), filename=str(m.path))


def _absolute(m: Module, node: ast.ImportFrom) -> str:
    if node.level == 0:
        return node.module or ""
    base = m.package.split(".")
    if node.level > 1:
        base = base[: len(base) - (node.level - 1)]
    return ".".join(base + ([node.module] if node.module else []))


@cache
def _reexports(package: str) -> dict[str, str]:
    """Names a package's ``__init__`` imports from its own submodules: name -> module."""
    m = modules()[package]
    out: dict[str, str] = {}
    for node in _tree(package).body:  # re-exports are module-level statements
        if isinstance(node, ast.ImportFrom):
            src = _absolute(m, node)
            if src != package and src.startswith(package + ".") and src in modules():
                for alias in node.names:
                    out[alias.asname or alias.name] = src
    return out


def _ours(name: str) -> bool:
    return name == PACKAGE or name.startswith(PACKAGE + ".")


def _resolve_from(src: str, name: str) -> str | None:
    """The pqcalc module that ``from src import name`` depends on, or None if external.

    An import of a pqcalc module that does not exist (one moved away, imported under
    ``TYPE_CHECKING``) still counts, under the name it is imported by."""
    if not _ours(src):
        return None
    if f"{src}.{name}" in modules():
        return f"{src}.{name}"  # a submodule
    if src in modules() and modules()[src].is_package:
        target = _reexports(src).get(name)
        if target is not None:
            return target
    return src


@cache
def edges() -> dict[str, frozenset[tuple[str, int]]]:
    """importer -> {(imported, line)} over every import statement of every module."""
    graph: dict[str, frozenset[tuple[str, int]]] = {}
    for name, m in modules().items():
        found: set[tuple[str, int]] = set()
        for node in ast.walk(_tree(name)):
            if isinstance(node, ast.Import):  # `import pqcalc.a.b` names a module
                found.update((a.name, node.lineno) for a in node.names if _ours(a.name))
            elif isinstance(node, ast.ImportFrom):
                src = _absolute(m, node)
                for alias in node.names:
                    target = _resolve_from(src, alias.name)
                    if target is not None:
                        found.add((target, node.lineno))
        found = {(t, line) for t, line in found if t != name}
        graph[name] = frozenset(found)
    return graph


def _adjacency() -> dict[str, set[str]]:
    return {a: {b for b, _ in targets} for a, targets in edges().items()}


def layer_violations() -> dict[tuple[str, str, str], int]:
    """(rule, importer, imported) -> first line, for every edge that breaks a rule."""
    out: dict[tuple[str, str, str], int] = {}

    def add(key: tuple[str, str, str], line: int) -> None:
        out[key] = min(line, out.get(key, line))

    for a, targets in edges().items():
        for b, line in targets:
            if _in(a, ("pqcalc.io",)) and _in(b, IO_FORBIDDEN):
                add(("io-imports-upper-layer", a, b), line)
            if _in(b, ("pqcalc.cli",)) and not _in(a, ("pqcalc.cli",)) \
                    and a not in CLI_ENTRY_POINTS:
                add(("cli-imported-outside-cli", a, b), line)
            if _in(a, CORE) and _in(b, CORE_FORBIDDEN):
                add(("core-imports-upper-layer", a, b), line)
    return out


def cycles() -> list[list[str]]:
    """Strongly connected components of more than one module (Tarjan), each sorted."""
    adj = _adjacency()
    index: dict[str, int] = {}
    low: dict[str, int] = {}
    stack: list[str] = []
    on_stack: set[str] = set()
    found: list[list[str]] = []
    counter = 0

    def visit(v: str) -> None:  # the graph has ~60 nodes: recursion depth is no concern
        nonlocal counter
        index[v] = low[v] = counter
        counter += 1
        stack.append(v)
        on_stack.add(v)
        for w in sorted(adj.get(v, ())):
            if w not in index:
                visit(w)
                low[v] = min(low[v], low[w])
            elif w in on_stack:
                low[v] = min(low[v], index[w])
        if low[v] == index[v]:
            comp = []
            while True:
                w = stack.pop()
                on_stack.discard(w)
                comp.append(w)
                if w == v:
                    break
            if len(comp) > 1:
                found.append(sorted(comp))

    for v in sorted(adj):
        if v not in index:
            visit(v)
    return sorted(found)


def _line_of(a: str, b: str) -> int:
    return min(line for t, line in edges()[a] if t == b)


# --- the tests ---------------------------------------------------------------------------
def test_graph_sees_the_package() -> None:
    # A sanity check on the parser itself, against imports visible in the source:
    # capture.py reads COMTRADE files through comtrade.py, the package __init__ re-exports
    # Waveform from waveform.py, and metrics.py works on spectrum.py's Spectrum.
    adj = _adjacency()
    assert "pqcalc.io.comtrade" in adj["pqcalc.io.capture"]
    assert "pqcalc.waveform" in adj["pqcalc"]
    assert "pqcalc.spectrum" in adj["pqcalc.metrics"]
    assert len(modules()) > 30


def test_resolution_of_relative_and_reexported_names() -> None:
    # `from .. import x` inside a subpackage and a name re-exported by an __init__.
    m = modules()["pqcalc.io.capture"]
    node = ast.parse("from ..errors import InputError").body[0]
    assert isinstance(node, ast.ImportFrom)
    assert _absolute(m, node) == "pqcalc.errors"
    assert _resolve_from("pqcalc.io", "load_capture") == "pqcalc.io.capture"
    assert _resolve_from("pqcalc", "io") == "pqcalc.io"
    assert _resolve_from("numpy", "fft") is None


def test_layer_rules() -> None:
    found = layer_violations()
    new = sorted(set(found) - KNOWN_VIOLATIONS)
    gone = sorted(KNOWN_VIOLATIONS - set(found))
    msg = []
    if new:
        msg.append("imports against the one-way flow (DEVELOPERS.md, Layout):")
        for rule, a, b in new:
            path = modules()[a].path.relative_to(ROOT)
            msg.append(f"  {path}:{found[(rule, a, b)]}: {a} imports {b} [{rule}]")
    if gone:
        msg.append("KNOWN_VIOLATIONS lists edges that no longer exist; delete them:")
        msg.extend(f"  {v}" for v in gone)
    assert not msg, "\n".join(msg)


def test_no_import_cycle() -> None:
    found = cycles()
    lines = []
    adj = _adjacency()
    for comp in found:
        lines.append("cycle among: " + ", ".join(comp))
        members = set(comp)
        for a in comp:
            for b in sorted(adj[a] & members):
                path = modules()[a].path.relative_to(ROOT)
                lines.append(f"  {path}:{_line_of(a, b)}: {a} -> {b}")
    assert not found, "\n".join(lines)


def test_cycle_finder_finds_a_known_cycle(monkeypatch) -> None:
    # The detector itself, on a hand-made graph with one cycle of three and a tail.
    fake = {
        "a": frozenset({("b", 1)}), "b": frozenset({("c", 1)}),
        "c": frozenset({("a", 1)}), "d": frozenset({("a", 1)}),
    }
    monkeypatch.setattr(sys.modules[__name__], "edges", lambda: fake)
    assert cycles() == [["a", "b", "c"]]


def test_rules_catch_a_new_violation(monkeypatch) -> None:
    # The rules themselves, on a hand-made graph: io reaching up to the report, the signal
    # core reaching the CLI, and the entry point `python -m pqcalc` (allowed).
    fake = {
        "pqcalc.io.capture": frozenset({("pqcalc.report", 7), ("pqcalc.waveform", 3)}),
        "pqcalc.metrics": frozenset({("pqcalc.cli.analyze", 9)}),
        "pqcalc.__main__": frozenset({("pqcalc.cli", 1)}),
    }
    monkeypatch.setattr(sys.modules[__name__], "edges", lambda: fake)
    assert layer_violations() == {
        ("io-imports-upper-layer", "pqcalc.io.capture", "pqcalc.report"): 7,
        ("cli-imported-outside-cli", "pqcalc.metrics", "pqcalc.cli.analyze"): 9,
        ("core-imports-upper-layer", "pqcalc.metrics", "pqcalc.cli.analyze"): 9,
    }
