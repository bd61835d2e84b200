"""Customers, sites, units and parts saved in the admin (their inlines too) are recorded
and computed again by the same service as on the API: a unit's leak rates and flags follow
a corrected full charge."""

from __future__ import annotations

import pytest
from django.utils import timezone

from diagnostics.core import units
from diagnostics.models import Flag, LeakRate
from fleet import services
from fleet.models import AuditEntry, Component, Site
from tests.factories import (
    RefrigerantEventFactory,
    SiteFactory,
    UnitFactory,
    VisitFactory,
    VisitUnitFactory,
)

from .conftest import form_values

pytestmark = pytest.mark.django_db


def _unit_with_addition(charge_lb: float, added_lb: float):
    """A commercial unit with one addition today and its stored leak rate."""
    unit = UnitFactory(full_charge_kg=units.mass_to_kg(charge_lb, "lb"))
    visit_unit = VisitUnitFactory(visit=VisitFactory(site=unit.site), unit=unit)
    event = RefrigerantEventFactory(
        visit_unit=visit_unit,
        amount_kg=units.mass_to_kg(added_lb, "lb"),
        occurred_on=timezone.localdate(),
    )
    services.record_leak_rates(unit)
    return unit, event


def test_a_corrected_full_charge_computes_the_leak_rate_and_flags_again(admin_client, admin_user):
    """20 lb added to a unit entered as holding 200 lb is 10 %; corrected to 60 lb in the
    admin it is 33 %, over the 20 % threshold for commercial refrigeration (40 CFR
    82.157(c)(2)(i)), and the unit's leak-rate flag opens; the trail holds both charges."""
    unit, event = _unit_with_addition(200, 20)
    assert not LeakRate.objects.get(event=event).over_threshold
    url = f"/admin/fleet/unit/{unit.pk}/change/"
    data = form_values(admin_client, url)
    data["full_charge_kg"] = str(units.mass_to_kg(60, "lb"))

    response = admin_client.post(url, data)

    assert response.status_code == 302, response.content.decode()[:3000]
    rate = LeakRate.objects.get(event=event)
    assert rate.rolling_average_percent == pytest.approx(100 * 20 / 60, abs=0.01)
    assert Flag.objects.filter(unit=unit, kind="leak_rate", cleared_at__isnull=True).exists()
    entry = AuditEntry.objects.get(action="changed", record_type__model="unit")
    assert (entry.record_id, entry.actor) == (unit.pk, admin_user)
    assert entry.changes["full_charge_kg"] == pytest.approx(
        [units.mass_to_kg(200, "lb"), units.mass_to_kg(60, "lb")]
    )


def test_a_part_added_in_the_units_inline_is_recorded(admin_client, admin_user):
    """A run capacitor entered on the unit's page gets its own 'created' entry."""
    unit = UnitFactory()
    url = f"/admin/fleet/unit/{unit.pk}/change/"
    data = form_values(admin_client, url)
    data.update(
        {
            "components-TOTAL_FORMS": "1",
            "components-0-kind": "run_capacitor",
            "components-0-rated_uf": "45",
            "components-0-tolerance_pct": "6",
            "components-0-installed_on": "2026-01-05",
            "components-0-unit": str(unit.pk),
        }
    )

    response = admin_client.post(url, data)

    assert response.status_code == 302, response.content.decode()[:3000]
    part = Component.objects.get(unit=unit)
    entry = AuditEntry.objects.get(action="created", record_type__model="component")
    assert (entry.record_id, entry.actor, entry.changes["rated_uf"]) == (
        part.pk,
        admin_user,
        [None, 45.0],
    )


def test_a_site_deleted_in_the_admin_leaves_its_last_values(admin_client, admin_user):
    """A site with no units goes, and the trail keeps its name and who deleted it."""
    site = SiteFactory(name="Old depot")

    response = admin_client.post(f"/admin/fleet/site/{site.pk}/delete/", {"post": "yes"})

    assert response.status_code == 302
    assert not Site.objects.filter(pk=site.pk).exists()
    entry = AuditEntry.objects.get(action="deleted", record_type__model="site")
    assert (entry.actor, entry.changes["name"]) == (admin_user, ["Old depot", None])
