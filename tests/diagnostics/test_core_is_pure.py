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
    CoolProp and the core itself."""
    core_dir = Path(diagnostics.core.__file__).parent
    modules = sorted(core_dir.glob("*.py"))
    assert len(modules) > 3
    offenders = {
        f"{path.name}: {name}"
        for path in modules
        for name in _imports(path)
        if any(name == bad or name.startswith(bad + ".") for bad in FORBIDDEN)
    }
    assert not offenders, offenders
