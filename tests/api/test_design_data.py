"""Design data a technician knows and capacitors as printed, through the API: stored in
SI, answered in the units asked for, refused with the wire field named, and handed to the
core as the diagnosis reads them."""

from __future__ import annotations

import pytest

from diagnostics import services
from diagnostics.core import electrical
from diagnostics.core.diagnose import diagnose
from diagnostics.core.types import Reading
from fleet.models import Component, Unit
from tests.factories import SiteFactory, UnitFactory

from .conftest import token_client

pytestmark = pytest.mark.django_db


def _unit_body(site, **fields) -> dict:
    """A synthetic R-404A walk-in cooler in US units, its design data left to defaults."""
    return {
        "site": site.pk,
        "tag": "WIC-7",
        "application": "medium_temp",
        "refrigerant": "R-404A",
        "full_charge": 22.0,
        "metering_device": "txv",
        "design_box_temp": 35.0,
        "nameplate_volts": 230,
        "phase": 1,
        "rla_a": 12.0,
        "lra_a": 61.0,
        "units": {"temperature": "F", "pressure": "psig", "mass": "lb"},
        **fields,
    }


def _create(office_user, **fields):
    return token_client(office_user).post(
        "/api/v1/units/", _unit_body(SiteFactory(), **fields), format="json"
    )


def test_a_dual_voltage_rating_is_stored_and_widens_the_band(office_user):
    """Issue 13: a 208-230 V rating could not be stored. Now it is, and the core gets both
    ends: NEMA MG-1 12.44 (docs/references.md §4) allows +/- 10 % across a dual rating, 187-253 V
    (187.2 exactly), so a healthy unit at 200 V is inside; on a single 230 V rating
    (207-253 V) it is not. Tolerance 1e-9 V."""
    response = _create(office_user, nameplate_volts=208, nameplate_volts_max=230)
    assert response.status_code == 201, response.json()
    assert (response.json()["nameplate_volts"], response.json()["nameplate_volts_max"]) == (
        208,
        230,
    )
    design = services.unit_design(Unit.objects.get(pk=response.json()["id"]))
    assert (design.nameplate_volts, design.nameplate_volts_max) == (208, 230)
    low, high = electrical.voltage_tolerance_band(
        design.nameplate_volts, design.nameplate_volts_max
    )
    assert (low, high) == pytest.approx((187.2, 253.0), abs=1e-9)
    assert low <= 200 <= high
    single = electrical.voltage_tolerance_band(230, None)
    assert single == pytest.approx((207.0, 253.0), abs=1e-9)
    assert not single[0] <= 200 <= single[1]


def test_it_refuses_a_dual_rating_upside_down(office_user):
    """The upper end of a dual rating must be above the lower one."""
    response = _create(office_user, nameplate_volts=230, nameplate_volts_max=208)
    assert response.status_code == 400
    assert list(response.json()) == ["nameplate_volts_max"]
    assert "208-230 V" in response.json()["nameplate_volts_max"][0]


@pytest.mark.parametrize("application", ["reach_in", "ice_machine"])
def test_the_receiver_is_left_to_the_application_unless_given(office_user, application):
    """Issue 13: every unit was taken to have a receiver. Now a unit posted without the flag
    stores none (null on the wire), and the core takes the application's default: a
    self-contained reach-in or ice machine is receiverless, so its subcooling target is the
    receiverless 6-10 F (Tomczyk, ACHR News, docs/references.md §6; tolerance 1e-3 K), widened
    without a gauge reading by the thermometer's 1 K (from memory), rather than a receiver's
    0-5 F (common practice)."""
    response = _create(office_user, application=application)
    assert response.status_code == 201, response.json()
    assert response.json()["has_receiver"] is None
    design = services.unit_design(Unit.objects.get(pk=response.json()["id"]))
    assert design.has_receiver is None
    found = {t.name: t for t in diagnose(design, Reading()).targets}
    assert (found["subcooling"].low, found["subcooling"].high) == pytest.approx(
        (6 / 1.8 - 1.0, 10 / 1.8 + 1.0), abs=1e-3
    )


