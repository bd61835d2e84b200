"""The office pages: schedule, maintenance due, review queue, units, sites and attention.

Each view parses the request, reads through a queryset scoped to the user's role (so that
anything outside a role's reach is a 404, never a 403 that confirms it exists), fetches all
the template touches in a fixed number of queries, and calls a service for any write. The
thermodynamics happened earlier (diagnostics); these pages only show stored results.

Roles (shared/API.md): office sees and does everything; a technician sees their own visits
and the units on them; a manager sees the sites granted to them (``Site.managers``) and their
units and reports, read-only.
"""

from __future__ import annotations

import datetime as dt
from collections import defaultdict
from collections.abc import Callable, Iterable
from dataclasses import dataclass, field
from functools import wraps
from zoneinfo import ZoneInfo

from django.contrib import messages
from django.contrib.auth import get_user_model
from django.contrib.auth.decorators import login_required
from django.db import transaction
from django.db.models import Count, OuterRef, Prefetch, Q, QuerySet, Subquery
from django.http import FileResponse, Http404, HttpRequest, HttpResponse
from django.shortcuts import get_object_or_404, redirect, render
from django.urls import reverse
from django.utils import timezone
from django.utils.http import url_has_allowed_host_and_scheme
from django.views.decorators.http import require_GET, require_POST

from diagnostics.core import maintenance
from diagnostics.history import maintenance_plans
from diagnostics.models import Diagnosis, Flag, LeakRate
from reports.summary import Health, judge_stored, severity_rank, worst

from . import audit, forms
from .api.permissions import role_of
from .choices import Application, RefrigerantEventKind, Role, Stage, VisitKind, VisitStatus
from .display import display_for
from .models import (
    AuditAction,
    AuditEntry,
    Component,
    ReadingSet,
    RefrigerantEvent,
    Site,
    Unit,
    Visit,
    VisitUnit,
)
from .services import (
    DEFAULT_VISIT_HOURS,
    DEFAULT_VISIT_START,
    IllegalTransition,
    book_proposed_visits,
    move_visit,
)

User = get_user_model()

# --- who may see what -------------------------------------------------------------------------


def within_reach(*roles: str) -> Callable:
    """Sign-in required; then a role outside ``roles`` gets 404 (the page does not exist
    for them), never a hint that it does."""

    def decorate(view: Callable) -> Callable:
        @login_required
        @wraps(view)
        def wrapped(request: HttpRequest, *args, **kwargs) -> HttpResponse:
            request.role = role_of(request.user)
            if request.role not in roles:
                raise Http404("not within your reach")
            return view(request, *args, **kwargs)

        return wrapped

    return decorate


def visits_for(request: HttpRequest) -> QuerySet[Visit]:
    visits = Visit.objects.all()
    if request.role == Role.TECHNICIAN:
        return visits.filter(technicians=request.user)
    if request.role == Role.MANAGER:
        return visits.filter(site__managers=request.user)
    return visits


def units_for(request: HttpRequest) -> QuerySet[Unit]:
    units = Unit.objects.all()
    if request.role == Role.TECHNICIAN:
        own = VisitUnit.objects.filter(visit__technicians=request.user).values("unit_id")
        return units.filter(pk__in=own)
    if request.role == Role.MANAGER:
        return units.filter(site__managers=request.user)
    return units


def sites_for(request: HttpRequest) -> QuerySet[Site]:
    if request.role == Role.MANAGER:
        return Site.objects.filter(managers=request.user)
    if request.role == Role.OFFICE:
        return Site.objects.all()
    return Site.objects.none()


def page(request: HttpRequest, template: str, context: dict, status: int = 200) -> HttpResponse:
    """Render a page with what the navigation shows for the role (two counts for the office;
    a page that has counted one already passes it in)."""
    context = {"role": getattr(request, "role", None), **context}
    if context["role"] == Role.OFFICE:
        if "nav_queue_count" not in context:
            context["nav_queue_count"] = Visit.objects.filter(status=VisitStatus.SUBMITTED).count()
        if "nav_flag_count" not in context:
            context["nav_flag_count"] = Flag.objects.filter(cleared_at__isnull=True).count()
    return render(request, template, context, status=status)


def _is_htmx(request: HttpRequest) -> bool:
    return request.headers.get("HX-Request") == "true"


def _safe_next(request: HttpRequest, fallback: str) -> str:
    target = request.POST.get("next") or request.GET.get("next") or ""
    if url_has_allowed_host_and_scheme(target, {request.get_host()}, request.is_secure()):
        return target
    return fallback


def _site_zone(site: Site) -> ZoneInfo:
    return ZoneInfo(site.time_zone)


# --- home -------------------------------------------------------------------------------------


@login_required
def home(request: HttpRequest) -> HttpResponse:
    """Send each role to the page its day starts on."""
    request.role = role_of(request.user)
    if request.role in (Role.OFFICE, Role.TECHNICIAN):
        return redirect("fleet:schedule")
    if request.role == Role.MANAGER:
        return redirect("fleet:sites")
    return page(request, "fleet/no_role.html", {})


