"""Edits and deletions in the admin go through the services the pages and the API use: an
audit entry with the values before and after and the acting user, and what rests on the
record computed again in the same transaction."""

from __future__ import annotations

import datetime as dt
from zoneinfo import ZoneInfo

import pytest
from django.utils import timezone

from diagnostics.core import units
from diagnostics.models import Diagnosis, Flag, LeakRate
from fleet import audit, services
from fleet.models import AuditEntry, ReadingSet, RefrigerantEvent
from tests.factories import (
    ReadingSetFactory,
    RefrigerantEventFactory,
    UnitFactory,
    UserFactory,
    VisitFactory,
    VisitUnitFactory,
)

from .conftest import form_values

pytestmark = pytest.mark.django_db


def _stored_reading_set(**fields) -> ReadingSet:
    """A reading set stored as the phone stores it, with its diagnosis."""
    stored = services.record_reading_set(
        ReadingSetFactory.build(visit_unit=VisitUnitFactory(), **fields), by=None
    )
    return stored.record


def _entries(record, action: str):
    return AuditEntry.objects.filter(
        action=action, record_id=record.pk, record_type__model=type(record)._meta.model_name
    )


def test_a_changed_suction_is_scored_again_and_recorded(admin_client, admin_user):
    """Suction edited from 122 to 300 kPa in the admin: the diagnosis is computed again
    from the new value and the trail holds [122, 300] with the editor's name."""
    reading = _stored_reading_set(suction_kpa_gauge=122.0)
    before = Diagnosis.objects.get(reading_set=reading)
    url = f"/admin/fleet/readingset/{reading.pk}/change/"
    data = form_values(admin_client, url)
    data["suction_kpa_gauge"] = "300"

    response = admin_client.post(url, data)

    assert response.status_code == 302, response.context["adminform"].form.errors
    after = Diagnosis.objects.get(reading_set=reading)
    reading.refresh_from_db()
    expected = services.diagnosis_of(reading)
    assert after.score != before.score
    assert after.score == pytest.approx(expected.score)
    assert after.document == expected.document
    entry = _entries(reading, "changed").get()
    assert entry.actor == admin_user
    assert entry.changes == {"suction_kpa_gauge": [122.0, 300.0]}
    assert entry.visit_id == reading.visit_unit.visit_id


def test_a_deleted_reading_set_leaves_its_last_values(admin_client, admin_user):
    """One reading set deleted from its page: gone, with its diagnosis, and the trail keeps
    what it held and who deleted it."""
    reading = _stored_reading_set(suction_kpa_gauge=122.0)
    url = f"/admin/fleet/readingset/{reading.pk}/delete/"
    assert admin_client.get(url).status_code == 200

    response = admin_client.post(url, {"post": "yes"})

    assert response.status_code == 302
    assert not ReadingSet.objects.filter(pk=reading.pk).exists()
    assert not Diagnosis.objects.filter(reading_set_id=reading.pk).exists()
    entry = _entries(reading, "deleted").get()
    assert entry.actor == admin_user
    assert entry.changes["suction_kpa_gauge"] == [122.0, None]


def test_the_bulk_delete_action_records_each_set(admin_client, admin_user):
    """ "Delete selected" leaves one entry per deleted set, as single deletions do."""
    readings = [_stored_reading_set(suction_kpa_gauge=s) for s in (120.0, 130.0, 140.0)]
    chosen = readings[:2]

    response = admin_client.post(
        "/admin/fleet/readingset/",
        {"action": "delete_selected", "_selected_action": [r.pk for r in chosen], "post": "yes"},
    )

    assert response.status_code == 302
    assert set(ReadingSet.objects.values_list("pk", flat=True)) == {readings[2].pk}
    for reading in chosen:
        entry = _entries(reading, "deleted").get()
        assert (entry.actor, entry.changes["suction_kpa_gauge"][1]) == (admin_user, None)
    assert not _entries(readings[2], "deleted").exists()


def test_an_edited_addition_computes_the_leak_rates_and_flags_again(admin_client, admin_user):
    """An addition to a 60 lb system corrected from 2 lb to 20 lb in the admin: its stored
    rate becomes 33 % (40 CFR 82.152: the addition over the full charge, over 365 days
    with no earlier addition), over the 20 % threshold for commercial refrigeration (40 CFR
    82.157(c)(2)(i)), so the unit's leak-rate flag opens; the trail holds both amounts."""
    unit = UnitFactory(full_charge_kg=units.mass_to_kg(60, "lb"))
    visit_unit = VisitUnitFactory(visit=VisitFactory(site=unit.site), unit=unit)
    event = services.record_refrigerant_event(
        RefrigerantEventFactory.build(
            visit_unit=visit_unit,
            amount_kg=units.mass_to_kg(2, "lb"),
            occurred_on=timezone.localdate(),
        ),
        by=None,
    ).record
    assert not LeakRate.objects.get(event=event).over_threshold
    url = f"/admin/fleet/refrigerantevent/{event.pk}/change/"
    data = form_values(admin_client, url)
    data["amount_kg"] = str(units.mass_to_kg(20, "lb"))

    assert admin_client.post(url, data).status_code == 302

    rate = LeakRate.objects.get(event=event)
    assert rate.rolling_average_percent == pytest.approx(100 * 20 / 60, abs=0.01)
    assert rate.over_threshold
    assert Flag.objects.filter(unit=unit, kind="leak_rate", cleared_at__isnull=True).count() == 1
    entry = _entries(event, "changed").get()
    assert entry.actor == admin_user
    old, new = entry.changes["amount_kg"]
    assert (old, new) == pytest.approx((units.mass_to_kg(2, "lb"), units.mass_to_kg(20, "lb")))