def test_a_given_receiver_flag_is_kept(office_user):
    """True and false are stored as sent; null goes back to the application default."""
    office = token_client(office_user)
    response = _create(office_user, application="reach_in", has_receiver=True)
    unit_id = response.json()["id"]
    assert Unit.objects.get(pk=unit_id).has_receiver is True
    reset = office.patch(f"/api/v1/units/{unit_id}/", {"has_receiver": None}, format="json")
    assert reset.status_code == 200, reset.json()
    assert Unit.objects.get(pk=unit_id).has_receiver is None


def test_head_pressure_control_and_set_point_travel_in_the_clients_units(office_user):
    """Fan cycling holding 90 F condensing is stored as 32.222 C (exact conversion, NIST
    SP 811; tolerance 1e-3), answered as 90 F or 32.222 C, and handed to the core."""
    response = _create(
        office_user, head_pressure_control="fan_cycling", head_pressure_setpoint=90.0
    )
    assert response.status_code == 201, response.json()
    unit = Unit.objects.get(pk=response.json()["id"])
    assert unit.head_pressure_setpoint_c == pytest.approx((90 - 32) / 1.8, abs=1e-3)
    assert response.json()["head_pressure_setpoint"] == pytest.approx(90.0, abs=1e-3)
    si = token_client(office_user).get(f"/api/v1/units/{unit.pk}/?units=si").json()
    assert si["head_pressure_setpoint"] == pytest.approx(32.222, abs=1e-3)
    assert si["head_pressure_control"] == "fan_cycling"
    design = services.unit_design(unit)
    assert design.head_pressure_control == "fan_cycling"
    assert design.head_pressure_setpoint_c == pytest.approx(32.222, abs=1e-3)


def test_an_unknown_control_is_null_on_the_wire_and_none_to_the_core(office_user):
    """Not known is stored blank, written null, and the core gets None (its default)."""
    response = _create(office_user)
    assert response.json()["head_pressure_control"] is None
    assert response.json()["head_pressure_setpoint"] is None
    unit = Unit.objects.get(pk=response.json()["id"])
    assert unit.head_pressure_control == ""
    assert services.unit_design(unit).head_pressure_control is None
    blank = _create(office_user, tag="WIC-8", head_pressure_control="")
    assert blank.status_code == 201
    assert blank.json()["head_pressure_control"] is None


def test_it_refuses_a_set_point_without_control_and_one_out_of_range(office_user):
    """A set point on a unit with no head-pressure control, or one no control holds
    (above 60 C = 140 F), is a 400 on head_pressure_setpoint."""
    none = _create(office_user, head_pressure_control="none", head_pressure_setpoint=90.0)
    assert none.status_code == 400
    assert list(none.json()) == ["head_pressure_setpoint"]
    hot = _create(office_user, head_pressure_control="flooding", head_pressure_setpoint=150.0)
    assert hot.status_code == 400
    assert hot.json() == {"head_pressure_setpoint": ["above the highest reading possible (140 F)"]}


def test_the_temperature_basis_defaults_to_dew_and_reaches_the_core(office_user):
    """A new unit's TD and split are read on the dew point unless it says mid-point."""
    dew = _create(office_user)
    assert dew.json()["design_temperature_basis"] == "dew"
    mid = _create(office_user, tag="WIC-9", design_temperature_basis="mid_point")
    unit = Unit.objects.get(pk=mid.json()["id"])
    assert services.unit_design(unit).temperature_basis == "mid_point"


# --- capacitors as printed ------------------------------------------------------------------


def _part(office_user, unit, **fields):
    return token_client(office_user).post(
        "/api/v1/components/", {"unit": unit.pk, "kind": "run_capacitor", **fields}, format="json"
    )


