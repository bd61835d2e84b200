"""A read replica (fleet/replica.py, config/replica.py): with one configured, report reads
and the pages' GETs go to it, writes and the API to the primary.

The test settings mirror the test database as a second alias, ``replica`` (Django's
``TEST: {"MIRROR": "default"}``): the same tables through a connection of its own, so the
queries each connection sends show where a read was routed.
"""

from __future__ import annotations

import datetime as dt
from collections.abc import Iterator
from contextlib import contextmanager
from zoneinfo import ZoneInfo

import pytest
from django.db import connections
from django.test.utils import CaptureQueriesContext
from rest_framework.test import APIClient

from config.replica import PIN_COOKIE
from reports.months import Month
from reports.services import generate_monthly_report
from tests.api.conftest import token_client
from tests.reports.factories import MonthlyReportFactory, bulk_site_history

pytestmark = pytest.mark.django_db(
    transaction=True, serialized_rollback=True, databases=["default", "replica"]
)

MARCH = Month(2026, 3)
NOW = dt.datetime(2026, 4, 1, 7, 0, tzinfo=ZoneInfo("America/Chicago"))


@contextmanager
def routed() -> Iterator[tuple[list[str], list[str]]]:
    """The SQL each alias ran inside the block: (primary, replica)."""
    primary, replica = [], []
    with (
        CaptureQueriesContext(connections["default"]) as p,
        CaptureQueriesContext(connections["replica"]) as r,
    ):
        yield primary, replica
    primary += [q["sql"] for q in p.captured_queries]
    replica += [q["sql"] for q in r.captured_queries]


@pytest.fixture
def with_replica(settings):
    settings.RIMEWATCH_READ_REPLICA = "replica"


def test_a_reports_reads_go_to_the_replica_and_its_writes_to_the_primary(with_replica):
    """Gathering the site-month reads the replica (units, visits, diagnoses); the version
    number, the site's lock and the stored row are the primary's."""
    site = bulk_site_history(2, MARCH).site
    with routed() as (primary, replica):
        report = generate_monthly_report(site, MARCH, NOW)

    assert report.version == 1
    assert any("diagnostics_" in sql for sql in replica)
    assert any("fleet_unit" in sql for sql in replica)
    assert all(sql.lstrip().upper().startswith("SELECT") for sql in replica)
    assert not any("diagnostics_" in sql or "fleet_unit" in sql for sql in primary)
    assert any(sql.startswith("INSERT INTO") and "reports_monthlyreport" in sql for sql in primary)


def test_without_a_replica_every_read_is_the_primarys():
    site = bulk_site_history(1, MARCH).site
    with routed() as (primary, replica):
        generate_monthly_report(site, MARCH, NOW)
    assert replica == []
    assert any("diagnostics_" in sql for sql in primary)


def test_pages_read_the_replica_until_the_browser_writes_and_the_api_never(
    with_replica, client, office_user
):
    """A GET page reads the stored reports from the replica (the session and the signed-in
    user from the primary); after a POST the browser carries the pin cookie and its next
    pages read the primary, so the office sees its own change. The API reads the primary."""
    report = MonthlyReportFactory()
    client.force_login(office_user)
    site_page = f"/reports/sites/{report.site_id}/"

    with routed() as (primary, replica):
        assert client.get(site_page).status_code == 200
    assert any("reports_monthlyreport" in sql for sql in replica)
    assert not any("reports_monthlyreport" in sql for sql in primary)
    assert any("django_session" in sql for sql in primary)
    assert not any("django_session" in sql or "auth_user" in sql for sql in replica)

    posted = client.post(f"{site_page}make/", {"month": "2026-03"})
    assert posted.status_code == 302
    assert PIN_COOKIE in posted.cookies
    with routed() as (primary, replica):
        assert client.get(site_page).status_code == 200
    assert replica == []
    assert any("reports_monthlyreport" in sql for sql in primary)

    api: APIClient = token_client(office_user)
    with routed() as (primary, replica):
        assert api.get(f"/api/v1/sites/{report.site_id}/reports/").status_code == 200
    assert replica == []
    assert any("reports_monthlyreport" in sql for sql in primary)
