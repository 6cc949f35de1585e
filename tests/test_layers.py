"""The layering rule (DEVELOPERS.md): each layer imports only from the layers below it."""

from __future__ import annotations

import ast
import pathlib

import pytest

PACKAGE = pathlib.Path(__file__).resolve().parent.parent / "beamplan"
# Lowest first; a module may import its own layer and every layer before it.
ORDER = ["units", "errors", "_pint", "vocabulary", "layout", "physics", "network", "optimise",
         "analyses", "report", "cli"]
BASE = {"units": 0, "errors": 0, "_pint": 0, "vocabulary": 0}  # the foundation shares one rank
PRESENTATION = ("rich", "matplotlib")


def _layer(module: str) -> str:
    parts = module.split(".")
    return parts[1] if len(parts) > 1 else "__init__"


def _rank(layer: str) -> int:
    return BASE.get(layer, ORDER.index(layer)) if layer in ORDER else -1


def _imports(path: pathlib.Path) -> list[str]:
    tree = ast.parse(path.read_text(encoding="utf-8"))
    found = []
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            found += [alias.name for alias in node.names]
        elif isinstance(node, ast.ImportFrom) and node.module and node.level == 0:
            found.append(node.module)
    return found


MODULES = sorted(p for p in PACKAGE.rglob("*.py") if p.name != "__init__.py" or
                 p.parent != PACKAGE)


@pytest.mark.parametrize("path", MODULES, ids=lambda p: str(p.relative_to(PACKAGE)))
def test_imports_follow_the_layers(path: pathlib.Path) -> None:
    # The rule itself is the project's own (DEVELOPERS.md, "Architecture: layers").
    own = _layer("beamplan." + ".".join(path.relative_to(PACKAGE).with_suffix("").parts))
    for name in _imports(path):
        if name.split(".")[0] in PRESENTATION:
            assert own == "report", f"{path.name} imports {name}: only report may"
        if name.startswith("beamplan.") and own in ORDER:
            other = _layer(name)
            if other in ORDER:
                assert _rank(other) <= _rank(own), f"{path.name} ({own}) imports {name}"


def test_the_rule_catches_an_upward_import() -> None:
    # A test of the test: optimise importing from report would be refused.
    assert _rank("report") > _rank("optimise")
    assert _rank("units") == _rank("errors") < _rank("layout")


# Import cycles inside a layer. Function-level imports count too: they hide a
# cycle from Python's import machinery but not from the design (DEVELOPERS.md:
# a module that needs another's helpers imports them from a module below both).
def _module_name(path: pathlib.Path) -> str:
    parts = path.relative_to(PACKAGE.parent).with_suffix("").parts
    return ".".join(parts[:-1] if parts[-1] == "__init__" else parts)


def _import_graph() -> dict[str, set[str]]:
    """Each module of the package -> the package's modules it imports anywhere in it."""
    modules = {_module_name(p): p for p in PACKAGE.rglob("*.py")}
    graph: dict[str, set[str]] = {name: set() for name in modules}
    for name, path in modules.items():
        package = name if path.name == "__init__.py" else name.rpartition(".")[0]
        for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
            found: list[str] = []
            if isinstance(node, ast.Import):
                found = [alias.name for alias in node.names]
            elif isinstance(node, ast.ImportFrom):
                base = node.module or ""
                if node.level:  # relative: from the package, up level - 1 steps
                    anchor = package.split(".")[:len(package.split(".")) - node.level + 1]
                    base = ".".join([*anchor, *([base] if base else [])])
                found = [base, *(f"{base}.{alias.name}" for alias in node.names)]
            graph[name] |= {m for m in found if m in modules and m != name}
    return graph


def _cycles(graph: dict[str, set[str]]) -> list[list[str]]:
    """The strongly connected components of more than one module (Tarjan), sorted."""
    index: dict[str, int] = {}
    low: dict[str, int] = {}
    stack: list[str] = []
    out: list[list[str]] = []

    def visit(v: str) -> None:
        index[v] = low[v] = len(index)
        stack.append(v)
        for w in sorted(graph[v]):
            if w not in index:
                visit(w)
                low[v] = min(low[v], low[w])
            elif w in stack:
                low[v] = min(low[v], index[w])
        if low[v] == index[v]:
            component = []
            while True:
                w = stack.pop()
                component.append(w)
                if w == v:
                    break
            if len(component) > 1:
                out.append(sorted(component))

    for v in sorted(graph):
        if v not in index:
            visit(v)
    return sorted(out)


def _describe(component: list[str], graph: dict[str, set[str]]) -> str:
    inside = set(component)
    return "; ".join(f"{m} imports {', '.join(sorted(graph[m] & inside))}" for m in component)


def test_no_import_cycle_inside_a_layer() -> None:
    # The project's own rule (issue 10): within a layer, imports form no cycle.
    graph = _import_graph()
    found = [c for c in _cycles(graph) if len({_layer(m) for m in c}) == 1]
    assert not found, "import cycle(s), counting function-level imports: " + " | ".join(
        _describe(c, graph) for c in found)


def test_no_import_cycle_across_layers_either() -> None:
    # Upward imports are refused above; a cycle across layers would need one.
    graph = _import_graph()
    assert _cycles(graph) == [], [_describe(c, graph) for c in _cycles(graph)]


def test_the_cycle_finder_finds_a_hidden_cycle() -> None:
    # A test of the test (hand-made graph): a -> b -> c -> a is one cycle, d on its own.
    graph = {"p.a": {"p.b"}, "p.b": {"p.c"}, "p.c": {"p.a", "p.d"}, "p.d": set()}
    assert _cycles(graph) == [["p.a", "p.b", "p.c"]]
    assert "p.c imports p.a" in _describe(["p.a", "p.b", "p.c"], graph)


def test_the_import_graph_counts_function_level_imports() -> None:
    # cli/commands.py registers the command modules from inside register().
    assert "beamplan.cli.analyses" in _import_graph()["beamplan.cli.commands"]