def test_a_run_capacitor_as_printed_on_the_can(office_user):
    """Issue 13: a run capacitor could only be a range. 45 uF +/- 6 % is now stored as
    printed and resolved to its band, 42.30-47.70 uF (docs/references.md §4 worked example;
    EIA-456-A, IEC 60252-1), which the core gets back as 45 uF +/- 6 %. Tolerance 1e-9."""
    unit = UnitFactory()
    response = _part(office_user, unit, rated_uf=45.0, tolerance_pct=6.0)
    assert response.status_code == 201, response.json()
    body = response.json()
    assert (body["rated_uf"], body["tolerance_pct"]) == (45.0, 6.0)
    assert (body["rating_uf_min"], body["rating_uf_max"]) == pytest.approx((42.30, 47.70), abs=1e-9)
    design = services.unit_design(unit)
    assert design.run_capacitor_uf == pytest.approx(45.0, abs=1e-9)
    assert design.run_capacitor_tolerance_pct == pytest.approx(6.0, abs=1e-9)


def test_a_run_capacitor_without_a_printed_tolerance_takes_six_percent(office_user):
    """docs/references.md §4: run capacitors are typically +/- 6 %; 70 uF gives 65.8-74.2 uF."""
    response = _part(office_user, UnitFactory(), rated_uf=70.0)
    assert response.status_code == 201, response.json()
    assert response.json()["tolerance_pct"] is None
    assert (response.json()["rating_uf_min"], response.json()["rating_uf_max"]) == pytest.approx(
        (65.8, 74.2), abs=1e-9
    )


@pytest.mark.parametrize(
    ("fields", "field"),
    [
        ({"rated_uf": 45.0, "rating_uf_min": 40.0, "rating_uf_max": 50.0}, "rated_uf"),
        ({"tolerance_pct": 6.0, "rating_uf_min": 40.0, "rating_uf_max": 50.0}, "tolerance_pct"),
        ({"kind": "start_capacitor", "rated_uf": 100.0}, "tolerance_pct"),
        ({"rating_uf_min": 35.0}, "rating_uf_max"),
        ({"rated_uf": 45.0, "tolerance_pct": 60.0}, "tolerance_pct"),
    ],
)
def test_it_refuses_a_rating_that_is_not_as_printed(office_user, fields, field):
    """A rating and a range at once, a tolerance with no rating, a start capacitor's bare
    value, a run capacitor's single value given as a range, or an impossible tolerance: a
    400 naming the field; nothing is stored."""
    response = _part(office_user, UnitFactory(), **fields)
    assert response.status_code == 400
    assert field in response.json(), response.json()
    assert not Component.objects.exists()


def test_editing_a_printed_rating_moves_its_band_and_a_part_can_change_its_marking(
    office_user,
):
    """A new rating re-derives the band; a range with the rating and tolerance sent as null
    turns the part into a range-marked one."""
    office = token_client(office_user)
    part = _part(office_user, UnitFactory(), rated_uf=45.0, tolerance_pct=6.0).json()
    url = f"/api/v1/components/{part['id']}/"
    moved = office.patch(url, {"rated_uf": 50.0}, format="json")
    assert moved.status_code == 200, moved.json()
    assert (moved.json()["rating_uf_min"], moved.json()["rating_uf_max"]) == pytest.approx(
        (47.0, 53.0), abs=1e-9
    )
    both = office.patch(url, {"rating_uf_min": 40.0, "rating_uf_max": 60.0}, format="json")
    assert both.status_code == 400
    assert "rated_uf" in both.json()
    ranged = office.patch(
        url,
        {"rated_uf": None, "tolerance_pct": None, "rating_uf_min": 40.0, "rating_uf_max": 60.0},
        format="json",
    )
    assert ranged.status_code == 200, ranged.json()
    assert Component.objects.get(pk=part["id"]).rating_band_uf() == (40.0, 60.0)
