"""The fleet records refuse what must never be stored, by validation and by the database."""

from __future__ import annotations

import datetime as dt

import pytest
from django.core.exceptions import ValidationError
from django.db import IntegrityError, transaction

from fleet import models
from tests.factories import (
    ComponentFactory,
    ReadingSetFactory,
    RefrigerantEventFactory,
    SiteFactory,
    UnitFactory,
    VisitFactory,
    VisitUnitFactory,
)

pytestmark = pytest.mark.django_db


def test_it_seeds_every_refrigerant_of_the_catalogue_with_its_gwp():
    """The data migration seeds the 21 designations; GWP follows the mass-weighted rule of
    40 CFR 84.64(b) over AR4 values (table in docs/references.md §2, exact)."""
    expected = {
        "R-404A": 3922,
        "R-407A": 2107,
        "R-407C": 1774,
        "R-410A": 2088,
        "R-448A": 1387,
        "R-449A": 1397,
        "R-452A": 2140,
        "R-454B": 466,
        "R-454C": 148,
        "R-455A": 148,
        "R-507A": 3985,
        "R-513A": 631,
    }
    stored = dict(models.Refrigerant.objects.values_list("designation", "gwp"))
    assert len(stored) == 21
    for designation, gwp in expected.items():
        assert stored[designation] == gwp, designation
    assert models.Refrigerant.objects.get(designation="R-454B").safety_class == "A2L"
    assert models.Refrigerant.objects.get(designation="R-290").flammable


def test_it_refuses_a_negative_charge_in_validation_and_in_the_database():
    """A charge must be positive: full_clean names the field; the database refuses it too."""
    unit = UnitFactory.build(full_charge_kg=-1.0, site=SiteFactory())
    with pytest.raises(ValidationError) as caught:
        unit.full_clean()
    assert "full_charge_kg" in caught.value.message_dict
    with pytest.raises(IntegrityError), transaction.atomic():
        unit.save()


def test_it_refuses_an_impossible_visit_status_in_the_database():
    """Only the five statuses exist; a raw UPDATE to anything else fails."""
    visit = VisitFactory()
    with pytest.raises(IntegrityError), transaction.atomic():
        models.Visit.objects.filter(pk=visit.pk).update(status="teleported")


def test_it_refuses_a_reviewed_visit_without_a_reviewer():
    """A reviewed visit must say who reviewed it and when."""
    visit = VisitFactory()
    with pytest.raises(IntegrityError), transaction.atomic():
        models.Visit.objects.filter(pk=visit.pk).update(status="reviewed")


def test_it_refuses_a_reading_below_a_perfect_vacuum():
    """A gauge cannot read below -101.325 kPa (-14.7 psig); validation names the field and
    the database check constraint refuses the row."""
    reading = ReadingSetFactory.build(visit_unit=VisitUnitFactory(), suction_kpa_gauge=-150.0)
    with pytest.raises(ValidationError) as caught:
        reading.full_clean()
    assert "suction_kpa_gauge" in caught.value.message_dict
    assert "perfect vacuum" in caught.value.message_dict["suction_kpa_gauge"][0]
    with pytest.raises(IntegrityError), transaction.atomic():
        reading.save()


def test_it_refuses_a_ten_thousand_microfarad_capacitor_and_negative_amps():
    """Impossible electrical readings are refused by the database."""
    vu = VisitUnitFactory()
    for field, value in (("run_capacitor_uf", 10000.0), ("compressor_amps_1", -2.0)):
        with pytest.raises(IntegrityError), transaction.atomic():
            ReadingSetFactory(visit_unit=vu, **{field: value})


def test_it_ties_every_reading_set_to_a_unit_on_its_visit():
    """Reading sets hang off the visit-unit row, so a unit not on the visit cannot be used."""
    vu = VisitUnitFactory()
    other_unit = UnitFactory(site=vu.visit.site)
    assert not models.VisitUnit.objects.filter(visit=vu.visit, unit=other_unit).exists()
    reading = ReadingSetFactory(visit_unit=vu)
    assert reading.visit_unit.unit == vu.unit
    with pytest.raises(IntegrityError), transaction.atomic():
        models.VisitUnit.objects.create(visit=vu.visit, unit=vu.unit)