# --- schedule ---------------------------------------------------------------------------------


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


def _monday(raw: str | None) -> dt.date:
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
    monday = _monday(request.GET.get("week"))
    days = [monday + dt.timedelta(days=i) for i in range(7)]
    zone = timezone.get_current_timezone()
    # Sites may sit a few hours from our zone: fetch a day either side, place by local date.
    lo = dt.datetime.combine(monday - dt.timedelta(days=1), dt.time.min, zone)
    hi = dt.datetime.combine(monday + dt.timedelta(days=8), dt.time.min, zone)
    visits = list(
        visits_for(request)
        .filter(window_start__lt=hi, window_end__gt=lo)
        .select_related("site__customer")
        .prefetch_related("technicians")
        .annotate(unit_count=Count("visit_units"))
        .order_by("window_start", "reference")
    )
    for visit in visits:
        zone_at_site = _site_zone(visit.site)
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

    if request.role == Role.OFFICE:
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
            row = index.get(pk if request.role == Role.OFFICE else request.user.pk)
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
            "this_week": _monday(None),
            "monday": monday,
            "visit_count": len({v.pk for v in visits}),
        },
    )


# --- visits: create, change, cancel, review ----------------------------------------------------


def _initial_from_query(request: HttpRequest) -> dict:
    """Prefill from the schedule's 'add' links: ?day=YYYY-MM-DD&technician=ID&site=ID."""
    initial: dict = {"kind": VisitKind.PLANNED}
    try:
        day = dt.date.fromisoformat(request.GET.get("day", ""))
    except ValueError:
        day = None
    if day is not None:
        start = dt.datetime.combine(day, DEFAULT_VISIT_START)
        initial["window_start"] = start
        initial["window_end"] = start + dt.timedelta(hours=DEFAULT_VISIT_HOURS)
    if request.GET.get("technician", "").isdigit():
        initial["technicians"] = [int(request.GET["technician"])]
    if request.GET.get("site", "").isdigit():
        initial["site"] = int(request.GET["site"])
    return initial


def _warn_about_overlaps(request: HttpRequest, visit: Visit) -> None:
    """Booking a technician twice is allowed (a call may outrank maintenance), but said."""
    clashes = (
        Visit.objects.filter(
            technicians__in=visit.technicians.all(),
            window_start__lt=visit.window_end,
            window_end__gt=visit.window_start,
        )
        .exclude(pk=visit.pk)
        .exclude(status=VisitStatus.CANCELLED)
        .distinct()
        .values_list("reference", flat=True)
    )
    if clashes:
        messages.warning(
            request,
            f"Double booking: {visit.reference} overlaps {', '.join(clashes)} for the same "
            "technician. It is saved; move one of them if that was not intended.",
        )


@within_reach(Role.OFFICE)
def visit_create(request: HttpRequest) -> HttpResponse:
    form = forms.VisitForm(request.POST or None, initial=_initial_from_query(request))
    if request.method == "POST" and form.is_valid():
        with transaction.atomic():
            visit = form.save()
            audit.record_created(visit, by=request.user, note="booked on the office pages")
        messages.success(request, f"Visit {visit.reference} booked.")
        _warn_about_overlaps(request, visit)
        return redirect("fleet:visit", pk=visit.pk)
    return page(request, "fleet/visit_form.html", {"form": form, "visit": None})


@within_reach(Role.OFFICE)
def visit_edit(request: HttpRequest, pk: int) -> HttpResponse:
    visit = get_object_or_404(Visit.objects.select_related("site"), pk=pk)
    if visit.status not in forms.EDITABLE_STATUSES:
        messages.error(
            request,
            f"Visit {visit.reference} is {visit.get_status_display().lower()}; "
            "its time, people and units can no longer change.",
        )
        return redirect("fleet:visit", pk=visit.pk)
    before = audit.snapshot(visit)
    form = forms.VisitForm(request.POST or None, instance=visit)
    if request.method == "POST" and form.is_valid():
        with transaction.atomic():
            visit = form.save()
            audit.record_changed(visit, before, by=request.user, note="changed on the office pages")
        messages.success(request, f"Visit {visit.reference} updated.")
        _warn_about_overlaps(request, visit)
        return redirect("fleet:visit", pk=visit.pk)
    return page(request, "fleet/visit_form.html", {"form": form, "visit": visit})


@within_reach(Role.OFFICE)
@require_GET
def unit_choices(request: HttpRequest) -> HttpResponse:
    """The 'units to cover' checkboxes for the site picked (swapped in by htmx)."""
    form = forms.VisitForm(initial={"site": request.GET.get("site")})
    return render(request, "fleet/_unit_choices.html", {"form": form})


