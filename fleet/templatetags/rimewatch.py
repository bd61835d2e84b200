"""Template filters of the office pages: display units, status words and small labels.

Values are stored in SI; these filters show them in the contractor's display units
(``settings.RIMEWATCH_DISPLAY_UNITS``) through ``fleet.display``, the conversions the API and
the reports use too. Status is never shown by colour alone: every badge carries a
word and a symbol.
"""

from __future__ import annotations

import datetime as dt

from django import template
from django.utils import timezone
from django.utils.html import format_html

from diagnostics.core.scoring import SCORING_TABLE
from fleet.display import display_for

register = template.Library()

EMPTY = "\u2014"  # an em dash for "not measured"


def _number(value: float, places: int) -> str:
    text = f"{value:,.{places}f}"
    return "0" if text.strip("-0.,") == "" and places == 0 else text.replace("-", "\u2212")


@register.filter
def temp(value_c: float | None) -> str:
    """A temperature in degrees C, shown in the display units."""
    if value_c is None:
        return EMPTY
    display = display_for()
    return f"{_number(display.temperature(value_c), 1)} {display.temperature_symbol}"


@register.filter
def tempdiff(value_k: float | None) -> str:
    """A temperature difference in kelvin (superheat, TD, split), in the display units."""
    if value_k is None:
        return EMPTY
    display = display_for()
    return f"{_number(display.difference(value_k), 1)} {display.difference_symbol}"


@register.filter
def pressure(value_kpa_gauge: float | None, elevation_m: float | None = 0.0) -> str:
    """A gauge pressure as read at the site, in the display units."""
    if value_kpa_gauge is None:
        return EMPTY
    display = display_for()
    shown = display.pressure(value_kpa_gauge, elevation_m or 0.0)
    # The bare unit (psig, kPa): the pages read gauge pressures only, so "gauge" is not added.
    return f"{_number(shown, 1)} {display.units['pressure']}"


@register.filter
def mass(value_kg: float | None) -> str:
    """A refrigerant mass in kg, in the display units."""
    if value_kg is None:
        return EMPTY
    display = display_for()
    return f"{_number(display.mass(value_kg), 2)} {display.mass_symbol}"


#: Other SI units the diagnosis uses, shown as they are (the trade reads amps and volts).
PLAIN_UNITS: dict[str, tuple[str, int]] = {
    "A": ("A", 1),
    "V": ("V", 0),
    "uF": ("\u00b5F", 1),
    "%": ("%", 1),
    "": ("", 2),
}


@register.simple_tag
def qty(value: float | None, unit: str, elevation_m: float = 0.0, kind: str = "value") -> str:
    """A quantity of a diagnosis in its SI ``unit``, shown in the display units.

    ``kind="difference"`` reads a 'C' value as a difference (a metric's deviation).
    """
    if value is None:
        return EMPTY
    if unit == "C":
        return tempdiff(value) if kind == "difference" else temp(value)
    if unit == "K":
        return tempdiff(value)
    if unit in {"kPa", "kPa_gauge"}:
        return pressure(value, elevation_m)
    if unit == "kg":
        return mass(value)
    label, places = PLAIN_UNITS.get(unit, (unit, 1))
    return f"{_number(value, places)} {label}".strip()


# --- status words and symbols --------------------------------------------------------------

#: status -> (symbol, word, css modifier). Symbols and words carry the meaning; colour helps.
METRIC_STATUS = {
    "ok": ("\u2714", "OK", "good"),
    "watch": ("\u25b2", "Watch", "warn"),
    "fault": ("\u2716", "Fault", "bad"),
    "not_scored": ("\u2013", "Not scored", "none"),
}
VISIT_STATUS = {
    "scheduled": ("\u25f7", "Scheduled", "none"),
    "in_progress": ("\u25b6", "In progress", "info"),
    "submitted": ("\u2709", "Waiting for review", "warn"),
    "reviewed": ("\u2714", "Reviewed", "good"),
    "cancelled": ("\u2715", "Cancelled", "muted"),
}
FLAG_SEVERITY = {
    "notice": ("\u24d8", "Notice", "info"),
    "warning": ("\u25b2", "Warning", "warn"),
    "urgent": ("\u203c", "Urgent", "bad"),
}

