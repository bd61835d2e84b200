"""The week's schedule: one row per technician (the office) or the technician's own visits,
one column per day, double bookings marked."""

from __future__ import annotations

import datetime as dt
from collections import defaultdict
from collections.abc import Iterable
from dataclasses import dataclass, field

from django.contrib.auth.models import User
from django.db.models import Count
from django.http import HttpRequest, HttpResponse
from django.utils import timezone
from django.views.decorators.http import require_GET

from fleet import forms
from fleet.choices import Role, VisitStatus
from fleet.models import Visit
from fleet.reach import roles_of

from .base import BadParameter, bad_parameter, page, query_date, site_zone, within_reach
from .lists import VisitPlaceFilter, filtered, kept_query


@dataclass
class ScheduledVisit:
    """A visit as the schedule shows it: its window on the site's wall clock (with the
    zone's abbreviation where the site is not in ours) and the visits it clashes with."""

    visit: Visit
    local_start: dt.datetime
    local_end: dt.datetime
    zone_label: str
    overlaps: list[str] = field(default_factory=list)


@dataclass(frozen=True)
class Overlap:
    """One technician booked at two places at once."""

    technician: User
    first: ScheduledVisit
    second: ScheduledVisit


def find_overlaps(visits: Iterable[ScheduledVisit]) -> list[Overlap]:
    """Every pair of live visits of the same technician whose windows overlap.

    Plain loops over the week's visits (a few dozen): sorted by start, a later visit can
    only overlap while it starts before the earlier one ends.
    """
    by_person: dict[User, list[ScheduledVisit]] = defaultdict(list)
    for shown in visits:
        if shown.visit.status == VisitStatus.CANCELLED:
            continue
        for person in shown.visit.technicians.all():
            by_person[person].append(shown)
    found = []
    for person, booked in by_person.items():
        booked.sort(key=lambda s: (s.visit.window_start, s.visit.pk))
        for i, first in enumerate(booked):
            for second in booked[i + 1 :]:
                if second.visit.window_start >= first.visit.window_end:
                    break
                found.append(Overlap(person, first, second))
    return found


def monday_of(day: dt.date | None) -> dt.date:
    """The Monday of the week of ``day`` (of today when None)."""
    day = day or timezone.localdate()
    return day - dt.timedelta(days=day.weekday())


@dataclass
class ScheduleRow:
    label: str
    person_id: int | None
    cells: list[list[ScheduledVisit]] = field(default_factory=list)


@within_reach(Role.OFFICE, Role.TECHNICIAN)
@require_GET
def schedule(request: HttpRequest) -> HttpResponse:
    """A week of visits, one row per technician and one column per day (site-local dates)."""
    try:
        monday = monday_of(query_date(request, "week"))
    except BadParameter as error:
        return bad_parameter(request, error)
    days = [monday + dt.timedelta(days=i) for i in range(7)]
    zone = timezone.get_current_timezone()
    # Sites may sit a few hours from our zone: fetch a day either side, place by local date.
    lo = dt.datetime.combine(monday - dt.timedelta(days=1), dt.time.min, zone)
    hi = dt.datetime.combine(monday + dt.timedelta(days=8), dt.time.min, zone)
    office = roles_of(request.user).office
    in_reach = Visit.objects.visible_to(request.user)
    narrowed = None
    if office:  # a large office narrows the week to a customer, a site or a technician
        try:
            narrowed = filtered(VisitPlaceFilter, request, in_reach)
        except BadParameter as error:
            return bad_parameter(request, error)
        in_reach = narrowed.qs
    fetched = (
        in_reach.filter(window_start__lt=hi, window_end__gt=lo)
        .select_related("site__customer")
        .prefetch_related("technicians")
        .annotate(unit_count=Count("visit_units"))
        .order_by("window_start", "reference")
    )
    visits = []
    for visit in fetched:
        zone_at_site = site_zone(visit.site)
        local_start = timezone.localtime(visit.window_start, zone_at_site)
        if local_start.date() not in days:
            continue
        zone_label = (
            local_start.strftime("%Z")
            if visit.site.time_zone != timezone.get_current_timezone_name()
            else ""
        )
        local_end = timezone.localtime(visit.window_end, zone_at_site)
        visits.append(ScheduledVisit(visit, local_start, local_end, zone_label))
    overlaps = find_overlaps(visits)
    for o in overlaps:
        o.first.overlaps.append(o.second.visit.reference)
        o.second.overlaps.append(o.first.visit.reference)

    chosen = narrowed.form.cleaned_data.get("technician") if narrowed else None
    if office:
        people = [chosen] if chosen else list(forms.technician_users())
        rows = [ScheduleRow(p.get_full_name() or p.get_username(), p.pk) for p in people]
        # Someone disabled or re-roled keeps the visits still assigned to them: a row of
        # their own, so no visit within reach drops off the week.
        listed = {p.pk for p in people}
        former = {t.pk: t for s in visits for t in s.visit.technicians.all() if t.pk not in listed}
        rows.extend(
            ScheduleRow(f"{p.get_full_name() or p.get_username()} (not a technician now)", p.pk)
            for p in sorted(former.values(), key=lambda p: (p.get_full_name(), p.username))
        )
        if not chosen:
            rows.append(ScheduleRow("Not assigned yet", None))
    else:
        rows = [ScheduleRow("My visits", request.user.pk)]
    index = {row.person_id: row for row in rows}
    for row in rows:
        row.cells = [[] for _ in days]
    for shown in visits:
        column = (shown.local_start.date() - monday).days
        assigned: list[int | None] = [p.pk for p in shown.visit.technicians.all()]
        for pk in assigned or [None]:
            in_row = index.get(pk if office else request.user.pk)
            if in_row is not None and shown not in in_row.cells[column]:
                in_row.cells[column].append(shown)
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
            "visit_count": len({v.visit.pk for v in visits}),
            "filter": narrowed,
            "query": kept_query(request),
            "filters_query": _without_week(request),
        },
    )


def _without_week(request: HttpRequest) -> str:
    """The filters of the query string, which the week's links carry to the next week."""
    query = request.GET.copy()
    query.pop("week", None)
    query.pop("page", None)
    return query.urlencode()