@within_reach(Role.OFFICE)
@require_POST
def visit_cancel(request: HttpRequest, pk: int) -> HttpResponse:
    visit = get_object_or_404(Visit, pk=pk)
    form = forms.CancelVisitForm(request.POST)
    if not form.is_valid():
        messages.error(request, form.errors["confirm"][0])
    else:
        try:
            move_visit(visit, VisitStatus.CANCELLED, by=request.user)
        except IllegalTransition as refused:
            messages.error(request, f"Not cancelled: {refused}.")
        else:
            messages.success(request, f"Visit {visit.reference} cancelled.")
    return redirect("fleet:visit", pk=visit.pk)


def _visit_with_everything(request: HttpRequest) -> QuerySet[Visit]:
    """A visit with all its detail page shows, in a fixed number of queries."""
    readings = ReadingSet.objects.select_related("diagnosis", "created_by").order_by("taken_at")
    events = RefrigerantEvent.objects.select_related("leak_rate", "created_by").order_by(
        "occurred_on", "id"
    )
    covered = (
        VisitUnit.objects.select_related("unit__refrigerant")
        .prefetch_related(
            Prefetch("reading_sets", queryset=readings),
            Prefetch("refrigerant_events", queryset=events),
        )
        .order_by("unit__tag")
    )
    return (
        visits_for(request)
        .select_related("site__customer", "reviewed_by")
        .prefetch_related(
            "technicians",
            Prefetch("visit_units", queryset=covered),
            Prefetch(
                "components_changed",
                queryset=Component.objects.select_related("unit").order_by(
                    "unit__tag", "kind", "-installed_on"
                ),
            ),
        )
    )


@dataclass(frozen=True)
class Change:
    """One line of the audit trail, in words."""

    at: dt.datetime
    actor: object
    text: str
    fields: tuple[tuple[str, str, str], ...] = ()


@dataclass
class ReturnHistory:
    """What the office said when it last handed a visit back, and what came in since."""

    note: str
    returned_at: dt.datetime | None
    changes: list[Change] = field(default_factory=list)
    new_reading_ids: set[int] = field(default_factory=set)
    new_event_ids: set[int] = field(default_factory=set)


#: Audit field-name endings and the display filter that shows their SI value.
_FIELD_DISPLAY = (
    ("_kpa_gauge", "pressure"),
    ("_temp_c", "temp"),
    ("_c", "temp"),
    ("_k", "tempdiff"),
    ("_kg", "mass"),
)


def _shown(name: str, value, elevation_m: float) -> str:
    from .templatetags import rimewatch as shown

    if value is None or value == "":
        return "\u2014"
    if isinstance(value, int | float) and not isinstance(value, bool):
        for ending, how in _FIELD_DISPLAY:
            if name.endswith(ending):
                if how == "pressure":
                    return shown.pressure(value, elevation_m)
                return getattr(shown, how)(value)
    return str(value)


def _describe(entry: AuditEntry, labels: dict[tuple[str, int], str], elevation_m: float) -> Change:
    model = entry.record_type.model
    what = {"readingset": "reading set", "refrigerantevent": "refrigerant record"}.get(model, model)
    subject = labels.get((model, entry.record_id), f"{what} {entry.record_id}")
    if model == "visit":
        subject = "the visit"
    if entry.action == AuditAction.MOVED:
        old, new = (entry.changes.get("status") or [None, None])[:2]
        words = dict(VisitStatus.choices)
        text = f"moved the visit from {words.get(old, old)} to {words.get(new, new)}"
        return Change(entry.at, entry.actor, text)
    verb = {
        AuditAction.CREATED: "added",
        AuditAction.CHANGED: "changed",
        AuditAction.DELETED: "deleted",
    }.get(entry.action, entry.action)
    fields = ()
    if entry.action == AuditAction.CHANGED:
        fields = tuple(
            (
                name.replace("_", " "),
                _shown(name, pair[0], elevation_m),
                _shown(name, pair[1], elevation_m),
            )
            for name, pair in sorted(entry.changes.items())
            if isinstance(pair, list) and len(pair) == 2
        )
    return Change(entry.at, entry.actor, f"{verb} {subject}", fields)


def _is_return(entry: AuditEntry) -> bool:
    status = entry.changes.get("status") if isinstance(entry.changes, dict) else None
    return (
        entry.action == AuditAction.MOVED
        and isinstance(status, list)
        and status[:2] == [VisitStatus.SUBMITTED, VisitStatus.IN_PROGRESS]
    )