#: Health bands of a visit score (0-100). Ours: the score loses 5-40 points per metric out of
#: range (diagnostics/core/scoring.py), so below 70 means at least two faults or worse.
SCORE_BANDS: tuple[tuple[float, str, str, str], ...] = (
    (85.0, "\u25cf", "Good", "good"),  # ours: at most one metric on watch
    (70.0, "\u25d0", "Fair", "warn"),  # ours: watches, or one fault
    (0.0, "\u25cb", "Poor", "bad"),  # ours: several faults
)


def _badge(symbol: str, word: str, modifier: str, extra: str = ""):
    return format_html(
        '<span class="badge badge--{}"><span aria-hidden="true">{}</span> {}{}</span>',
        modifier,
        symbol,
        word,
        extra,
    )


@register.simple_tag
def metric_status(status: str):
    return _badge(*METRIC_STATUS.get(status, ("?", status, "none")))


@register.simple_tag
def visit_status(status: str):
    return _badge(*VISIT_STATUS.get(status, ("?", status, "none")))


@register.simple_tag
def flag_severity(severity: str):
    return _badge(*FLAG_SEVERITY.get(severity, ("?", severity, "none")))


def score_band(score: float | None) -> tuple[str, str, str]:
    if score is None:
        return ("\u2013", "No readings", "none")
    for floor, symbol, word, modifier in SCORE_BANDS:
        if score >= floor:
            return (symbol, word, modifier)
    return SCORE_BANDS[-1][1:]


@register.simple_tag
def health(score: float | None):
    """A score with its band word, e.g. '● Good 92'."""
    symbol, word, modifier = score_band(score)
    extra = "" if score is None else f" {score:.0f}"
    return _badge(symbol, word, modifier, extra)


@register.filter
def percent(value: float | None, places: int = 1) -> str:
    if value is None:
        return EMPTY
    return f"{_number(value, int(places))} %"


@register.filter
def confidence(value: float | None) -> str:
    """A finding's confidence (0-1) in words a coordinator can act on."""
    if value is None:
        return EMPTY
    word = "likely" if value >= 0.7 else "possible" if value >= 0.4 else "weak sign"
    return f"{word} ({value * 100:.0f} %)"


@register.simple_tag
def days_from_today(day: dt.date | None, today: dt.date | None = None) -> str:
    """'in 3 days', 'today', '5 days overdue' for a due date."""
    if day is None:
        return EMPTY
    today = today or timezone.localdate()
    delta = (day - today).days
    if delta == 0:
        return "due today"
    if delta > 0:
        return f"in {delta} day{'s' if delta != 1 else ''}"
    return f"{-delta} day{'s' if delta != -1 else ''} overdue"


@register.filter
def person(user) -> str:
    if user is None:
        return EMPTY
    return user.get_full_name() or user.get_username()


@register.filter
def metric_label(name: str) -> str:
    """The scoring table's own words for a metric ('evaporator superheat')."""
    rule = SCORING_TABLE.get(name)
    return rule.label if rule is not None else name.replace("_", " ")


@register.simple_tag
def field_widget(bound_field):
    """The input with its help text and errors tied to it for screen readers."""
    ids = []
    if bound_field.help_text:
        ids.append(f"{bound_field.auto_id}_helptext")
    if bound_field.errors:
        ids.append(f"{bound_field.auto_id}_errors")
    attrs = {"aria-describedby": " ".join(ids)} if ids else {}
    return bound_field.as_widget(attrs=attrs)


@register.simple_tag
def qty_range(low: float | None, high: float | None, unit: str, elevation_m: float = 0.0) -> str:
    """An accepted range in words: 'a to b', 'at most b', 'at least a', or a dash."""
    if low is not None and high is not None:
        return f"{qty(low, unit, elevation_m)} to {qty(high, unit, elevation_m)}"
    if high is not None:
        return f"at most {qty(high, unit, elevation_m)}"
    if low is not None:
        return f"at least {qty(low, unit, elevation_m)}"
    return EMPTY


@register.filter
def count_status(metrics: list[dict], status: str) -> int:
    """How many of a diagnosis's metrics have ``status``."""
    return sum(1 for m in metrics if m["status"] == status)
