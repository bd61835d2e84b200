"""The week's schedule: one row per technician (the office) or the technician's own visits,
one column per day, double bookings marked."""

from __future__ import annotations

import datetime as dt
from collections import defaultdict
from collections.abc import Iterable
from dataclasses import dataclass, field

from django.db.models import Count
from django.http import HttpRequest, HttpResponse
from django.utils import timezone
from django.views.decorators.http import require_GET

from fleet import forms
from fleet.choices import Role, VisitStatus
from fleet.models import Visit
from fleet.reach import roles_of

from .base import page, site_zone, within_reach


@dataclass(frozen=True)
class Overlap:
    """One technician booked at two places at once."""

    technician: object
    first: Visit
    second: Visit


def find_overlaps(visits: Iterable[Visit]) -> list[Overlap]:
    """Every pair of live visits of the same technician whose windows overlap.

    Plain loops over the week's visits (a few dozen): sorted by start, a later visit can
    only overlap while it starts before the earlier one ends.
    """
    by_person: dict[object, list[Visit]] = defaultdict(list)
    for visit in visits:
        if visit.status == VisitStatus.CANCELLED:
            continue
        for person in visit.technicians.all():
            by_person[person].append(visit)
    found = []
    for person, booked in by_person.items():
        booked.sort(key=lambda v: (v.window_start, v.pk))
        for i, first in enumerate(booked):
            for second in booked[i + 1 :]:
                if second.window_start >= first.window_end:
                    break
                found.append(Overlap(person, first, second))
    return found


def monday_of(raw: str | None) -> dt.date:
    today = timezone.localdate()
    try:
        day = dt.date.fromisoformat(raw) if raw else today
    except ValueError:
        day = today
    return day - dt.timedelta(days=day.weekday())


@dataclass
class ScheduleRow:
    label: str
    person_id: int | None
    cells: list[list[Visit]] = field(default_factory=list)


@within_reach(Role.OFFICE, Role.TECHNICIAN)
@require_GET
def schedule(request: HttpRequest) -> HttpResponse:
    """A week of visits, one row per technician and one column per day (site-local dates)."""
    monday = monday_of(request.GET.get("week"))
    days = [monday + dt.timedelta(days=i) for i in range(7)]
    zone = timezone.get_current_timezone()
    # Sites may sit a few hours from our zone: fetch a day either side, place by local date.
    lo = dt.datetime.combine(monday - dt.timedelta(days=1), dt.time.min, zone)
    hi = dt.datetime.combine(monday + dt.timedelta(days=8), dt.time.min, zone)
    visits = list(
        Visit.objects.visible_to(request.user)
        .filter(window_start__lt=hi, window_end__gt=lo)
        .select_related("site__customer")
        .prefetch_related("technicians")
        .annotate(unit_count=Count("visit_units"))
        .order_by("window_start", "reference")
    )
    for visit in visits:
        zone_at_site = site_zone(visit.site)
        visit.local_start = timezone.localtime(visit.window_start, zone_at_site)
        visit.local_end = timezone.localtime(visit.window_end, zone_at_site)
        visit.overlaps = []
        visit.zone_label = (
            visit.local_start.strftime("%Z")
            if visit.site.time_zone != timezone.get_current_timezone_name()
            else ""
        )
    visits = [v for v in visits if v.local_start.date() in days]
    overlaps = find_overlaps(visits)
    for o in overlaps:
        o.first.overlaps.append(o.second.reference)
        o.second.overlaps.append(o.first.reference)

    office = roles_of(request.user).office
    if office:
        people = list(forms.technician_users())
        rows = [ScheduleRow(p.get_full_name() or p.get_username(), p.pk) for p in people]
        rows.append(ScheduleRow("Not assigned yet", None))
    else:
        rows = [ScheduleRow("My visits", request.user.pk)]
    index = {row.person_id: row for row in rows}
    for row in rows:
        row.cells = [[] for _ in days]
    for visit in visits:
        column = (visit.local_start.date() - monday).days
        assigned = [p.pk for p in visit.technicians.all()]
        for pk in assigned or [None]:
            row = index.get(pk if office else request.user.pk)
            if row is not None and visit not in row.cells[column]:
                row.cells[column].append(visit)
    today = timezone.localdate()
    return page(
        request,
        "fleet/schedule.html",
        {
            "days": days,
            "rows": rows,
            "overlaps": overlaps,
            "today": today,
            "previous_week": monday - dt.timedelta(days=7),
            "next_week": monday + dt.timedelta(days=7),
            "this_week": monday_of(None),
            "monday": monday,
            "visit_count": len({v.pk for v in visits}),
        },
    )