def return_history(visit: Visit, covered: list[CoveredUnit]) -> ReturnHistory | None:
    """None for a visit never returned; otherwise the office's note and, from the audit
    trail, what the technician changed after the last return.

    Visits returned before the trail existed have no dated return; the note is still shown.
    """
    if not visit.review_note or visit.status not in (
        VisitStatus.SUBMITTED,
        VisitStatus.IN_PROGRESS,
    ):
        return None
    entries = list(
        AuditEntry.objects.filter(visit_id=visit.pk)
        .select_related("actor", "record_type")
        .order_by("at", "id")
    )
    returns = [e for e in entries if _is_return(e)]
    history = ReturnHistory(note=visit.review_note, returned_at=None)
    if not returns:
        return history
    history.returned_at = returns[-1].at
    labels = {}
    for c in covered:
        for rs, _ in c.readings:
            labels[("readingset", rs.pk)] = (
                f"{rs.get_stage_display().lower()} readings on {c.unit.tag}"
            )
        for ev, _ in c.events:
            labels[("refrigerantevent", ev.pk)] = (
                f"{ev.get_kind_display().lower()} record on {c.unit.tag}"
            )
    after = [e for e in entries if e.at > history.returned_at]
    history.changes = [_describe(e, labels, visit.site.elevation_m) for e in after]
    for e in after:
        if e.action in (AuditAction.CREATED, AuditAction.CHANGED):
            if e.record_type.model == "readingset":
                history.new_reading_ids.add(e.record_id)
            elif e.record_type.model == "refrigerantevent":
                history.new_event_ids.add(e.record_id)
    return history


def diagnosis_condition(
    diagnosis: Diagnosis, flags: Iterable[Flag] = (), application: str = ""
) -> Health:
    """A stored diagnosis (and the unit's open flags) judged by the rule the monthly report
    uses (``reports.summary.judge``), so a page and the report say the same."""
    return judge_stored(
        diagnosis.score,
        diagnosis.metrics,
        diagnosis.findings,
        [
            (f.get_kind_display(), f.get_severity_display(), severity_rank(f.severity))
            for f in flags
        ],
        application=application,
    )


def _cautions_of(diagnoses: Iterable[Diagnosis]) -> list[dict]:
    seen: dict[str, dict] = {}
    for diagnosis in diagnoses:
        for caution in diagnosis.cautions:
            seen.setdefault(caution["code"], caution)
    return list(seen.values())


def _diagnosis_of(reading_set: ReadingSet) -> Diagnosis | None:
    try:
        return reading_set.diagnosis
    except Diagnosis.DoesNotExist:
        return None


def _leak_rate_of(event: RefrigerantEvent) -> LeakRate | None:
    try:
        return event.leak_rate
    except LeakRate.DoesNotExist:
        return None


@dataclass
class CoveredUnit:
    """One unit on a visit with its readings, their diagnoses and refrigerant records."""

    visit_unit: VisitUnit
    readings: list[tuple[ReadingSet, Diagnosis | None]]
    events: list[tuple[RefrigerantEvent, LeakRate | None]]

    @property
    def unit(self) -> Unit:
        return self.visit_unit.unit

    @property
    def lowest_score(self) -> float | None:
        scores = [d.score for _, d in self.readings if d is not None and d.score is not None]
        return min(scores) if scores else None

    @property
    def condition(self) -> Health | None:
        """The most urgent condition among the unit's diagnosed readings on this visit."""
        application = self.unit.application
        return worst(
            diagnosis_condition(d, application=application)
            for _, d in self.readings
            if d is not None
        )


def _covered_units(visit: Visit) -> list[CoveredUnit]:
    return [
        CoveredUnit(
            vu,
            [(rs, _diagnosis_of(rs)) for rs in vu.reading_sets.all()],
            [(ev, _leak_rate_of(ev)) for ev in vu.refrigerant_events.all()],
        )
        for vu in visit.visit_units.all()
    ]


@within_reach(Role.OFFICE, Role.TECHNICIAN, Role.MANAGER)
@require_GET
def visit_detail(request: HttpRequest, pk: int) -> HttpResponse:
    """A visit: its people, units, readings with scores and findings, refrigerant records.
    The office reviews submitted visits here."""
    return _visit_page(request, pk)


def _visit_page(request: HttpRequest, pk: int, review_form=None) -> HttpResponse:
    visit = get_object_or_404(_visit_with_everything(request), pk=pk)
    covered = _covered_units(visit)
    diagnoses = [d for c in covered for _, d in c.readings if d is not None]
    Diagnosis.attach_details(diagnoses)
    can_review = request.role == Role.OFFICE and visit.status == VisitStatus.SUBMITTED
    zone = _site_zone(visit.site)
    return page(
        request,
        "fleet/visit_detail.html",
        {
            "visit": visit,
            "covered": covered,
            "local_start": timezone.localtime(visit.window_start, zone),
            "local_end": timezone.localtime(visit.window_end, zone),
            "cautions": _cautions_of(diagnoses),
            "flammable": sorted(
                {c.unit.refrigerant.designation for c in covered if c.unit.refrigerant.flammable}
            ),
            "has_findings": any(d.findings for d in diagnoses),
            # The office's notes to its technicians are not for a customer's manager.
            "history": return_history(visit, covered) if request.role != Role.MANAGER else None,
            "can_edit": request.role == Role.OFFICE and visit.status in forms.EDITABLE_STATUSES,
            "can_review": can_review,
            "review_form": review_form or (forms.ReviewForm() if can_review else None),
            "cancel_form": forms.CancelVisitForm(),
        },
    )


