"""The package's shape (docs/architecture.md): layers run one way, no import cycles.

These are rules of this codebase (common practice, no source), checked on the real import
graph: import-linter's contracts in ``pyproject.toml`` and a cycle search with grimp, the
graph library import-linter is built on. Imports inside functions count like any other.
"""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

import grimp
import pytest

ROOT = Path(__file__).resolve().parents[1]

#: The layers, lowest first (the same list as the contract in pyproject.toml).
LAYERS = ("model", "field", "physics", "analysis", "io", "render", "cli")


@pytest.fixture(scope="module")
def graph():
    return grimp.build_graph("fringe", cache_dir=None)


def test_import_linter_contracts_hold():
    from importlinter.cli import lint_imports

    assert lint_imports(config_filename=str(ROOT / "pyproject.toml"), no_cache=True,
                        no_logo=True) == 0, "run `lint-imports` to see the broken contract"


def _strongly_connected(graph) -> list[set[str]]:
    """Tarjan's algorithm over the module graph (iterative; the graph is small)."""
    index: dict[str, int] = {}
    low: dict[str, int] = {}
    stack: list[str] = []
    on_stack: set[str] = set()
    found: list[set[str]] = []
    counter = 0
    for start in sorted(graph.modules):
        if start in index:
            continue
        work = [(start, iter(sorted(graph.find_modules_directly_imported_by(start))))]
        index[start] = low[start] = counter
        counter += 1
        stack.append(start)
        on_stack.add(start)
        while work:
            node, children = work[-1]
            for child in children:
                if not child.startswith("fringe"):
                    continue
                if child not in index:
                    index[child] = low[child] = counter
                    counter += 1
                    stack.append(child)
                    on_stack.add(child)
                    work.append((child, iter(sorted(graph.find_modules_directly_imported_by(
                        child)))))
                    break
                if child in on_stack:
                    low[node] = min(low[node], index[child])
            else:
                work.pop()
                if work:
                    low[work[-1][0]] = min(low[work[-1][0]], low[node])
                if low[node] == index[node]:
                    comp = set()
                    while True:
                        m = stack.pop()
                        on_stack.discard(m)
                        comp.add(m)
                        if m == node:
                            break
                    found.append(comp)
    return found


def test_no_module_imports_itself_back(graph):
    """No import cycle between modules, even through function-level imports."""
    cycles = [c for c in _strongly_connected(graph) if len(c) > 1]
    assert cycles == []


def test_every_module_belongs_to_a_layer(graph):
    layers = {f"fringe.{name}" for name in LAYERS}
    loose = sorted(m for m in graph.modules
                   if m.startswith("fringe.") and not any(m == lay or m.startswith(lay + ".")
                                                         for lay in layers))
    assert loose == []


def test_the_cycle_search_finds_a_planted_cycle():
    """The check above can fail: a cycle added to a graph of its own is found."""
    graph = grimp.build_graph("fringe", cache_dir=None)
    graph.add_import(importer="fringe.model.errors", imported="fringe.cli.main")
    assert any(len(c) > 1 for c in _strongly_connected(graph))


def test_import_fringe_loads_no_numerical_library():
    """``import fringe`` is instant: the public names load on first use."""
    code = ("import sys, fringe; heavy = [m for m in ('numpy', 'scipy', 'matplotlib', "
            "'magpylib', 'shapely', 'magpylib_material_response', 'fmm3dpy', 'numba') "
            "if m in sys.modules]; print(','.join(heavy))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                         check=True).stdout.strip()
    assert out == ""


def test_ruff_holds_the_caps():
    """ruff (pyproject.toml) passes: complexity ≤ 15 and ≤ 60 statements per function
    (C901, PLR0915), return types on public functions (ANN201), and the style rules —
    run here so CI enforces them."""
    res = subprocess.run([sys.executable, "-m", "ruff", "check", "--no-cache", "fringe",
                          "tests", "benchmarks"], cwd=ROOT, capture_output=True, text=True)
    assert res.returncode == 0, res.stdout[-3000:]