def test_it_keeps_one_reading_set_per_client_id():
    """client_id is unique: a second row with the same id is refused by the database."""
    first = ReadingSetFactory()
    with pytest.raises(IntegrityError), transaction.atomic():
        ReadingSetFactory(visit_unit=first.visit_unit, client_id=first.client_id)


def test_it_needs_a_positive_amount_for_an_addition():
    """An 'added' event without an amount is refused by validation and the database."""
    event = RefrigerantEventFactory.build(visit_unit=VisitUnitFactory(), amount_kg=None)
    with pytest.raises(ValidationError) as caught:
        event.full_clean()
    assert "amount_kg" in caught.value.message_dict
    with pytest.raises(IntegrityError), transaction.atomic():
        event.save()


def test_it_refuses_lra_at_or_below_rla_and_reversed_ranges():
    """Locked-rotor amps exceed rated-load amps; a capacitor range and dates run forward."""
    unit = UnitFactory.build(site=SiteFactory(), rla_a=20.0, lra_a=15.0)
    with pytest.raises(ValidationError) as caught:
        unit.full_clean()
    assert "lra_a" in caught.value.message_dict
    part = ComponentFactory.build(unit=UnitFactory(), rating_uf_min=50, rating_uf_max=40)
    with pytest.raises(ValidationError) as caught:
        part.full_clean()
    assert "rating_uf_max" in caught.value.message_dict
    visit = VisitFactory.build(site=SiteFactory())
    visit.window_end = visit.window_start - dt.timedelta(hours=1)
    with pytest.raises(ValidationError) as caught:
        visit.full_clean()
    assert "window_end" in caught.value.message_dict


def test_it_refuses_an_unknown_time_zone():
    """Site time zones are IANA names."""
    site = SiteFactory.build(customer=SiteFactory().customer, time_zone="Mars/Olympus")
    with pytest.raises(ValidationError) as caught:
        site.full_clean()
    assert "time_zone" in caught.value.message_dict


def test_every_model_has_a_readable_str():
    """Each record names itself in the admin and in logs."""
    reading = ReadingSetFactory()
    vu = reading.visit_unit
    for obj in (
        vu.visit.site.customer,
        vu.visit.site,
        vu.unit,
        vu.visit,
        vu,
        reading,
        RefrigerantEventFactory(visit_unit=vu),
        ComponentFactory(unit=vu.unit),
        vu.unit.refrigerant,
    ):
        assert str(obj)
        assert "object (" not in str(obj)


def test_the_office_group_may_keep_every_record_in_the_admin():
    """After migrate, the office group holds the add/change/delete/view permissions of the
    fleet, diagnostics and reports models, so office staff can use the admin."""
    from django.contrib.auth.models import Group

    office = Group.objects.get(name="office")
    codenames = set(office.permissions.values_list("content_type__app_label", "codename"))
    assert ("fleet", "change_unit") in codenames
    assert ("diagnostics", "change_flag") in codenames
    assert ("reports", "view_monthlyreport") in codenames
    assert not any(app == "auth" for app, _ in codenames)


def test_it_orders_sites_units_and_components_by_their_own_columns():
    """The default orderings sort on the records' own columns (Django advises against
    orderings that follow relations): reading sites, units or parts joins no other table,
    and units come by site id, then tag."""
    for model in (models.Site, models.Unit, models.Component):
        sql = str(model.objects.all().query)
        assert "JOIN" not in sql, sql
    first, second = SiteFactory(), SiteFactory()
    units = [UnitFactory(site=second, tag="A"), UnitFactory(site=first, tag="B")]
    units.append(UnitFactory(site=first, tag="A"))
    assert list(models.Unit.objects.filter(site__in=[first, second])) == [
        units[2],
        units[1],
        units[0],
    ]