@within_reach(Role.OFFICE)
@require_POST
def visit_review(request: HttpRequest, pk: int) -> HttpResponse:
    """Accept a submitted visit, or return it to the technician with a note."""
    visit = get_object_or_404(Visit, pk=pk)
    form = forms.ReviewForm(request.POST)
    if not form.is_valid():
        return _visit_page(request, pk, review_form=form)
    accept = form.cleaned_data["decision"] == forms.ReviewForm.ACCEPT
    target = VisitStatus.REVIEWED if accept else VisitStatus.IN_PROGRESS
    try:
        move_visit(visit, target, by=request.user, note=form.cleaned_data["note"].strip())
    except IllegalTransition as refused:
        messages.error(request, f"Nothing changed: {refused}.")
        return redirect("fleet:visit", pk=visit.pk)
    if accept:
        messages.success(request, f"Visit {visit.reference} accepted.")
    else:
        messages.success(request, f"Visit {visit.reference} returned to the technician.")
    return redirect("fleet:review-queue")


@within_reach(Role.OFFICE)
@require_GET
def review_queue(request: HttpRequest) -> HttpResponse:
    """Submitted visits, oldest hand-in first, with what a reviewer looks at first."""
    visits = list(
        _visit_with_everything(request)
        .filter(status=VisitStatus.SUBMITTED)
        .order_by("submitted_at", "window_start")
    )
    rows = []
    covered_of = {visit.pk: _covered_units(visit) for visit in visits}
    Diagnosis.attach_details(
        d for covered in covered_of.values() for c in covered for _, d in c.readings
    )
    for visit in visits:
        covered = covered_of[visit.pk]
        diagnoses = [d for c in covered for _, d in c.readings if d is not None]
        added = sum(
            ev.amount_kg or 0
            for c in covered
            for ev, _ in c.events
            if ev.kind == RefrigerantEventKind.ADDED
        )
        rows.append(
            {
                "visit": visit,
                "diagnosed": bool(diagnoses),
                "condition": worst(c.condition for c in covered if c.condition),
                "lowest_score": min(
                    (d.score for d in diagnoses if d.score is not None), default=None
                ),
                "faults": sum(1 for d in diagnoses for m in d.metrics if m["status"] == "fault"),
                "findings": sorted({f["title"] for d in diagnoses for f in d.findings}),
                "reading_count": sum(len(c.readings) for c in covered),
                "unit_count": len(covered),
                "added_kg": added or None,
                "over_threshold": any(
                    lr is not None and lr.over_threshold for c in covered for _, lr in c.events
                ),
                "resubmitted": bool(visit.review_note),
            }
        )
    return page(request, "fleet/review_queue.html", {"rows": rows})


# --- planned maintenance -----------------------------------------------------------------------


@dataclass(frozen=True)
class MaintenanceRow:
    unit: Unit
    status: maintenance.MaintenanceStatus
    last_done_on: dt.date | None


def _plans_and_units(today: dt.date) -> tuple[list[maintenance.MaintenancePlan], dict[int, Unit]]:
    """The maintenance plans the flag refresh decides on, with the units to show them by."""
    plans = maintenance_plans(today)
    units = Unit.objects.filter(pk__in=[p.unit_id for p in plans]).select_related("site__customer")
    return plans, {u.pk: u for u in units}


@within_reach(Role.OFFICE)
@require_GET
def maintenance_due(request: HttpRequest) -> HttpResponse:
    """Units due or overdue for planned maintenance, and the visits the core proposes."""
    today = timezone.localdate()
    rules = maintenance.DEFAULT_MAINTENANCE_RULES
    plans, units = _plans_and_units(today)
    horizon = today + dt.timedelta(days=rules.proposal_horizon_days)
    rows = []
    for plan in plans:
        status = maintenance.maintenance_status(plan, today)
        if status.due_on <= horizon:
            rows.append(MaintenanceRow(units[plan.unit_id], status, plan.last_completed_on))
    rows.sort(key=lambda r: (r.status.scheduled_on is not None, r.status.due_on, r.unit.tag))
    proposals = [
        {
            "proposal": p,
            "site": units[p.unit_ids[0]].site,
            "units": [units[pk] for pk in p.unit_ids],
            "overdue": len(p.overdue_unit_ids),
        }
        for p in maintenance.propose_visits(plans, today, rules)
    ]
    return page(
        request,
        "fleet/maintenance.html",
        {
            "rows": rows,
            "proposals": proposals,
            "today": today,
            "horizon_days": rules.proposal_horizon_days,
            "overdue_count": sum(1 for r in rows if r.status.overdue and not r.status.scheduled_on),
        },
    )


