"""Computed results (diagnoses, leak rates, flags, stored reports) are read in the admin,
never added, edited or deleted there: they change only with the records they come from."""

from __future__ import annotations

import datetime as dt

import pytest
from django.utils import timezone

from diagnostics.models import Diagnosis, Flag, LeakRate
from fleet import services
from reports.models import MonthlyReport
from tests.factories import ReadingSetFactory, RefrigerantEventFactory, UnitFactory

pytestmark = pytest.mark.django_db


def _leak_rate() -> LeakRate:
    event = RefrigerantEventFactory(amount_kg=1.39, occurred_on=timezone.localdate())
    return services.record_leak_rates(event.visit_unit.unit)[event.pk]


def _diagnosis() -> Diagnosis:
    return services.diagnose_reading_set(ReadingSetFactory())


def _flag() -> Flag:
    return Flag.objects.create(
        unit=UnitFactory(),
        kind="leak_rate",
        severity="urgent",
        summary="Leak rate over the limit",
        opened_at=timezone.now(),
        updated_at=timezone.now(),
    )


def _report() -> MonthlyReport:
    return MonthlyReport.objects.create(
        site=UnitFactory().site,
        month=dt.date(2026, 1, 1),
        version=1,
        generated_at=timezone.now(),
        algorithm_version="test",
        layout_version=1,
        display_units="si",
        checksum_sha256="0" * 64,
        pdf="reports/test.pdf",
        page_count=1,
        unit_count=1,
        html="<p>report</p>",
    )


MAKERS = {
    "diagnostics/diagnosis": _diagnosis,
    "diagnostics/leakrate": _leak_rate,
    "diagnostics/flag": _flag,
    "reports/monthlyreport": _report,
}


@pytest.mark.parametrize("path", MAKERS)
def test_a_computed_result_is_shown_but_never_added_changed_or_deleted(admin_client, path):
    """Its list and page open; adding, editing (even a superuser's) and deleting it are
    refused, and the bulk action offers no deletion."""
    result = MAKERS[path]()
    base = f"/admin/{path}/"
    listing = admin_client.get(base)
    assert listing.status_code == 200
    assert "delete_selected" not in listing.content.decode()
    page = admin_client.get(f"{base}{result.pk}/change/")
    assert page.status_code == 200
    assert 'type="submit"' not in page.content.decode().split('id="content-main"')[1]
    assert admin_client.get(f"{base}add/").status_code == 403
    assert admin_client.post(f"{base}add/", {}).status_code == 403
    assert admin_client.get(f"{base}{result.pk}/delete/").status_code == 403
    assert admin_client.post(f"{base}{result.pk}/delete/", {"post": "yes"}).status_code == 403
    assert type(result).objects.filter(pk=result.pk).exists()


def test_a_stored_leak_rate_cannot_be_rewritten(admin_client):
    """The rate of 13.9 % and its threshold stay what the rules computed when a change to
    1 % is posted to its page."""
    rate = _leak_rate()
    held = (rate.rolling_average_percent, rate.threshold_percent)
    response = admin_client.post(
        f"/admin/diagnostics/leakrate/{rate.pk}/change/",
        {"rolling_average_percent": "1", "threshold_percent": "1", "event": rate.event_id},
    )
    assert response.status_code == 403
    rate.refresh_from_db()
    assert (rate.rolling_average_percent, rate.threshold_percent) == held
