"""Planned maintenance: which units are overdue, and which visits to propose.

A unit's next planned visit falls one interval after its last completed one; a unit with no
completed visit on record is due one interval after it entered service, or now if that is
unknown too. Proposals gather the units of one site that fall due within the horizon into one
visit, because a technician's trip costs more than the work on a second unit once there.
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass, field
from datetime import date, timedelta

from diagnostics.core.sources import cite


@dataclass(frozen=True)
class MaintenanceRules:
    grace_days: int = field(
        default=7, metadata=cite("ours: a week's slack before an overdue visit raises a flag")
    )
    high_after_fraction: float = field(
        default=0.5, metadata=cite("ours: overdue by half an interval or more is serious")
    )
    proposal_horizon_days: int = field(
        default=30,
        metadata=cite(
            "ours: propose the visits falling due within a month, for the office to book"
        ),
    )
    working_days: frozenset[int] = field(
        default=frozenset(range(5)),
        metadata=cite(
            "ours: planned visits go on Monday to Friday (date.weekday() 0 to 4); "
            "weekends are for calls"
        ),
    )


DEFAULT_MAINTENANCE_RULES = MaintenanceRules()


@dataclass(frozen=True)
class MaintenancePlan:
    """One unit's planned-maintenance interval and its record."""

    unit_id: int
    site_id: int
    interval_days: int
    last_completed_on: date | None = None
    in_service_since: date | None = None
    #: A planned visit already booked and not yet done.
    next_scheduled_on: date | None = None


@dataclass(frozen=True)
class MaintenanceStatus:
    unit_id: int
    site_id: int
    due_on: date
    #: Days past the due date (negative: days still to go).
    days_overdue: int
    scheduled_on: date | None
    reason: str

    @property
    def overdue(self) -> bool:
        return self.days_overdue > 0


@dataclass(frozen=True)
class VisitProposal:
    """A planned visit to book: one site, the units it covers, and the date to aim for."""

    site_id: int
    proposed_on: date
    unit_ids: tuple[int, ...]
    overdue_unit_ids: tuple[int, ...]
    earliest_due_on: date


def maintenance_status(plan: MaintenancePlan, today: date) -> MaintenanceStatus:
    """When the unit's next planned visit is due, and how far past it today is."""
    if plan.interval_days <= 0:
        raise ValueError("the maintenance interval must be positive")
    interval = timedelta(days=plan.interval_days)
    if plan.last_completed_on is not None:
        due = plan.last_completed_on + interval
        reason = f"last planned visit {plan.last_completed_on.isoformat()}"
    elif plan.in_service_since is not None:
        due = plan.in_service_since + interval
        reason = f"no planned visit since entering service {plan.in_service_since.isoformat()}"
    else:
        due = today
        reason = "no planned visit on record"
    scheduled = (
        plan.next_scheduled_on
        if plan.next_scheduled_on is not None and plan.next_scheduled_on >= today
        else None
    )
    return MaintenanceStatus(
        unit_id=plan.unit_id,
        site_id=plan.site_id,
        due_on=due,
        days_overdue=(today - due).days,
        scheduled_on=scheduled,
        reason=reason,
    )


def next_working_day(day: date, rules: MaintenanceRules = DEFAULT_MAINTENANCE_RULES) -> date:
    """``day`` itself if it is a working day, else the first working day after it."""
    if not rules.working_days:
        raise ValueError("at least one day of the week must be a working day")
    while day.weekday() not in rules.working_days:
        day += timedelta(days=1)
    return day


def propose_visits(
    plans: Iterable[MaintenancePlan],
    today: date,
    rules: MaintenanceRules = DEFAULT_MAINTENANCE_RULES,
) -> tuple[VisitProposal, ...]:
    """Visits to book: per site, the units due within the horizon that nobody has booked.

    The proposed date is the earliest due date, or today when something is already overdue,
    moved on to the next working day when it falls on another. Proposals come most urgent
    first.
    """
    horizon = today + timedelta(days=rules.proposal_horizon_days)
    by_site: dict[int, list[MaintenanceStatus]] = {}
    for plan in plans:
        status = maintenance_status(plan, today)
        if status.scheduled_on is None and status.due_on <= horizon:
            by_site.setdefault(plan.site_id, []).append(status)
    proposals = []
    for site_id, statuses in by_site.items():
        statuses.sort(key=lambda s: (s.due_on, s.unit_id))
        earliest = statuses[0].due_on
        proposals.append(
            VisitProposal(
                site_id=site_id,
                proposed_on=next_working_day(max(earliest, today), rules),
                unit_ids=tuple(s.unit_id for s in statuses),
                overdue_unit_ids=tuple(s.unit_id for s in statuses if s.overdue),
                earliest_due_on=earliest,
            )
        )
    proposals.sort(key=lambda p: (p.earliest_due_on, p.site_id))
    return tuple(proposals)