@within_reach(Role.OFFICE)
@require_POST
def maintenance_propose(request: HttpRequest) -> HttpResponse:
    """Book the proposed planned visits (unassigned; the coordinator assigns them after)."""
    today = timezone.localdate()
    plans, units = _plans_and_units(today)
    proposals = maintenance.propose_visits(plans, today)
    booked = book_proposed_visits(proposals, units, by=request.user)
    if booked:
        messages.success(
            request,
            f"Booked {len(booked)} planned visit{'s' if len(booked) != 1 else ''} "
            f"({', '.join(v.reference for v in booked)}); assign technicians on the schedule.",
        )
        first = min(v.window_start for v in booked)
        return redirect(f"{reverse('fleet:schedule')}?week={timezone.localdate(first)}")
    messages.info(request, "Nothing to book: every unit due soon already has a visit.")
    return redirect("fleet:maintenance")


# --- units ------------------------------------------------------------------------------------


def unit_charts(unit: Unit, today: dt.date) -> dict:
    """The unit's trend charts over the last twelve months of as-found readings: the monthly
    report's trend panels (``reports.figures.trend_panels``) and chart module, in one query.

    Returns the SVG (or "" when there is too little history) and the panels' descriptions.
    """
    from reports.charts import Window, chart_svg
    from reports.figures import trend_panels
    from reports.gather import unit_trend_history
    from reports.summary import DEFAULT_RULES

    first = dt.date(today.year - 1, today.month, 1)
    history = unit_trend_history(unit.pk, first, timezone.get_current_timezone())
    panels = trend_panels(history, unit.rla_a, display_for(), unit.application)
    shown = [p for p in panels if p.point_count() >= DEFAULT_RULES.chart_min_points]
    if not shown:
        return {"svg": "", "described": [], "min_points": DEFAULT_RULES.chart_min_points}
    window = Window.months(first, today)
    return {
        "svg": chart_svg(shown, window, columns=2),
        "described": [f"{p.title}: {p.alt}" for p in shown],
        "min_points": DEFAULT_RULES.chart_min_points,
    }


@within_reach(Role.OFFICE, Role.TECHNICIAN, Role.MANAGER)
@require_GET
def unit_detail(request: HttpRequest, pk: int) -> HttpResponse:
    """A unit: nameplate and design data, latest diagnosis, trends, flags, leaks, history."""
    unit = get_object_or_404(
        units_for(request).select_related("site__customer", "refrigerant"), pk=pk
    )
    components = list(
        unit.components.select_related("changed_on_visit").order_by(
            "removed_on", "kind", "-installed_on"
        )
    )
    latest = (
        ReadingSet.objects.filter(visit_unit__unit=unit, diagnosis__isnull=False)
        .select_related("diagnosis", "visit_unit__visit")
        .order_by("-taken_at")
        .first()
    )
    flags = list(
        unit.flags.filter(cleared_at__isnull=True)
        .select_related("acknowledged_by")
        .order_by("-opened_at")
    )
    events = list(
        RefrigerantEvent.objects.filter(visit_unit__unit=unit)
        .select_related("leak_rate", "visit_unit__visit")
        .order_by("-occurred_on", "-id")
    )
    visits = list(
        visits_for(request)
        .filter(visit_units__unit=unit)
        .prefetch_related("technicians")
        .order_by("-window_start")[:24]
    )
    added_kg = sum(e.amount_kg or 0 for e in events if e.kind == RefrigerantEventKind.ADDED)
    diagnosis = latest.diagnosis if latest else None
    return page(
        request,
        "fleet/unit_detail.html",
        {
            "unit": unit,
            "site": unit.site,
            "components": components,
            "fitted": [c for c in components if c.removed_on is None],
            "removed": [c for c in components if c.removed_on is not None],
            "latest": latest,
            "diagnosis": diagnosis,
            "condition": diagnosis_condition(diagnosis, flags, unit.application)
            if diagnosis
            else None,
            "flags": flags,
            "events": [(e, _leak_rate_of(e)) for e in events],
            "added_kg": added_kg,
            "visits": visits,
            "charts": unit_charts(unit, timezone.localdate()),
            "flammable_list": [unit.refrigerant.designation] if unit.refrigerant.flammable else [],
            "can_see_site": request.role in (Role.OFFICE, Role.MANAGER),
            "can_acknowledge": request.role == Role.OFFICE,
            "ack_form": forms.AcknowledgeFlagForm(),
        },
    )


@within_reach(Role.OFFICE)
@require_POST
def flag_acknowledge(request: HttpRequest, pk: int) -> HttpResponse:
    """Record that the office has seen a flag and what it is doing; the flag stays open
    until the diagnostics clear it."""
    flag = get_object_or_404(Flag.objects.select_related("unit__site"), pk=pk)
    form = forms.AcknowledgeFlagForm(request.POST, instance=flag)
    if form.is_valid():
        flag = form.save(commit=False)
        flag.acknowledged_by = request.user
        flag.acknowledged_at = timezone.now()
        flag.save(update_fields=["acknowledgement_note", "acknowledged_by", "acknowledged_at"])
        if not _is_htmx(request):
            messages.success(request, f"Flag on {flag.unit.tag} acknowledged.")
    if _is_htmx(request):
        return render(
            request,
            "fleet/_flag.html",
            {"flag": flag, "can_acknowledge": True, "ack_form": form, "show_unit": False},
        )
    if form.errors:
        messages.error(request, form.errors["acknowledgement_note"][0])
    return redirect(_safe_next(request, reverse("fleet:unit", args=[flag.unit_id])))


