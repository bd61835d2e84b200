"""No N+1 in the admin: every list costs the same queries for one record as for several
(``list_select_related`` brings what each row names)."""

from __future__ import annotations

import pytest
from django.contrib import admin
from django.db import connection
from django.test.utils import CaptureQueriesContext
from django.utils import timezone

from diagnostics.models import Flag
from fleet import services
from tests.factories import (
    ComponentFactory,
    ReadingSetFactory,
    RefrigerantEventFactory,
    VisitUnitFactory,
)

from .test_computed import _report

pytestmark = pytest.mark.django_db

LISTS = sorted(
    f"/admin/{model._meta.app_label}/{model._meta.model_name}/"
    for model in admin.site._registry
    if model._meta.app_label in ("fleet", "diagnostics", "reports")
)


def _add_records() -> None:
    """One more of each record: a visit with a unit, its readings (and diagnosis), an
    addition (and leak rate), a part, a flag, a stored report, and their trail entries."""
    visit_unit = VisitUnitFactory()
    services.record_reading_set(ReadingSetFactory.build(visit_unit=visit_unit), by=None)
    services.record_refrigerant_event(RefrigerantEventFactory.build(visit_unit=visit_unit), by=None)
    ComponentFactory(unit=visit_unit.unit)
    Flag.objects.create(
        unit=visit_unit.unit,
        kind="leak_rate",
        severity="urgent",
        summary="Leak rate over the limit",
        opened_at=timezone.now(),
        updated_at=timezone.now(),
    )
    _report()


def _queries(client, url: str) -> int:
    with CaptureQueriesContext(connection) as captured:
        response = client.get(url)
    assert response.status_code == 200, url
    return len(captured)


@pytest.mark.parametrize("url", LISTS)
def test_a_list_costs_the_same_for_one_record_as_for_several(admin_client, url):
    _add_records()
    one = _queries(admin_client, url)
    for _ in range(3):
        _add_records()
    assert _queries(admin_client, url) == one
