"""The layout rules of DEVELOPERS.md, checked on the source tree itself.

* nothing under ``engine/`` imports streamlit or the dashboard's ``pages`` package (the engine never knows that a
  dashboard exists);
* the engine's modules import each other without a cycle, counting imports inside functions too (a cycle hidden in
  a function is still a cycle);
* no engine module is much over 800 lines (split by idea instead).

The import graph is read with :mod:`ast` from the files, so nothing is imported to check it.
"""

from __future__ import annotations

import ast
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
ENGINE = ROOT / "engine"
MAX_MODULE_LINES = 850  # "about 800": the bound the contributor guide states


def _module_name(path: Path) -> str:
    parts = path.relative_to(ROOT).with_suffix("").parts
    return ".".join(parts[:-1] if parts[-1] == "__init__" else parts)


def _engine_modules() -> dict[str, Path]:
    return {_module_name(p): p for p in ENGINE.rglob("*.py") if "assets" not in p.parts}


def _imports(path: Path, module: str) -> set[str]:
    """Every module name ``path`` imports (absolute, relative resolved), wherever the import stands."""
    tree = ast.parse(path.read_text(encoding="utf-8"))
    package = module if path.name == "__init__.py" else module.rpartition(".")[0]
    found: set[str] = set()
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            found.update(alias.name for alias in node.names)
        elif isinstance(node, ast.ImportFrom):
            base = node.module or ""
            if node.level:
                anchor = package.split(".")
                anchor = anchor[: len(anchor) - (node.level - 1)]
                base = ".".join(anchor + ([base] if base else []))
            found.add(base)
            found.update(f"{base}.{alias.name}" for alias in node.names)
    return found


def _engine_graph() -> dict[str, set[str]]:
    modules = _engine_modules()
    graph = {}
    for name, path in modules.items():
        targets = {t for t in _imports(path, name) if t in modules and t != name}
        # importing a package runs its __init__, which is not a dependency on the importer's own parent package
        graph[name] = {t for t in targets if not name.startswith(t + ".")}
    return graph


def _cycles(graph: dict[str, set[str]]) -> list[list[str]]:
    """Strongly connected components with more than one module (Tarjan's algorithm)."""
    index: dict[str, int] = {}
    low: dict[str, int] = {}
    stack: list[str] = []
    on_stack: set[str] = set()
    found: list[list[str]] = []
    counter = [0]

    def visit(node: str) -> None:
        index[node] = low[node] = counter[0]
        counter[0] += 1
        stack.append(node)
        on_stack.add(node)
        for nxt in sorted(graph[node]):
            if nxt not in index:
                visit(nxt)
                low[node] = min(low[node], low[nxt])
            elif nxt in on_stack:
                low[node] = min(low[node], index[nxt])
        if low[node] == index[node]:
            component = []
            while True:
                item = stack.pop()
                on_stack.discard(item)
                component.append(item)
                if item == node:
                    break
            if len(component) > 1:
                found.append(sorted(component))

    for node in sorted(graph):
        if node not in index:
            visit(node)
    return found


def test_cycle_finder_finds_a_known_cycle():
    """The checker itself: a three-module ring is reported, a chain is not."""
    assert _cycles({"a": {"b"}, "b": {"c"}, "c": {"a"}, "d": {"a"}}) == [["a", "b", "c"]]
    assert _cycles({"a": {"b"}, "b": {"c"}, "c": set()}) == []


def test_engine_never_imports_streamlit_or_the_pages():
    offenders = []
    for name, path in _engine_modules().items():
        for target in _imports(path, name):
            top = target.split(".")[0]
            if top in ("streamlit", "streamlit_folium", "pages", "app"):
                offenders.append(f"{name} imports {target}")
    assert offenders == []


def test_engine_modules_import_each_other_without_a_cycle():
    assert _cycles(_engine_graph()) == []


def test_no_engine_module_is_much_over_800_lines():
    long = {name: n for name, path in _engine_modules().items()
            if (n := len(path.read_text(encoding="utf-8").splitlines())) > MAX_MODULE_LINES}
    assert long == {}