# --- sites ------------------------------------------------------------------------------------


def _latest_diagnosis(field_name: str) -> Subquery:
    latest = Diagnosis.objects.filter(reading_set__visit_unit__unit=OuterRef("pk")).order_by(
        "-reading_set__taken_at"
    )
    return Subquery(latest.values(field_name)[:1])


@within_reach(Role.OFFICE, Role.MANAGER)
@require_GET
def site_list(request: HttpRequest) -> HttpResponse:
    sites = (
        sites_for(request)
        .select_related("customer")
        .annotate(
            unit_count=Count("units", filter=Q(units__retired_on__isnull=True), distinct=True),
            open_flags=Count("units__flags", filter=Q(units__flags__cleared_at__isnull=True)),
        )
        .order_by("customer__name", "name")
    )
    return page(request, "fleet/site_list.html", {"sites": list(sites)})


def _reports_for(site: Site) -> list[dict]:
    """The site's monthly reports (the latest version of each month), newest first, in one
    query, linked to the reports app's page when it has one, else to the stored copy."""
    from reports.models import MonthlyReport

    latest: dict = {}
    for report in (
        MonthlyReport.objects.filter(site=site)
        .only("id", "site_id", "month", "version", "generated_at", "page_count")
        .order_by("-month", "-version")
    ):
        latest.setdefault(report.month, report)
    out = []
    for month, report in latest.items():
        key = f"{month:%Y-%m}"
        url = reverse("fleet:site-report", args=[site.pk, key])
        out.append(
            {
                "label": f"{month:%B %Y}",
                "url": url,
                "pdf_url": f"{url}?format=pdf",
                "version": report.version,
                "generated_at": report.generated_at,
            }
        )
    return out


@within_reach(Role.OFFICE, Role.MANAGER)
@require_GET
def site_report(request: HttpRequest, pk: int, month: str) -> HttpResponse:
    """The stored monthly report of a site as generated (HTML, or the PDF with
    ?format=pdf): what the manager was sent, not a fresh computation."""
    from reports.models import MonthlyReport

    site = get_object_or_404(sites_for(request), pk=pk)
    try:
        first_day = dt.date.fromisoformat(f"{month}-01")
    except ValueError as bad:
        raise Http404("no such month") from bad
    report = MonthlyReport.objects.filter(site=site, month=first_day).order_by("-version").first()
    if report is None:
        raise Http404("no report for that month")
    if request.GET.get("format") == "pdf":
        return FileResponse(
            report.pdf.open("rb"), content_type="application/pdf", filename=report.filename
        )
    return HttpResponse(report.html)


@within_reach(Role.OFFICE, Role.MANAGER)
@require_GET
def site_detail(request: HttpRequest, pk: int) -> HttpResponse:
    """A site: its units with health and flags at a glance, upcoming visits, its reports."""
    site = get_object_or_404(sites_for(request).select_related("customer"), pk=pk)
    open_flags = Flag.objects.filter(cleared_at__isnull=True).order_by("-opened_at")
    units = list(
        site.units.filter(retired_on__isnull=True)
        .select_related("refrigerant")
        .annotate(
            latest_score=_latest_diagnosis("score"),
            latest_document=_latest_diagnosis("document"),
            latest_at=_latest_diagnosis("reading_set__taken_at"),
        )
        .prefetch_related(Prefetch("flags", queryset=open_flags, to_attr="open_flags"))
        .order_by("tag")
    )
    # The latest diagnosis of each unit, rebuilt from the annotations (no query per unit):
    # its details are judged with the unit's open flags, as the monthly report judges them.
    for u in units:
        u.latest = (
            Diagnosis(score=u.latest_score, document=u.latest_document)
            if u.latest_at is not None
            else None
        )
    Diagnosis.attach_details(u.latest for u in units if u.latest is not None)
    for u in units:
        u.condition = (
            diagnosis_condition(u.latest, u.open_flags, u.application) if u.latest else None
        )
    upcoming = list(
        visits_for(request)
        .filter(
            site=site,
            status__in=[VisitStatus.SCHEDULED, VisitStatus.IN_PROGRESS, VisitStatus.SUBMITTED],
        )
        .prefetch_related("technicians")
        .order_by("window_start")[:12]
    )
    return page(
        request,
        "fleet/site_detail.html",
        {
            "site": site,
            "units": units,
            "flag_total": sum(len(u.open_flags) for u in units),
            "upcoming": upcoming,
            "reports": _reports_for(site),
            "flammable": sorted(
                {u.refrigerant.designation for u in units if u.refrigerant.flammable}
            ),
        },
    )


# --- attention --------------------------------------------------------------------------------


