"""Overdue planned maintenance and the visits to propose (our scheduling rules)."""

from __future__ import annotations

from datetime import date, timedelta

import pytest

from diagnostics.core.maintenance import (
    MaintenancePlan,
    MaintenanceRules,
    maintenance_status,
    next_working_day,
    propose_visits,
)

TODAY = date(2026, 5, 20)


def ago(days: int) -> date:
    return TODAY - timedelta(days=days)


def test_due_one_interval_after_the_last_completed_visit() -> None:
    """A 90-day plan last done 100 days ago was due 10 days ago."""
    status = maintenance_status(MaintenancePlan(1, 1, 90, last_completed_on=ago(100)), TODAY)
    assert status.due_on == ago(10)
    assert status.days_overdue == 10
    assert status.overdue


def test_not_yet_due_counts_days_to_go() -> None:
    """A 90-day plan done 30 days ago is due in 60 days: not overdue."""
    status = maintenance_status(MaintenancePlan(1, 1, 90, last_completed_on=ago(30)), TODAY)
    assert status.days_overdue == -60
    assert not status.overdue


def test_without_a_completed_visit_the_service_start_counts_or_today() -> None:
    """No visit on record: due one interval after entering service, or today if unknown."""
    started = maintenance_status(MaintenancePlan(1, 1, 180, in_service_since=ago(200)), TODAY)
    assert started.due_on == ago(20)
    assert "entering service" in started.reason
    unknown = maintenance_status(MaintenancePlan(1, 1, 180), TODAY)
    assert unknown.due_on == TODAY
    assert unknown.reason == "no planned visit on record"


def test_a_booked_visit_in_the_past_is_not_a_booking() -> None:
    """Only a booking from today on counts as scheduled."""
    past = maintenance_status(
        MaintenancePlan(1, 1, 90, last_completed_on=ago(100), next_scheduled_on=ago(1)), TODAY
    )
    future = maintenance_status(
        MaintenancePlan(1, 1, 90, last_completed_on=ago(100), next_scheduled_on=TODAY), TODAY
    )
    assert past.scheduled_on is None
    assert future.scheduled_on == TODAY


def test_a_non_positive_interval_is_refused() -> None:
    """An interval of 0 days makes no schedule."""
    with pytest.raises(ValueError, match="interval"):
        maintenance_status(MaintenancePlan(1, 1, 0), TODAY)


def test_proposals_gather_a_site_and_skip_booked_and_distant_units() -> None:
    """Site 10: unit 1 overdue and unit 2 due in 20 days go on one visit proposed today;
    unit 3 is booked, unit 4 due in 60 days (beyond the 30-day horizon). Site 20: unit 5 due
    in 25 days (a Sunday) is proposed on the working day after its due date. The overdue
    site comes first."""
    plans = [
        MaintenancePlan(1, 10, 90, last_completed_on=ago(100)),
        MaintenancePlan(2, 10, 90, last_completed_on=ago(70)),
        MaintenancePlan(3, 10, 90, last_completed_on=ago(120), next_scheduled_on=TODAY),
        MaintenancePlan(4, 10, 90, last_completed_on=ago(30)),
        MaintenancePlan(5, 20, 30, last_completed_on=ago(5)),
    ]
    first, second = propose_visits(plans, TODAY)
    assert first.site_id == 10
    assert first.unit_ids == (1, 2)
    assert first.overdue_unit_ids == (1,)
    assert first.proposed_on == TODAY
    assert first.earliest_due_on == ago(10)
    assert second.site_id == 20
    assert second.unit_ids == (5,)
    assert second.earliest_due_on == TODAY + timedelta(days=25)
    assert second.proposed_on == TODAY + timedelta(days=26)


def test_the_horizon_is_a_rule() -> None:
    """With a 70-day horizon, unit 4 (due in 60 days) is proposed too."""
    plans = [MaintenancePlan(4, 10, 90, last_completed_on=ago(30))]
    assert propose_visits(plans, TODAY) == ()
    (proposal,) = propose_visits(plans, TODAY, MaintenanceRules(proposal_horizon_days=70))
    assert proposal.unit_ids == (4,)


def test_proposals_fall_on_working_days() -> None:
    """Overdue on a Saturday: proposed for the Monday after, not for today; due on a
    Sunday: the Monday after; due on a Friday: that Friday. Working days are a rule."""
    saturday = date(2026, 12, 5)
    overdue = MaintenancePlan(1, 10, 30, last_completed_on=saturday - timedelta(days=40))
    (proposal,) = propose_visits([overdue], saturday)
    assert proposal.proposed_on == date(2026, 12, 7)
    assert next_working_day(date(2026, 12, 6)) == date(2026, 12, 7)
    assert next_working_day(date(2026, 12, 4)) == date(2026, 12, 4)
    six_days = MaintenanceRules(working_days=frozenset(range(6)))
    (proposal,) = propose_visits([overdue], saturday, six_days)
    assert proposal.proposed_on == saturday
    with pytest.raises(ValueError, match="working day"):
        next_working_day(saturday, MaintenanceRules(working_days=frozenset()))
