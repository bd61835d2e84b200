"""Rule values that carry their source: one way to write it down, one way to read it back.

Thresholds are data (docs/contributing.md): a rules dataclass declares each value with
``field(default=..., metadata=cite("..."))``, or holds it as a ``Sourced`` value, so
the reason stands beside the number and reports can print both.
"""

from __future__ import annotations

from dataclasses import dataclass, fields
from typing import Any, Generic, TypeVar

T = TypeVar("T")


@dataclass(frozen=True)
class Sourced(Generic[T]):
    """A rule value and where it comes from (a regulation paragraph, or 'from memory')."""

    value: T
    source: str


def cite(source: str) -> dict[str, str]:
    """Field metadata keeping a rule value's source beside it (read by ``source_of``)."""
    return {"source": source}


def source_of(rules: Any, name: str) -> str:
    """The default's source, or 'configured' when the rules were changed from the default."""
    f = {f.name: f for f in fields(rules)}[name]
    if getattr(rules, name) != f.default:
        return "configured"
    return str(f.metadata.get("source", "default"))


def describe_rules(rules: Any) -> tuple[tuple[str, Any, str], ...]:
    """(name, value, source) of each field of a rules dataclass that carries its source."""
    return tuple(
        (f.name, getattr(rules, f.name), source_of(rules, f.name))
        for f in fields(rules)
        if "source" in f.metadata
    )
