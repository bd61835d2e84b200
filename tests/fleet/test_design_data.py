"""Design data a technician knows (head-pressure control, the TD and split basis, a dual
voltage rating, the receiver) and capacitors as printed on the can: what the records accept,
what they refuse in validation and in the database, and the one rule for a capacitor's band."""

from __future__ import annotations

import pytest
from django.contrib import admin
from django.core.exceptions import ValidationError
from django.db import IntegrityError, transaction

from diagnostics.core.types import HEAD_PRESSURE_CONTROLS, TEMPERATURE_BASES
from fleet import choices, models
from tests.factories import ComponentFactory, SiteFactory, UnitFactory, UserFactory, refrigerant

pytestmark = pytest.mark.django_db


def _refused(record, field: str) -> None:
    """full_clean names ``field``; saving anyway is refused by the database."""
    with pytest.raises(ValidationError) as caught:
        record.full_clean()
    assert field in caught.value.message_dict, caught.value.message_dict
    with pytest.raises(IntegrityError), transaction.atomic():
        record.save()


def test_it_offers_the_cores_kinds_of_head_pressure_control_and_temperature_basis():
    """The stored values are the core's names, so a stored unit always maps to the core."""
    assert tuple(choices.HeadPressureControl.values) == HEAD_PRESSURE_CONTROLS
    assert tuple(choices.TemperatureBasis.values) == TEMPERATURE_BASES


def test_a_new_unit_leaves_the_receiver_and_control_to_the_application_and_reads_on_dew():
    """Without design data a unit has no receiver flag and no control recorded (the
    application default applies) and its design TD and split are read on the dew point."""
    unit = models.Unit.objects.create(
        site=SiteFactory(),
        tag="WIC-1",
        application="medium_temp",
        refrigerant=refrigerant("R-448A"),
        full_charge_kg=10.0,
        metering_device="txv",
        design_box_temp_c=2.0,
        nameplate_volts=230,
        phase=1,
        rla_a=10.0,
        lra_a=60.0,
    )
    unit.refresh_from_db()
    assert unit.has_receiver is None
    assert unit.head_pressure_control == ""
    assert unit.head_pressure_setpoint_c is None
    assert unit.design_temperature_basis == "dew"
    assert unit.nameplate_volts_max is None


def test_it_refuses_a_set_point_on_a_unit_without_head_pressure_control():
    """A unit whose head follows the weather holds no set point."""
    unit = UnitFactory.build(
        site=SiteFactory(), head_pressure_control="none", head_pressure_setpoint_c=30.0
    )
    _refused(unit, "head_pressure_setpoint_c")


def test_it_keeps_a_set_point_inside_its_limit():
    """A set point is a condensing temperature a control can hold (10-60 C, fleet/limits.py)."""
    unit = UnitFactory.build(
        site=SiteFactory(), head_pressure_control="fan_cycling", head_pressure_setpoint_c=75.0
    )
    _refused(unit, "head_pressure_setpoint_c")
    unit.head_pressure_setpoint_c = 32.0
    unit.full_clean()


def test_it_stores_a_dual_voltage_rating_and_refuses_one_upside_down():
    """208-230 V is stored as its two ends; an upper end at or below the lower is refused."""
    unit = UnitFactory(nameplate_volts=208, nameplate_volts_max=230)
    unit.full_clean()
    assert (unit.nameplate_volts, unit.nameplate_volts_max) == (208, 230)
    upside_down = UnitFactory.build(
        site=SiteFactory(), nameplate_volts=230, nameplate_volts_max=208
    )
    _refused(upside_down, "nameplate_volts_max")


def test_it_refuses_an_unknown_control_or_basis_in_the_database():
    """Only the listed kinds and bases can be stored, whatever writes the row."""
    unit = UnitFactory()
    for field, value in (("head_pressure_control", "magic"), ("design_temperature_basis", "wet")):
        with pytest.raises(IntegrityError), transaction.atomic():
            models.Unit.objects.filter(pk=unit.pk).update(**{field: value})


def test_a_run_capacitor_as_printed_resolves_to_its_band():
    """docs/references.md §4 worked example (EIA-456-A / IEC 60252-1 marking): 45 uF +/- 6 % is
    42.30-47.70 uF; the band is stored in the range columns too. Tolerance 1e-9 uF."""
    part = ComponentFactory(
        rated_uf=45.0, tolerance_pct=6.0, rating_uf_min=None, rating_uf_max=None
    )
    part.full_clean()
    assert part.rating_band_uf() == pytest.approx((42.30, 47.70), abs=1e-9)
    part.refresh_from_db()
    assert (part.rating_uf_min, part.rating_uf_max) == pytest.approx((42.30, 47.70), abs=1e-9)


