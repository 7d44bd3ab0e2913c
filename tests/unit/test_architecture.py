"""The package's structure: arrows point one way, no cycles, private names stay private.

The layer order is the import-linter contract in pyproject.toml (docs/architecture.md).
"""

from __future__ import annotations

import ast
from pathlib import Path

import grimp
import pytest
from importlinter.cli import lint_imports

ROOT = Path(__file__).resolve().parents[2]
PACKAGE = ROOT / "compiler" / "obvert"


def test_layers_contract_is_kept() -> None:
    """A lower package never imports a higher one (import-linter, contract in pyproject)."""
    assert (
        lint_imports(config_filename=str(ROOT / "pyproject.toml"), no_cache=True, no_logo=True) == 0
    )


def _cycles(graph: grimp.ImportGraph, skip: set[str]) -> list[list[str]]:
    """Strongly connected components of more than one module, ``skip`` left out (Tarjan)."""
    index: dict[str, int] = {}
    low: dict[str, int] = {}
    stack: list[str] = []
    on_stack: set[str] = set()
    out: list[list[str]] = []
    counter = [0]

    def visit(v: str) -> None:
        index[v] = low[v] = counter[0]
        counter[0] += 1
        stack.append(v)
        on_stack.add(v)
        for w in sorted(graph.find_modules_directly_imported_by(v) - skip):
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
                out.append(sorted(comp))

    for module in sorted(graph.modules - skip):
        if module not in index:
            visit(module)
    return out


def _is_package(module: str) -> bool:
    return (PACKAGE.parent / module.replace(".", "/") / "__init__.py").exists()


def test_no_import_cycles_between_modules() -> None:
    """No module reaches itself through imports (type-checking imports count too).

    A package's ``__init__`` re-exports its modules' public names and is left out: a module
    importing a sibling through the package is still an arrow between the two modules.
    """
    graph = grimp.build_graph("obvert", cache_dir=None)
    assert _cycles(graph, {m for m in graph.modules if _is_package(m)}) == []


def _private_imports(path: Path) -> list[str]:
    """``from obvert.x import _name`` where ``_name`` belongs to another module."""
    tree = ast.parse(path.read_text("utf-8"))
    bad = []
    for node in ast.walk(tree):
        if isinstance(node, ast.ImportFrom) and (node.module or "").startswith("obvert"):
            where = PACKAGE.parent / node.module.replace(".", "/")
            for alias in node.names:
                name = alias.name
                if not name.startswith("_") or name.startswith("__"):
                    continue
                if (where / f"{name}.py").exists() and path.parent == where:
                    continue  # a package's private module, imported inside that package
                bad.append(f"{path.relative_to(ROOT)}: {node.module}.{name}")
    return bad


@pytest.mark.parametrize(
    "path", sorted(PACKAGE.rglob("*.py")), ids=lambda p: str(p.relative_to(PACKAGE))
)
def test_private_names_stay_in_their_module(path: Path) -> None:
    """A module's ``_name`` is used only inside it (no private imports across modules)."""
    assert _private_imports(path) == []