@dataclass(frozen=True)
class AttentionItem:
    """One thing that needs the office, dated for sorting: a deadline, a flag, or a box
    found far off its design temperature."""

    due_on: dt.date
    kind: str  # "flag", "repair", "verification" or "warm_box"
    unit: Unit
    flag: Flag | None = None
    leak_rate: LeakRate | None = None
    diagnosis: Diagnosis | None = None
    metric: dict | None = None

    @property
    def is_deadline(self) -> bool:
        return self.kind in ("repair", "verification")


def _open_leak_deadlines(today: dt.date) -> list[AttentionItem]:
    """Repair and initial-verification deadlines not yet met, from the stored leak rates.

    A repair deadline is met by a leak-repaired record on or after the addition; a
    verification deadline by an initial verification test on or after that repair.
    """
    rates = list(
        LeakRate.objects.filter(
            Q(repair_due_on__isnull=False) | Q(verification_due_on__isnull=False)
        ).select_related("event__visit_unit__unit__site__customer", "event__visit_unit__visit")
    )
    unit_ids = {r.event.visit_unit.unit_id for r in rates}
    done: dict[tuple[int, str], list[dt.date]] = defaultdict(list)
    for unit_id, kind, day in RefrigerantEvent.objects.filter(
        visit_unit__unit_id__in=unit_ids,
        kind__in=[RefrigerantEventKind.LEAK_REPAIRED, RefrigerantEventKind.INITIAL_VERIFICATION],
    ).values_list("visit_unit__unit_id", "kind", "occurred_on"):
        done[(unit_id, kind)].append(day)
    items = []
    for rate in rates:
        unit = rate.event.visit_unit.unit
        added_on = rate.event.occurred_on
        repairs = [d for d in done[(unit.pk, RefrigerantEventKind.LEAK_REPAIRED)] if d >= added_on]
        repaired_on = min(repairs, default=None)
        if rate.repair_due_on and repaired_on is None:
            items.append(AttentionItem(rate.repair_due_on, "repair", unit, leak_rate=rate))
        checks_after = repaired_on or added_on
        verified = any(
            d >= checks_after for d in done[(unit.pk, RefrigerantEventKind.INITIAL_VERIFICATION)]
        )
        if rate.verification_due_on and not verified:
            items.append(
                AttentionItem(rate.verification_due_on, "verification", unit, leak_rate=rate)
            )
    return items


def _warm_boxes() -> list[AttentionItem]:
    """Units in service whose latest as-found check found the box far off its design
    temperature (the stored box-temperature metric at ``fault``): the stock may be at risk.

    One query: the latest diagnosed as-found reading of every unit in service, with its
    diagnosis; their details are expanded in one pass. Ice machines hold no box.
    """
    latest = (
        ReadingSet.objects.filter(
            visit_unit__unit=OuterRef("pk"), stage=Stage.AS_FOUND, diagnosis__isnull=False
        )
        .order_by("-taken_at", "-id")
        .values("id")[:1]
    )
    in_service = Unit.objects.filter(retired_on__isnull=True).exclude(
        application=Application.ICE_MACHINE
    )
    diagnoses = list(
        Diagnosis.objects.filter(
            reading_set_id__in=in_service.annotate(latest=Subquery(latest)).values("latest")
        ).select_related(
            "reading_set__visit_unit__unit__site__customer", "reading_set__visit_unit__visit"
        )
    )
    Diagnosis.attach_details(diagnoses)
    items = []
    for d in diagnoses:
        box = next(
            (m for m in d.metrics if m["name"] == "box_temp" and m["status"] == "fault"), None
        )
        if box is not None:
            rs = d.reading_set
            items.append(
                AttentionItem(
                    timezone.localdate(rs.taken_at),
                    "warm_box",
                    rs.visit_unit.unit,
                    diagnosis=d,
                    metric=box,
                )
            )
    return items


@within_reach(Role.OFFICE)
@require_GET
def attention(request: HttpRequest) -> HttpResponse:
    """Every open flag, every open leak deadline and every box found far off its design
    temperature across the fleet, soonest first."""
    today = timezone.localdate()
    flags = list(
        Flag.objects.filter(cleared_at__isnull=True).select_related(
            "unit__site__customer", "acknowledged_by"
        )
    )
    items = [
        AttentionItem(f.projected_on or timezone.localdate(f.opened_at), "flag", f.unit, flag=f)
        for f in flags
    ]
    items.extend(_open_leak_deadlines(today))
    items.extend(_warm_boxes())
    items.sort(key=lambda i: (i.due_on, i.unit.tag, i.kind))
    return page(
        request,
        "fleet/attention.html",
        {
            "items": items,
            "today": today,
            "overdue": sum(1 for i in items if i.is_deadline and i.due_on < today),
            "flag_count": len(flags),
            "deadline_count": sum(1 for i in items if i.is_deadline),
            "warm_box_count": sum(1 for i in items if i.kind == "warm_box"),
            "nav_flag_count": len(flags),
            "can_acknowledge": True,
            "ack_form": forms.AcknowledgeFlagForm(),
        },
    )
