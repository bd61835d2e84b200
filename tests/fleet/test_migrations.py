"""The design-data and capacitor migrations keep every existing row meaning what it meant."""

from __future__ import annotations

import datetime as dt

import pytest
from django.db import connection
from django.db.migrations.executor import MigrationExecutor

pytestmark = pytest.mark.django_db(transaction=True, serialized_rollback=True)

BEFORE = [("fleet", "0004_reading_call_for_cooling")]
AFTER = [("fleet", "0006_capacitor_as_printed")]


def _migrate(targets: list[tuple[str, str]]):
    executor = MigrationExecutor(connection)
    executor.loader.build_graph()
    executor.migrate(targets)
    return executor.loader.project_state(targets).apps


@pytest.fixture
def old_apps():
    """The fleet schema before design data and printed ratings; the latest one afterwards."""
    yield _migrate(BEFORE)
    _migrate(MigrationExecutor(connection).loader.graph.leaf_nodes())


def _unit(apps, tag: str, **design):
    Customer, Site, Unit, Refrigerant = (
        apps.get_model("fleet", name) for name in ("Customer", "Site", "Unit", "Refrigerant")
    )
    site, _ = Site.objects.get_or_create(
        name="Old site", customer=Customer.objects.get_or_create(name="Old customer")[0]
    )
    return Unit.objects.create(
        site=site,
        tag=tag,
        application="medium_temp",
        refrigerant=Refrigerant.objects.get(designation="R-407A"),
        full_charge_kg=9.0,
        metering_device="txv",
        design_box_temp_c=2.0,
        nameplate_volts=230,
        phase=1,
        rla_a=10.0,
        lra_a=60.0,
        **design,
    )


def test_existing_units_keep_the_mid_point_and_their_receiver_flags(old_apps):
    """Design TD and split were read on the mid-point until now, so every existing unit is
    marked mid-point; receiver flags stay True or False; a unit made afterwards reads on the
    dew point and leaves the receiver to its application."""
    with_receiver = _unit(old_apps, "OLD-1", has_receiver=True)
    without = _unit(old_apps, "OLD-2", has_receiver=False)
    apps = _migrate(AFTER)
    Unit = apps.get_model("fleet", "Unit")
    assert Unit.objects.get(pk=with_receiver.pk).design_temperature_basis == "mid_point"
    assert Unit.objects.get(pk=with_receiver.pk).has_receiver is True
    assert Unit.objects.get(pk=without.pk).has_receiver is False
    assert Unit.objects.get(pk=without.pk).head_pressure_control == ""
    new = _unit(apps, "NEW-1")
    new.refresh_from_db()
    assert (new.design_temperature_basis, new.has_receiver) == ("dew", None)


def test_single_value_run_capacitors_become_printed_ratings(old_apps):
    """A run capacitor stored as one value (no upper end, or both ends equal) was judged as
    that value +/- 6 % by the diagnosis; it becomes that printed rating with its band
    (docs/references.md §4: 45 uF +/- 6 % is 42.30-47.70 uF; tolerance 1e-9 uF). A real range and a
    start capacitor's range are left alone."""
    Component = old_apps.get_model("fleet", "Component")
    unit = _unit(old_apps, "OLD-3", has_receiver=True)
    fitted = dt.date(2024, 1, 1)
    single = Component.objects.create(
        unit=unit, kind="run_capacitor", rating_uf_min=45.0, installed_on=fitted
    )
    equal = Component.objects.create(
        unit=unit, kind="run_capacitor", rating_uf_min=45.0, rating_uf_max=45.0
    )
    ranged = Component.objects.create(
        unit=unit, kind="run_capacitor", rating_uf_min=42.3, rating_uf_max=47.7
    )
    start = Component.objects.create(
        unit=unit, kind="start_capacitor", rating_uf_min=88.0, rating_uf_max=108.0
    )
    apps = _migrate(AFTER)
    Component = apps.get_model("fleet", "Component")
    for part in (single, equal):
        after = Component.objects.get(pk=part.pk)
        assert (after.rated_uf, after.tolerance_pct) == (45.0, None)
        assert (after.rating_uf_min, after.rating_uf_max) == pytest.approx((42.30, 47.70), abs=1e-9)
    assert Component.objects.get(pk=single.pk).installed_on == fitted
    for part in (ranged, start):
        after = Component.objects.get(pk=part.pk)
        assert after.rated_uf is None
        assert (after.rating_uf_min, after.rating_uf_max) == (
            part.rating_uf_min,
            part.rating_uf_max,
        )
