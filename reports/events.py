"""What happened at a site: its visits, its refrigerant additions with their stored leak
rates, and its flags as they stood at a moment. Each returns plain data (``data.py``) in a
fixed number of queries (five in all), whatever the number of units.

What is read, and why:
- the stored leak rates of the refrigerant additions in the window (computed by the
  diagnostics core when the addition was recorded; not recomputed here);
- the flags as they stood at the end of the month (or now, for a month not over yet): a
  report for a past month shows the fleet as it was then, so a flag opened after the
  month is left out and one cleared after it shows as open; their texts go to the
  customer's copy, the asides saying where a limit came from to the methods appendix;
- the month's visits, their technicians and units.
"""

from __future__ import annotations

from collections import defaultdict
from datetime import date, datetime
from typing import Any
from zoneinfo import ZoneInfo

from django.db.models import Q

from diagnostics.models import Flag, FlagKind, FlagSeverity
from fleet import choices
from fleet.limits import day_on_clock
from fleet.models import RefrigerantEvent, Visit, VisitUnit

from . import summary, words
from .data import EvidenceRow, FlagRow, LeakRateRow, VisitInfo
from .queries import choice_labels

# --- small conversions --------------------------------------------------------------------------


def _num(value: Any) -> float | None:
    """A JSON or column number as float; None, NaN and non-numbers as None."""
    if value is None or isinstance(value, bool):
        return None
    try:
        number = float(value)
    except (TypeError, ValueError):
        return None
    return None if number != number else number


def _person(first: str, last: str, username: str) -> str:
    full = f"{first} {last}".strip()
    return full or username


_SEVERITY_LABELS = choice_labels(FlagSeverity)
_KIND_LABELS = choice_labels(FlagKind)


def _evidence_rows(raw: Any, provenance: list[str]) -> tuple[EvidenceRow, ...]:
    """A flag's stored evidence; the asides saying where a limit came from go to
    ``provenance`` (the methods appendix), not into the customer's copy."""
    rows = []
    for item in raw if isinstance(raw, list) else []:
        if isinstance(item, str):
            rows.append(EvidenceRow(_customer_text(item, provenance), None, ()))
            continue
        if not isinstance(item, dict):
            continue
        observed = item.get("observed_on")
        try:
            observed_on = date.fromisoformat(observed) if observed else None
        except (TypeError, ValueError):
            observed_on = None
        quantities = []
        for q in item.get("quantities") or ():
            if isinstance(q, list | tuple) and len(q) == 3 and _num(q[1]) is not None:
                quantities.append((str(q[0]), float(q[1]), str(q[2])))
        text = _customer_text(str(item.get("text", "")), provenance)
        rows.append(EvidenceRow(text, observed_on, tuple(quantities)))
    return tuple(rows)


def _customer_text(text: str, provenance: list[str]) -> str:
    kept, moved = words.split_provenance(text)
    provenance.extend(moved)
    return kept


# --- the queries --------------------------------------------------------------------------------


def visits_in(site_id: int, start: datetime, end: datetime, tz: ZoneInfo) -> list[VisitInfo]:
    in_month = Q(visit__site_id=site_id, visit__window_start__gte=start)
    in_month &= Q(visit__window_start__lt=end)
    technicians: dict[int, list[str]] = defaultdict(list)
    for row in (
        Visit.technicians.through.objects.filter(in_month)
        .order_by("user__last_name", "user__username")
        .values("visit_id", "user__first_name", "user__last_name", "user__username")
    ):
        technicians[row["visit_id"]].append(
            _person(row["user__first_name"], row["user__last_name"], row["user__username"])
        )
    tags: dict[int, list[str]] = defaultdict(list)
    for on_visit in (
        VisitUnit.objects.filter(in_month).order_by("unit__tag").values("visit_id", "unit__tag")
    ):
        tags[on_visit["visit_id"]].append(on_visit["unit__tag"])
    kind = choice_labels(choices.VisitKind)
    status = choice_labels(choices.VisitStatus)
    rows = (
        Visit.objects.filter(site_id=site_id, window_start__gte=start, window_start__lt=end)
        .order_by("window_start", "id")
        .values(
            "id", "reference", "kind", "status", "window_start", "reported_problem", "work_summary"
        )
    )
    return [
        VisitInfo(
            id=v["id"],
            reference=v["reference"],
            kind=v["kind"],
            kind_label=kind.get(v["kind"], v["kind"]),
            status=v["status"],
            status_label=status.get(v["status"], v["status"]),
            starts_at=v["window_start"].astimezone(tz),
            technicians=tuple(technicians.get(v["id"], ())),
            unit_tags=tuple(tags.get(v["id"], ())),
            reported_problem=v["reported_problem"],
            work_summary=v["work_summary"],
        )
        for v in rows
    ]


