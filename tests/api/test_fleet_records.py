"""Customers, sites, units, components and refrigerants on the API: design data in the
units the client states, validation from the models, and refusals that are never 500s."""

from __future__ import annotations

import pytest
from django.utils import timezone

from diagnostics.models import LeakRate
from fleet import services
from fleet.models import AuditEntry, Unit
from tests.factories import (
    RefrigerantEventFactory,
    SiteFactory,
    UnitFactory,
    VisitFactory,
    VisitUnitFactory,
    refrigerant,
)

from .conftest import token_client

pytestmark = pytest.mark.django_db

KG_PER_LB = 0.45359237  # exact (NIST SP 811, Appendix B.8)


def _unit_body(site, **fields) -> dict:
    """A synthetic R-404A walk-in cooler in US units."""
    return {
        "site": site.pk,
        "tag": "WIC-9",
        "application": "medium_temp",
        "refrigerant": "R-404A",
        "full_charge": 22.0,
        "metering_device": "txv",
        "design_box_temp": 35.0,
        "design_evap_td": 10.0,
        "design_condenser_split": 25.0,
        "high_pressure_cutout": 400.0,
        "nameplate_volts": 230,
        "phase": 1,
        "rla_a": 12.0,
        "lra_a": 61.0,
        "units": {"temperature": "F", "pressure": "psig", "mass": "lb"},
        **fields,
    }


def test_it_stores_design_data_in_si(office_user):
    """22 lb, 35 F, a 10 F TD and 400 psig are stored as 9.979 kg, 1.667 C, 5.556 K and
    2757.9 kPa (exact factors, NIST SP 811; a temperature difference has no offset)."""
    site = SiteFactory()
    office = token_client(office_user)
    response = office.post("/api/v1/units/", _unit_body(site), format="json")
    assert response.status_code == 201, response.json()
    unit = Unit.objects.get(pk=response.json()["id"])
    assert unit.full_charge_kg == pytest.approx(22 * KG_PER_LB, abs=1e-6)
    assert unit.design_box_temp_c == pytest.approx(1.6667, abs=1e-4)
    assert unit.design_evap_td_k == pytest.approx(5.5556, abs=1e-4)
    assert unit.high_pressure_cutout_kpa_gauge == pytest.approx(2757.90, abs=0.01)
    si = office.get(f"/api/v1/units/{unit.pk}/?units=si").json()
    assert (si["full_charge"], si["design_evap_td"]) == (pytest.approx(9.979, abs=1e-3), 5.556)
    assert si["units"]["temperature_difference"] == "K"
    us = office.get(f"/api/v1/units/{unit.pk}/?units=us").json()
    assert us["design_evap_td"] == pytest.approx(10.0)


def test_the_models_rules_judge_api_writes(office_user):
    """LRA not above RLA is refused with the model's own message (validation lives once)."""
    response = token_client(office_user).post(
        "/api/v1/units/", _unit_body(SiteFactory(), lra_a=10.0), format="json"
    )
    assert response.status_code == 400
    assert response.json() == {"lra_a": ["locked-rotor amps must be above rated-load amps"]}


def test_a_tag_is_unique_per_site(office_user):
    """A second unit with the same tag at the same site is a 400, not a database error."""
    site = SiteFactory()
    UnitFactory(site=site, tag="WIC-9")
    response = token_client(office_user).post("/api/v1/units/", _unit_body(site), format="json")
    assert response.status_code == 400
    assert response.json()


def test_a_referenced_record_cannot_be_deleted(office_user):
    """Deleting a site that still has units is 409 with what holds it."""
    unit = UnitFactory()
    response = token_client(office_user).delete(f"/api/v1/sites/{unit.site_id}/")
    assert response.status_code == 409
    assert "units" in response.json()["non_field_errors"][0]


def test_an_impossible_site_is_refused_in_its_units(office_user):
    """A design ambient of 200 F is above any design dry bulb (60 C = 140 F)."""
    site = SiteFactory()
    response = token_client(office_user).patch(
        f"/api/v1/sites/{site.pk}/",
        {"design_ambient": 200.0, "units": {"temperature": "F"}},
        format="json",
    )
    assert response.status_code == 400
    assert response.json() == {"design_ambient": ["above the highest reading possible (140 F)"]}


def test_refrigerants_list_composition_gwp_and_glide(technician):
    """R-404A: ASHRAE 34 composition 44/52/4 (R-125/143a/134a), class A1, GWP 3922 by the
    40 CFR 84.64(b) rule (docs/references.md §2); a pure fluid has no glide; any spelling of
    the designation finds it."""
    client = token_client(technician)
    r404a = client.get("/api/v1/refrigerants/r404a/").json()
    assert r404a["designation"] == "R-404A"
    assert dict(r404a["composition"]) == pytest.approx(
        {"R-125": 0.44, "R-143a": 0.52, "R-134a": 0.04}, abs=1e-6
    )
    assert (r404a["safety_class"], r404a["gwp"]) == ("A1", refrigerant("R-404A").gwp)
    assert r404a["gwp"] == pytest.approx(3922, abs=1)
    assert r404a["glide"] > 0  # a zeotrope
    assert client.get("/api/v1/refrigerants/R-134a/").json()["glide"] == 0.0
    missing = client.get("/api/v1/refrigerants/R-999/")
    assert missing.status_code == 404
    assert "unknown refrigerant" in missing.json()["designation"][0]


def test_the_api_records_a_unit_edit_and_computes_its_leak_rate_again(office_user):
    """A unit's full charge corrected from 200 lb to 60 lb on the API: its addition of 20 lb
    is now a 33 % leak rate (40 CFR 82.152), and the trail holds the new charge."""
    unit = UnitFactory(full_charge_kg=200 * KG_PER_LB)
    visit_unit = VisitUnitFactory(visit=VisitFactory(site=unit.site), unit=unit)
    event = RefrigerantEventFactory(
        visit_unit=visit_unit, amount_kg=20 * KG_PER_LB, occurred_on=timezone.localdate()
    )
    services.record_leak_rates(unit)

    response = token_client(office_user).patch(
        f"/api/v1/units/{unit.pk}/",
        {"full_charge": 60.0, "units": {"mass": "lb"}},
        format="json",
    )

    assert response.status_code == 200, response.json()
    rate = LeakRate.objects.get(event=event)
    assert rate.rolling_average_percent == pytest.approx(100 * 20 / 60, abs=0.01)
    entry = AuditEntry.objects.get(action="changed", record_type__model="unit")
    assert entry.actor == office_user
    assert entry.changes["full_charge_kg"][1] == pytest.approx(60 * KG_PER_LB)
