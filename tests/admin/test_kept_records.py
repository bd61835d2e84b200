"""Refrigerant service records are kept for the rule set's record-keeping period (40 CFR
82.157(l): 3 years under the US rules): one rule (``services.why_kept``) refuses their
deletion in the admin and on the API alike, and says why."""

from __future__ import annotations

import datetime as dt

import pytest
from django.utils import timezone

from diagnostics.core.leaks import US_EPA
from diagnostics.models import LeakRate
from fleet import services
from fleet.models import AuditEntry, RefrigerantEvent
from tests.factories import RefrigerantEventFactory

pytestmark = pytest.mark.django_db

REASON = "40 CFR 82.157(l)"


def _event(kind: str = "added", days_ago: int = 30, **fields) -> RefrigerantEvent:
    amount = 1.0 if kind in ("added", "recovered") else None
    event = RefrigerantEventFactory(
        kind=kind,
        amount_kg=amount,
        occurred_on=timezone.localdate() - dt.timedelta(days=days_ago),
        **fields,
    )
    services.record_leak_rates(event.visit_unit.unit)
    return event


@pytest.mark.parametrize(
    ("happened", "until"),
    [
        (dt.date(2026, 3, 14), dt.date(2029, 3, 14)),
        (dt.date(2024, 2, 29), dt.date(2027, 3, 1)),
    ],
)
def test_a_record_is_kept_three_years_from_the_day_of_the_work(happened, until):
    """The US rule set keeps records 3 years (40 CFR 82.157(l)); 29 February counts to 1
    March."""
    assert US_EPA.record_keeping_years.value == 3
    assert US_EPA.kept_until(happened) == until


def test_the_rule_names_its_source_and_lets_go_on_the_last_day():
    """Kept the day before the period ends, free on the day itself; readings are no
    refrigerant record."""
    event = RefrigerantEventFactory(kind="recovered", occurred_on=dt.date(2026, 3, 14))
    assert REASON in services.why_kept(event, today=dt.date(2029, 3, 13))
    assert "2029-03-14" in services.why_kept(event, today=dt.date(2029, 3, 13))
    assert services.why_kept(event, today=dt.date(2029, 3, 14)) is None
    with pytest.raises(services.KeptRecord, match=r"82\.157\(l\)"):
        services.delete_record(event, by=None)


@pytest.mark.parametrize("kind", ["added", "recovered", "leak_found", "leak_repaired"])
def test_the_admin_refuses_to_delete_a_kept_record(admin_client, kind):
    """The confirmation page names the rule and offers no deletion; a deletion posted
    anyway deletes nothing and leaves no entry."""
    event = _event(kind)
    url = f"/admin/fleet/refrigerantevent/{event.pk}/delete/"
    page = admin_client.get(url).content.decode()
    assert REASON in page
    assert 'name="post"' not in page
    admin_client.post(url, {"post": "yes"})
    assert RefrigerantEvent.objects.filter(pk=event.pk).exists()
    assert not AuditEntry.objects.filter(action="deleted").exists()


def test_the_bulk_delete_action_refuses_a_selection_holding_a_kept_record(admin_client):
    """A selection with one kept record among old ones deletes none of them."""
    kept = _event("added")
    old = _event("added", days_ago=4 * 366, visit_unit=kept.visit_unit)
    response = admin_client.post(
        "/admin/fleet/refrigerantevent/",
        {"action": "delete_selected", "_selected_action": [kept.pk, old.pk], "post": "yes"},
    )
    assert REASON in response.content.decode()
    assert RefrigerantEvent.objects.filter(pk__in=[kept.pk, old.pk]).count() == 2
    assert LeakRate.objects.filter(event=kept).exists()


def test_a_visit_holding_a_kept_record_is_not_deleted_in_the_admin(admin_client):
    """The record holds its visit: the page lists it as protected and nothing goes."""
    event = _event("added")
    visit = event.visit_unit.visit
    page = admin_client.get(f"/admin/fleet/visit/{visit.pk}/delete/").content.decode()
    assert 'name="post"' not in page
    admin_client.post(f"/admin/fleet/visit/{visit.pk}/delete/", {"post": "yes"})
    assert RefrigerantEvent.objects.filter(pk=event.pk).exists()