def test_a_visit_edited_in_the_admin_is_recorded_with_its_people(admin_client, admin_user):
    """A technician added and the problem reworded: one entry with both changes; the
    status is shown but not offered, since it moves only along the visit's life cycle."""
    visit = VisitUnitFactory(visit=VisitFactory(reported_problem="Warm box")).visit
    tech = UserFactory(role="technician")
    url = f"/admin/fleet/visit/{visit.pk}/change/"
    data = form_values(admin_client, url)
    assert "status" not in data
    data["reported_problem"] = "Warm box, ice on the coil"
    data["technicians"] = [str(tech.pk)]

    response = admin_client.post(url, data)

    assert response.status_code == 302, response.content.decode()[:3000]
    entry = _entries(visit, "changed").get()
    assert entry.actor == admin_user
    assert entry.changes == {
        "reported_problem": ["Warm box", "Warm box, ice on the coil"],
        "technicians": [[], [tech.pk]],
    }


def test_a_reading_set_added_in_the_admin_is_diagnosed_and_recorded(admin_client, admin_user):
    """A set entered in the admin is stored as the API stores one: with its diagnosis and
    a 'created' entry."""
    visit_unit = VisitUnitFactory()
    template = ReadingSetFactory.build(visit_unit=visit_unit)
    data = form_values(admin_client, "/admin/fleet/readingset/add/")
    now = timezone.localtime()
    data.update(
        visit_unit=str(visit_unit.pk),
        taken_at_0=now.date().isoformat(),
        taken_at_1=now.strftime("%H:%M:%S"),
        stage="as_found",
        box_temp_c=str(template.box_temp_c),
        entering_air_temp_c=str(template.entering_air_temp_c),
        suction_kpa_gauge=str(template.suction_kpa_gauge),
        suction_line_temp_c=str(template.suction_line_temp_c),
        head_kpa_gauge=str(template.head_kpa_gauge),
        liquid_line_temp_c=str(template.liquid_line_temp_c),
    )

    response = admin_client.post("/admin/fleet/readingset/add/", data)

    assert response.status_code == 302, response.content.decode()[:3000]
    reading = ReadingSet.objects.get(visit_unit=visit_unit)
    assert Diagnosis.objects.filter(reading_set=reading).exists()
    assert _entries(reading, "created").get().actor == admin_user


def test_an_old_record_is_deleted_with_its_entry(admin_client):
    """Past the record-keeping period an addition may go, with its leak rate, leaving its
    last values in the trail."""
    unit = UnitFactory(full_charge_kg=units.mass_to_kg(60, "lb"))
    visit_unit = VisitUnitFactory(visit=VisitFactory(site=unit.site), unit=unit)
    today = timezone.localdate()
    old = RefrigerantEventFactory(
        visit_unit=visit_unit,
        amount_kg=units.mass_to_kg(10, "lb"),
        occurred_on=today - dt.timedelta(days=4 * 366),
    )
    services.record_leak_rates(unit)
    assert old.occurred_on < today - dt.timedelta(days=3 * 366)
    url = f"/admin/fleet/refrigerantevent/{old.pk}/delete/"

    assert admin_client.post(url, {"post": "yes"}).status_code == 302

    assert not RefrigerantEvent.objects.filter(pk=old.pk).exists()
    assert not LeakRate.objects.filter(event_id=old.pk).exists()
    assert _entries(old, "deleted").get().changes["amount_kg"][1] is None


def test_the_same_moment_with_another_offset_is_no_change():
    """A form gives a moment in the site's offset, the database in UTC: the trail compares
    instants, so an untouched time is not recorded as changed."""
    reading = _stored_reading_set()
    stored = ReadingSet.objects.get(pk=reading.pk)
    before = audit.snapshot(stored)
    stored.taken_at = stored.taken_at.astimezone(ZoneInfo("America/Chicago"))
    assert audit.diff(before, audit.snapshot(stored)) == {}


def test_readings_no_system_can_produce_are_refused_as_on_the_api(admin_client):
    """Suction above the head while the compressor runs is refused on the form, as the API
    refuses it; nothing is stored, rescored or recorded."""
    reading = _stored_reading_set(suction_kpa_gauge=350.0, compressor_running=True)
    before = Diagnosis.objects.get(reading_set=reading)
    url = f"/admin/fleet/readingset/{reading.pk}/change/"
    data = form_values(admin_client, url)
    data["suction_kpa_gauge"] = "1800"

    response = admin_client.post(url, data)

    assert response.status_code == 200
    errors = response.context["adminform"].form.errors
    assert "suction_kpa_gauge" in errors, errors
    reading.refresh_from_db()
    assert reading.suction_kpa_gauge == 350.0
    assert Diagnosis.objects.get(reading_set=reading).computed_at == before.computed_at
    assert not _entries(reading, "changed").exists()