def additions_by_unit(site_id: int, first: date, last: date) -> dict[int, list[LeakRateRow]]:
    by_unit: dict[int, list[LeakRateRow]] = defaultdict(list)
    rows = (
        RefrigerantEvent.objects.filter(
            visit_unit__unit__site_id=site_id,
            kind=choices.RefrigerantEventKind.ADDED,
            occurred_on__gte=first,
            occurred_on__lte=last,
        )
        .order_by("occurred_on", "id")
        .values(
            "id",
            "visit_unit__unit_id",
            "visit_unit__visit__reference",
            "occurred_on",
            "amount_kg",
            "leak_rate_exemption",
            "leak_rate__id",
            "leak_rate__rule_set",
            "leak_rate__method",
            "leak_rate__annualizing_percent",
            "leak_rate__rolling_average_percent",
            "leak_rate__threshold_percent",
            "leak_rate__over_threshold",
            "leak_rate__in_scope",
            "leak_rate__repair_due_on",
            "leak_rate__verification_due_on",
            "leak_rate__note",
        )
    )
    for r in rows:
        by_unit[r["visit_unit__unit_id"]].append(
            LeakRateRow(
                event_id=r["id"],
                occurred_on=r["occurred_on"],
                amount_kg=r["amount_kg"] or 0.0,
                exemption=r["leak_rate_exemption"],
                visit_reference=r["visit_unit__visit__reference"],
                computed=r["leak_rate__id"] is not None,
                rule_set=r["leak_rate__rule_set"] or "",
                method=r["leak_rate__method"] or "",
                annualizing_percent=r["leak_rate__annualizing_percent"],
                rolling_average_percent=r["leak_rate__rolling_average_percent"],
                threshold_percent=r["leak_rate__threshold_percent"],
                over_threshold=bool(r["leak_rate__over_threshold"]),
                in_scope=bool(r["leak_rate__in_scope"]),
                repair_due_on=r["leak_rate__repair_due_on"],
                verification_due_on=r["leak_rate__verification_due_on"],
                note=r["leak_rate__note"] or "",
            )
        )
    return by_unit


def flags_open_at(
    site_id: int, as_of: datetime, tz: ZoneInfo, provenance: list[str]
) -> dict[int, list[FlagRow]]:
    """Flags open at ``as_of``: opened before it and not cleared by then (one cleared later
    shows as open, as it was)."""
    by_unit: dict[int, list[FlagRow]] = defaultdict(list)
    rows = (
        Flag.objects.filter(unit__site_id=site_id, opened_at__lt=as_of)
        .filter(Q(cleared_at__isnull=True) | Q(cleared_at__gte=as_of))
        .order_by("unit_id", "opened_at", "id")
        .values(
            "id",
            "unit_id",
            "kind",
            "severity",
            "summary",
            "evidence",
            "projected_on",
            "opened_at",
            "acknowledged_at",
            "forecast",
        )
    )
    for r in rows:
        by_unit[r["unit_id"]].append(
            FlagRow(
                id=r["id"],
                kind=r["kind"],
                kind_label=_KIND_LABELS.get(r["kind"], r["kind"].replace("_", " ")),
                severity=r["severity"],
                severity_label=_SEVERITY_LABELS.get(r["severity"], r["severity"].title()),
                severity_rank=summary.severity_rank(r["severity"]),
                summary=_customer_text(r["summary"], provenance),
                evidence=_evidence_rows(r["evidence"], provenance),
                projected_on=r["projected_on"],
                opened_on=day_on_clock(r["opened_at"], tz),
                forecast=tuple(
                    (str(n), float(v), str(u)) for n, v, u in r["forecast"].get("quantities", ())
                ),
                acknowledged=r["acknowledged_at"] is not None and r["acknowledged_at"] < as_of,
            )
        )
    return by_unit
