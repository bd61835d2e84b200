"""The office pages' edges: an id beyond what a record can have is a 404 (SQLite cannot
even hold it in a query), and a database that cannot be reached is a small 503 page with
Retry-After, not a 500."""

from __future__ import annotations

import pytest
from django.db import OperationalError, connection
from django.test import Client

pytestmark = pytest.mark.django_db

TWENTY_DIGITS = 10**19 + 7


@pytest.fixture
def office_client(office_user) -> Client:
    client = Client()
    client.force_login(office_user)
    return client


@pytest.mark.parametrize("number", [2**63, TWENTY_DIGITS, 10**400])
@pytest.mark.parametrize(
    "path",
    [
        "/sites/{}/",
        "/sites/{}/reports/2026-01/",
        "/units/{}/",
        "/visits/{}/",
        "/visits/{}/edit/",
        "/visits/{}/review/",
        "/people/{}/",
        "/reports/sites/{}/",
        "/reports/sites/{}/2026-01/",
        "/reports/sites/{}/2026-01.pdf",
    ],
)
def test_a_page_id_beyond_any_record_is_a_404(office_client, path, number):
    assert office_client.get(path.format(number)).status_code == 404


def test_a_post_to_an_id_beyond_any_record_is_a_404(office_client):
    for path in ("/flags/{}/acknowledge/", "/visits/{}/cancel/"):
        assert office_client.post(path.format(TWENTY_DIGITS)).status_code == 404


def _refuse(execute, sql, params, many, context):
    raise OperationalError("could not connect to server: Connection refused")


def test_a_database_outage_is_a_small_503_page(office_client):
    with connection.execute_wrapper(_refuse):
        for path in ("/", "/sites/", "/reports/"):
            response = office_client.get(path)
            assert response.status_code == 503, path
            assert response["Retry-After"] == "30"
            assert b"Try again shortly" in response.content
            assert len(response.content) < 1000
