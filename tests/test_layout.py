"""The house's plan, checked on the source: no import cycles, the engine never imports the
shell, no private name crosses modules, every output file name lives in one module."""

from __future__ import annotations

import ast
import re
from pathlib import Path

SRC = Path(__file__).resolve().parents[1] / "src"
OUTPUT_NAMES = "slopescreen.maps.outputs.output_names"


def _modules() -> dict[str, Path]:
    found = {}
    for path in SRC.rglob("*.py"):
        name = ".".join(path.relative_to(SRC).with_suffix("").parts)
        found[name.removesuffix(".__init__")] = path
    return found


def _imports(modules: dict[str, Path]) -> tuple[dict[str, set[str]], list[str]]:
    """The import graph of our modules (imports at module level, inside functions and under
    TYPE_CHECKING alike) and every private name imported from another module."""
    graph: dict[str, set[str]] = {name: set() for name in modules}
    private = []
    for name, path in modules.items():
        package = name if path.name == "__init__.py" else name.rpartition(".")[0]
        for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
            if isinstance(node, ast.Import):
                graph[name] |= {a.name for a in node.names if a.name in modules}
            elif isinstance(node, ast.ImportFrom):
                base = node.module or ""
                if node.level:
                    parts = package.split(".")[: len(package.split(".")) - node.level + 1]
                    base = ".".join([*parts, base] if base else parts)
                for alias in node.names:
                    if f"{base}.{alias.name}" in modules:
                        graph[name].add(f"{base}.{alias.name}")
                    elif base in modules:
                        graph[name].add(base)
                        dunder = alias.name.startswith("__") and alias.name.endswith("__")
                        if alias.name.startswith("_") and not dunder:
                            private.append(f"{name} imports {base}.{alias.name}")
    return graph, private


def strongly_connected(graph: dict[str, set[str]]) -> list[list[str]]:
    """Components of more than one node, or a node importing itself (Tarjan 1972,
    iterative)."""
    index: dict[str, int] = {}
    low: dict[str, int] = {}
    stack: list[str] = []
    on_stack: set[str] = set()
    found = []
    for root in sorted(graph):
        if root in index:
            continue
        work = [(root, iter(sorted(graph[root])))]
        index[root] = low[root] = len(index)
        stack.append(root)
        on_stack.add(root)
        while work:
            node, children = work[-1]
            child = next(children, None)
            if child is not None:
                if child not in index:
                    index[child] = low[child] = len(index)
                    stack.append(child)
                    on_stack.add(child)
                    work.append((child, iter(sorted(graph[child]))))
                elif child in on_stack:
                    low[node] = min(low[node], index[child])
                continue
            work.pop()
            if work:
                parent = work[-1][0]
                low[parent] = min(low[parent], low[node])
            if low[node] == index[node]:
                component = []
                while True:
                    member = stack.pop()
                    on_stack.discard(member)
                    component.append(member)
                    if member == node:
                        break
                if len(component) > 1 or node in graph[node]:
                    found.append(sorted(component))
    return found


def test_the_cycle_finder_finds_cycles():
    # a known graph: a -> b -> c -> a is one cycle, d -> d another, e alone is none
    graph = {"a": {"b"}, "b": {"c"}, "c": {"a", "e"}, "d": {"d"}, "e": set()}
    assert sorted(strongly_connected(graph)) == [["a", "b", "c"], ["d"]]


def test_no_import_cycles():
    graph, _ = _imports(_modules())
    assert len(graph) > 80  # the walk found the package
    assert strongly_connected(graph) == []


def test_the_engine_never_imports_the_shell():
    graph, _ = _imports(_modules())
    engine = {name for name in graph if not name.startswith("slopescreen.cli")}
    wrong = [f"{m} -> {t}" for m in engine for t in graph[m] if t.startswith("slopescreen.cli")]
    assert wrong == []


def test_no_private_name_crosses_modules():
    _, private = _imports(_modules())
    assert private == []


# a whole string that names a file of ours: letters, digits, _ . - and placeholders
FILE_NAME = re.compile(r"^[\w<>{}-][\w<>{}.-]*\.(tif|gpkg|csv|png)$")


def test_the_literal_finder_sees_plain_and_formatted_names(tmp_path):
    sample = tmp_path / "x.py"
    sample.write_text('a = "fs.tif"\nb = f"critical_{d}h_mm_h.tif"\nc = ".tif"\nd = "see fs.tif"\n')
    found = [line.split(": ", 1)[1] for line in _file_name_literals_in(sample, tmp_path)]
    assert found == ["'fs.tif'", "'h_mm_h.tif'"]


def _file_name_literals_in(path: Path, root: Path) -> list[str]:
    return [
        f"{path.relative_to(root)}:{node.lineno}: {node.value!r}"
        for node in ast.walk(ast.parse(path.read_text(encoding="utf-8")))
        if isinstance(node, ast.Constant)
        and isinstance(node.value, str)
        and FILE_NAME.match(node.value)
    ]


def test_output_file_names_live_in_one_module():
    modules = _modules()
    found = [
        hit
        for name, path in sorted(modules.items())
        if name != OUTPUT_NAMES
        for hit in _file_name_literals_in(path, SRC)
    ]
    assert found == []
