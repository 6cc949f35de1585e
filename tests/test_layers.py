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