def test_a_run_capacitor_without_a_printed_tolerance_takes_the_typical_six_percent():
    """docs/references.md §4: run capacitors are typically +/- 6 %; 70 uF gives 65.8-74.2 uF.
    Tolerance 1e-9 uF."""
    part = ComponentFactory(rated_uf=70.0, rating_uf_min=None, rating_uf_max=None)
    part.full_clean()
    assert part.applied_tolerance_pct == 6.0
    assert part.rating_band_uf() == pytest.approx((65.8, 74.2), abs=1e-9)


def test_a_start_capacitor_keeps_its_printed_range():
    """IEC 60252-2 (docs/references.md §4): a start capacitor is marked with a range, e.g. 88-108
    uF, and that range is its band."""
    part = ComponentFactory(kind="start_capacitor", rating_uf_min=88.0, rating_uf_max=108.0)
    part.full_clean()
    assert part.rating_band_uf() == (88.0, 108.0)


def test_it_refuses_a_rating_and_a_range_of_its_own_at_once():
    """A part is given as printed: a rating with its tolerance, or a range, never both."""
    part = ComponentFactory.build(
        unit=UnitFactory(), rated_uf=45.0, tolerance_pct=6.0, rating_uf_min=40, rating_uf_max=50
    )
    with pytest.raises(ValidationError) as caught:
        part.full_clean()
    assert "rated_uf" in caught.value.message_dict
    with pytest.raises(IntegrityError), transaction.atomic():
        models.Component.objects.bulk_create([part])  # bypasses save(), as a raw write would


def test_it_accepts_a_rating_sent_with_its_own_band():
    """A client echoing back the band it read with the rating is not giving two ratings."""
    part = ComponentFactory.build(
        unit=UnitFactory(), rated_uf=45.0, tolerance_pct=6.0, rating_uf_min=42.3, rating_uf_max=47.7
    )
    part.full_clean()


def test_it_refuses_a_tolerance_without_a_rating():
    """A tolerance means nothing without the rating it is printed beside."""
    part = ComponentFactory.build(unit=UnitFactory(), tolerance_pct=6.0)
    _refused(part, "tolerance_pct")


def test_it_refuses_a_start_capacitor_rating_without_its_tolerance():
    """Start capacitors are marked with a range (IEC 60252-2); a bare value has no band."""
    part = ComponentFactory.build(
        unit=UnitFactory(),
        kind="start_capacitor",
        rated_uf=100.0,
        rating_uf_min=None,
        rating_uf_max=None,
    )
    with pytest.raises(ValidationError) as caught:
        part.full_clean()
    assert "tolerance_pct" in caught.value.message_dict
    assert part.rating_band_uf() is None
    with pytest.raises(IntegrityError), transaction.atomic():
        part.save()


def test_it_refuses_a_run_capacitor_range_of_one_value():
    """One value on a run capacitor is its printed rating, judged with a tolerance; a range
    of one value would judge it exactly, so it is refused with a pointer to rated_uf."""
    part = ComponentFactory.build(unit=UnitFactory(), rating_uf_min=35.0, rating_uf_max=35.0)
    with pytest.raises(ValidationError) as caught:
        part.full_clean()
    assert "rated_uf" in caught.value.message_dict["rating_uf_max"][0]


def test_changing_the_rating_moves_the_stored_band():
    """An edit of a printed rating re-derives the band, whether saved with all fields or
    with update_fields; the old band is not taken for a range given alongside."""
    part = ComponentFactory(
        rated_uf=45.0, tolerance_pct=6.0, rating_uf_min=None, rating_uf_max=None
    )
    edited = models.Component.objects.get(pk=part.pk)
    edited.rated_uf = 50.0
    edited.full_clean()
    edited.save(update_fields=["rated_uf"])
    edited.refresh_from_db()
    assert (edited.rating_uf_min, edited.rating_uf_max) == pytest.approx((47.0, 53.0), abs=1e-9)


def test_the_admin_edits_every_design_field_of_a_unit(client):
    """The unit form's sections hold every editable field (none silently dropped), the
    receiver is offered in words, and a printed rating can be entered beside a range."""
    unit_admin = admin.site._registry[models.Unit]
    shown = {name for _, section in unit_admin.fieldsets for name in section["fields"]}
    editable = {f.name for f in models.Unit._meta.fields if f.editable and not f.primary_key}
    assert shown == editable
    client.force_login(UserFactory(is_staff=True, is_superuser=True))
    page = client.get(f"/admin/fleet/unit/{UnitFactory().pk}/change/").content.decode()
    assert "Not known: the application default" in page
    assert 'name="head_pressure_setpoint_c"' in page
    assert 'name="components-__prefix__-rated_uf"' in page
