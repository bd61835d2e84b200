"""Numbers on report pages: SI values shown in the display units of the report's context.

Each tag reads ``display`` (a ``fleet.display.Display``) from the template context, so a
template never converts by itself; a missing value prints as an en dash.
"""

from __future__ import annotations

from collections.abc import Iterable
from typing import Any, SupportsFloat

from django import template

from diagnostics.core import wording
from fleet.display import Display, shown_moment
from reports import words as vocabulary
from reports.data import MetricRow

register = template.Library()
#: Every date and time in a report goes through this, never the built-in ``date`` filter.
register.filter("moment", shown_moment)

DASH = "\u2013"  # an en dash: "no value"


def _fmt(value: float | None, digits: int) -> str:
    if value is None:
        return DASH
    text = f"{value:,.{digits}f}"
    # A value that rounds to zero from below is shown as 0, not -0.
    return text[1:] if text.startswith("-") and not text.strip("-0.,") else text


def _display(context: template.Context) -> Display:
    """The report's display units: the renderer puts them in the context (``render``)."""
    display: Display = context["display"]
    return display


@register.simple_tag(takes_context=True)
def temp(context: template.Context, value_c: float | None, digits: int = 0) -> str:
    d = _display(context)
    return (
        f"{_fmt(d.temperature(value_c), digits)} {d.temperature_symbol}"
        if value_c is not None
        else DASH
    )


@register.simple_tag(takes_context=True)
def tdiff(context: template.Context, value_k: float | None, digits: int = 1) -> str:
    d = _display(context)
    return (
        f"{_fmt(d.difference(value_k), digits)} {d.difference_symbol}"
        if value_k is not None
        else DASH
    )


@register.simple_tag(takes_context=True)
def pressure(
    context: template.Context, value_kpa_gauge: float | None, elevation_m: float, digits: int = 0
) -> str:
    d = _display(context)
    if value_kpa_gauge is None:
        return DASH
    return f"{_fmt(d.pressure(value_kpa_gauge, elevation_m), digits)} {d.pressure_symbol}"


@register.simple_tag(takes_context=True)
def mass(context: template.Context, value_kg: float | None, digits: int = 1) -> str:
    d = _display(context)
    return f"{_fmt(d.mass(value_kg), digits)} {d.mass_symbol}" if value_kg is not None else DASH


@register.simple_tag(takes_context=True)
def quantity(
    context: template.Context,
    value: float | None,
    unit: str,
    digits: int = 1,
    elevation_m: float = 0.0,
) -> str:
    """A stored quantity whose SI unit is named beside it (metrics, flag evidence)."""
    if value is None:
        return DASH
    d = _display(context)
    if unit == "C":
        return f"{_fmt(d.temperature(value), digits)} {d.temperature_symbol}"
    if unit == "K":
        return f"{_fmt(d.difference(value), digits)} {d.difference_symbol}"
    if unit == "kPa":
        return f"{_fmt(d.pressure(value, elevation_m), 0)} {d.pressure_symbol}"
    if unit == "kg":
        return f"{_fmt(d.mass(value), digits)} {d.mass_symbol}"
    shown = {"uF": "µF", "": ""}.get(unit, unit)
    return f"{_fmt(value, digits)} {shown}".strip()


@register.simple_tag(takes_context=True)
def said(context: template.Context, text: str, quantities: Iterable[wording.Quantity]) -> str:
    """A flag's sentence with its named quantities in the report's display units."""
    return wording.fill(text, quantities, _display(context).units)


@register.simple_tag(takes_context=True)
def band(
    context: template.Context,
    low: float | None,
    high: float | None,
    unit: str,
    digits: int = 1,
    elevation_m: float = 0.0,
) -> str:
    """An ok range: "a to b", "up to b" or "at least a"."""
    if low is None and high is None:
        return DASH
    if low is None:
        return f"up to {quantity(context, high, unit, digits, elevation_m)}"
    if high is None:
        return f"at least {quantity(context, low, unit, digits, elevation_m)}"
    lo = quantity(context, low, unit, digits, elevation_m)
    return f"{lo} to {quantity(context, high, unit, digits, elevation_m)}"


@register.filter
def num(value: SupportsFloat | str | None, digits: int = 0) -> str:
    try:
        return _fmt(None if value is None else float(value), int(digits))
    except (TypeError, ValueError):
        return DASH


@register.filter
def percent(value: SupportsFloat | None, digits: int = 1) -> str:
    return DASH if value is None else f"{_fmt(float(value), int(digits))} %"


@register.filter
def words(value: object) -> str:
    """A stored name such as ``condenser_split`` as words."""
    return str(value).replace("_", " ")


@register.simple_tag
def money(amount: float | None, currency: str) -> str:
    if amount is None:
        return DASH
    symbol = {"USD": "$", "CAD": "CA$", "EUR": "€", "GBP": "£"}.get(currency)
    return f"{symbol}{amount:,.2f}" if symbol else f"{amount:,.2f} {currency}"


@register.simple_tag(takes_context=True)
def reading(context: template.Context, m: MetricRow, elevation_m: float = 0.0) -> str:
    """A metric against its aim in one line (``vocabulary.reading_sentence``)."""
    return vocabulary.reading_sentence(
        m.measured,
        m.target,
        m.low,
        m.high,
        lambda v: quantity(context, v, m.unit, 1, elevation_m),
        m.reason,
    )


@register.filter
def grouped(
    metrics: Iterable[MetricRow], application: str = ""
) -> list[tuple[vocabulary.ReadingGroup, list[Any]]]:
    """The judged metrics in our groups by what they tell (``vocabulary.group_readings``)."""
    return vocabulary.group_readings(
        metrics, application=application, shown=("ok", "watch", "fault")
    )
