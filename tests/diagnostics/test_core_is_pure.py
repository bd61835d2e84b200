"""The diagnostics core stays plain Python: no Django, no records, no reports."""

from __future__ import annotations

import ast
from pathlib import Path

import diagnostics.core

FORBIDDEN = (
    "django",
    "rest_framework",
    "fleet",
    "reports",
    "diagnostics.models",
    "diagnostics.services",
)


def _imports(path: Path) -> set[str]:
    tree = ast.parse(path.read_text(), filename=str(path))
    names: set[str] = set()
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            names.update(alias.name for alias in node.names)
        elif isinstance(node, ast.ImportFrom) and node.module and node.level == 0:
            names.add(node.module)
    return names


def test_it_finds_no_django_or_record_import_in_the_core():
    """Every module under diagnostics/core/ imports only the standard library, numpy, scipy,
    CoolProp, orjson and the core itself."""
    core_dir = Path(diagnostics.core.__file__).parent
    modules = sorted(core_dir.rglob("*.py"))
    assert any(path.parent != core_dir for path in modules), "the packages are read too"
    offenders = {
        f"{path.relative_to(core_dir)}: {name}"
        for path in modules
        for name in _imports(path)
        if any(name == bad or name.startswith(bad + ".") for bad in FORBIDDEN)
    }
    assert not offenders, offenders


def _core_name(path: Path, core_dir: Path) -> str:
    """``saturation/lookup.py`` -> ``saturation.lookup``; a package is named by its folder."""
    parts = list(path.relative_to(core_dir).with_suffix("").parts)
    if parts[-1] == "__init__":
        parts.pop()
    return ".".join(parts)


def _core_graph() -> dict[str, set[str]]:
    """Core module -> the core modules it imports, at the top or inside a function (relative
    imports inside the core's packages resolved)."""
    core_dir = Path(diagnostics.core.__file__).parent
    graph: dict[str, set[str]] = {}
    for path in core_dir.rglob("*.py"):
        if path.parent == core_dir and path.stem == "__init__":
            continue
        name = _core_name(path, core_dir)
        package = name if path.stem == "__init__" else name.rpartition(".")[0]
        tree = ast.parse(path.read_text(), filename=str(path))
        targets: set[str] = set()
        for node in ast.walk(tree):
            if isinstance(node, ast.ImportFrom) and node.level > 0:
                base = ".".join(package.split(".")[: len(package.split(".")) - node.level + 1])
                module = ".".join(p for p in (base, node.module or "") if p)
                targets.add(module)
                targets.update(f"{module}.{alias.name}" for alias in node.names)
            elif isinstance(node, ast.ImportFrom) and node.module == "diagnostics.core":
                targets.update(alias.name for alias in node.names)
            elif isinstance(node, ast.ImportFrom) and node.module:
                module = node.module.removeprefix("diagnostics.core.")
                targets.add(module)
                targets.update(f"{module}.{alias.name}" for alias in node.names)
            elif isinstance(node, ast.Import):
                targets.update(a.name.removeprefix("diagnostics.core.") for a in node.names)
        graph[name] = targets
    return {name: targets & graph.keys() - {name} for name, targets in graph.items()}


def test_it_finds_no_import_circle_in_the_core():
    """No core module imports, directly or through others, a module that imports it back
    (a circle makes the import order matter and hides which module owns a rule)."""
    graph = _core_graph()
    assert "atmosphere" in graph["units"]
    assert "saturation.lookup" in graph["saturation"], "the packages are read too"
    state: dict[str, int] = {}
    circles: list[list[str]] = []

    def visit(name: str, path: list[str]) -> None:
        state[name] = 1
        for target in sorted(graph[name]):
            if state.get(target) == 1:
                circles.append([*path[path.index(target) :], target])
            elif target not in state:
                visit(target, [*path, target])
        state[name] = 2

    for name in sorted(graph):
        if name not in state:
            visit(name, [name])
    assert not circles, circles
