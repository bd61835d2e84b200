"""Template filters of the office pages: display units, status words and small labels.

Values are stored in SI; these filters show them in the contractor's display units
(``settings.RIMEWATCH_DISPLAY_UNITS``) through ``fleet.display``, the conversions the API and
the reports use too. Status is never shown by colour alone: every badge carries a
word and a symbol.
"""

from __future__ import annotations

import datetime as dt
from typing import Any

from django import template
from django.contrib.auth.models import User
from django.forms import BoundField
from django.urls import reverse
from django.utils import dateformat, timezone
from django.utils.html import format_html
from django.utils.safestring import SafeString

from diagnostics.models import Diagnosis
from fleet import display
from fleet.display import display_for
from fleet.models import Visit
from reports import data, summary, words

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
# The words of a unit's condition, a reading's verdict and a finding's evidence are
# ``reports.words``: the monthly report says them the same way.

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


def _badge(symbol: str, word: str, modifier: str, extra: str = "") -> SafeString:
    return format_html(
        '<span class="badge badge--{}"><span aria-hidden="true">{}</span> {}{}</span>',
        modifier,
        symbol,
        word,
        extra,
    )


@register.simple_tag
def verdict(metric: dict) -> SafeString:
    """A reading's verdict against its aim ('high', 'far too low'), from its stored status."""
    v = words.verdict(metric["status"], metric.get("deviation"))
    return _badge(v.symbol, v.word, v.modifier)


@register.simple_tag
def visit_status(status: str) -> SafeString:
    return _badge(*VISIT_STATUS.get(status, ("?", status, "none")))


@register.simple_tag
def flag_severity(severity: str) -> SafeString:
    return _badge(*FLAG_SEVERITY.get(severity, ("?", severity, "none")))


def _condition_badge(key: str, score: float | None) -> SafeString:
    c = words.CONDITIONS[key]
    extra = "" if score is None else f" \u00b7 {score:.0f}"
    return _badge(c.symbol, c.label, c.modifier, extra)


@register.simple_tag
def health(score: float | None) -> SafeString:
    """A check score with the condition it stands for on its own, e.g. '✔ Healthy · 92';
    None: too few readings to judge."""
    return _condition_badge(summary.score_condition(score), score)


@register.simple_tag
def condition(judged: data.Health | None, score: float | None = None) -> SafeString:
    """A condition judged from a check and its flags (``summary.judge``), with the score."""
    if judged is None:
        return health(score)
    return _condition_badge(judged.status, score)


@register.simple_tag
def judged(diagnosis: Diagnosis, application: str = "") -> SafeString:
    """The condition of one stored diagnosis, by the rule the report uses."""
    found = summary.judge_stored(
        diagnosis.score, diagnosis.metrics, diagnosis.findings, application=application
    )
    return _condition_badge(found.status, diagnosis.score)


@register.filter
def strength(finding: dict) -> str:
    """How much evidence stands behind a finding: the signs that agree on it."""
    return words.evidence_strength(len(finding.get("evidence") or ()))


@register.filter
def could_also_be(finding: dict) -> str:
    """The findings the readings cannot tell apart from this one, and the deciding check."""
    return words.could_also_be(finding.get("alternatives"), finding.get("deciding_check"))


@register.filter
def readings(
    metrics: list[dict], application: str = ""
) -> list[tuple[words.ReadingGroup, list[Any]]]:
    """A diagnosis's metrics grouped by what they tell (``words.group_readings``)."""
    return words.group_readings(metrics, application=application)


@register.simple_tag
def reading_line(metric: dict, elevation_m: float = 0.0) -> str:
    """A reading against its aim in one line, in the display units."""
    return words.reading_sentence(
        metric["measured"],
        metric["target"],
        metric["low"],
        metric["high"],
        lambda v: qty(v, metric["unit"], elevation_m),
        metric.get("reason", ""),
    )


@register.simple_tag
def ice_machine_basis() -> str:
    return words.ICE_MACHINE_BASIS


@register.simple_tag
def cause_line(diagnosis: Diagnosis, application: str = "") -> str:
    """Where no probable cause is listed: the sentence the report would say."""
    skip = words.NOT_FOR_ICE_MACHINES if application == "ice_machine" else frozenset()
    metrics = [m for m in diagnosis.metrics if m["name"] not in skip]
    return summary.cause_sentence(
        bool(diagnosis.findings),
        [summary.metric_label(m["name"]) for m in metrics if m["status"] == "fault"],
        [summary.metric_label(m["name"]) for m in metrics if m["status"] == "watch"],
    )


@register.filter
def percent(value: float | None, places: int = 1) -> str:
    if value is None:
        return EMPTY
    return f"{_number(value, int(places))} %"


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
def person(user: User | None) -> str:
    if user is None:
        return EMPTY
    return user.get_full_name() or user.get_username()


@register.simple_tag(takes_context=True)
def visit_ref(context: template.Context, visit: Visit) -> str:
    """A visit's reference, linked to its page when the visit is within the reader's reach:
    ``reachable_visits`` in the context holds the ids within reach (absent: all are)."""
    reachable = context.get("reachable_visits")
    if reachable is not None and visit.pk not in reachable:
        return visit.reference
    return format_html(
        '<a href="{}">{}</a>', reverse("fleet:visit", args=[visit.pk]), visit.reference
    )


@register.filter
def metric_label(name: str) -> str:
    """The scoring table's own words for a metric ('evaporator superheat')."""
    return summary.metric_label(name)


@register.simple_tag
def field_widget(bound_field: BoundField) -> SafeString:
    """The input with its help text and errors tied to it for screen readers."""
    ids = []
    if bound_field.help_text:
        ids.append(f"{bound_field.auto_id}_helptext")
    if bound_field.errors:
        ids.append(f"{bound_field.auto_id}_errors")
    attrs: dict[str, str | bool] = {"aria-describedby": " ".join(ids)} if ids else {}
    return bound_field.as_widget(attrs=attrs)


@register.simple_tag
def box_offset(metric: dict) -> str:
    """How far a box reading lies from its design: '13.0 °F above design'."""
    if metric["measured"] is None or metric["target"] is None:
        return EMPTY
    difference = metric["measured"] - metric["target"]
    side = "above" if difference >= 0 else "below"
    return f"{tempdiff(abs(difference))} {side} design"


@register.filter
def count_status(metrics: list[dict], status: str) -> int:
    """How many of a diagnosis's metrics have ``status``."""
    return sum(1 for m in metrics if m["status"] == status)


@register.simple_tag
def window_end(start: dt.datetime, end: dt.datetime, time_format: str = "H:i") -> str:
    """The end of a visit's window: its time, and its day too when that is not the start's
    (an overnight job shown as 22:00 to 02:00 looks like one ending before it starts)."""
    if end.date() == start.date():
        return dateformat.format(end, time_format)
    shown = dateformat.format(end, f"D j M, {time_format}")
    return f"{shown} (next day)" if (end.date() - start.date()).days == 1 else shown


register.simple_tag(display.stored_moment, name="stored_moment")
#: Every date and time on a page goes through this, never the built-in ``date`` filter.
register.filter("moment", display.shown_moment)
