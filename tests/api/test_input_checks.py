"""Input checks on the API: fields the contract does not know, reading sets no working
system can produce, and refrigerant amounts far beyond the unit's charge. Each is a 400
naming the wire field and saying why; nothing refused is stored."""

from __future__ import annotations

import re
import uuid

import pytest

from diagnostics.core import saturation
from fleet.models import ReadingSet, RefrigerantEvent
from tests.factories import ReadingSetFactory, SiteFactory, UnitFactory, VisitFactory
from tests.factories import VisitUnitFactory as VisitUnitF

from .conftest import post_reading_set, token_client

pytestmark = pytest.mark.django_db

#: Exact by definition (NIST SP 811, Appendix B.8): 1 psi in kPa, 1 lb in kg.
KPA_PER_PSI = 6.894757293168361
KG_PER_LB = 0.45359237
#: Standard atmosphere at sea level, kPa (ISO 2533).
SEA_LEVEL_KPA = 101.325


# --- fields the contract does not know ----------------------------------------------------


def _unknown_cases(world) -> list[tuple[str, str, str, str]]:
    """(method, path, misspelt field, what a record of the path is called)."""
    visit = f"/api/v1/visits/{world.own_visit.pk}"
    return [
        ("post", "/api/v1/customers/", "contact_nmae", "customer"),
        ("post", "/api/v1/sites/", "elevation", "site"),
        ("patch", f"/api/v1/units/{world.own_unit.pk}/", "has_reciever", "unit"),
        ("post", "/api/v1/components/", "rated_ufs", "component"),
        ("patch", f"{visit}/", "reported_problme", "visit"),
        ("post", f"{visit}/reading-sets/", "suction_presure", "reading set"),
        ("patch", f"{visit}/reading-sets/{world.own_reading.pk}/", "head_presure", "reading set"),
        ("post", f"{visit}/refrigerant-events/", "ammount", "refrigerant event"),
        ("post", f"{visit}/submit/", "work_sumary", "submission"),
    ]


def test_every_writable_endpoint_names_a_field_it_does_not_know(world):
    """A misspelt field is a 400 naming it, with the nearest field it may have meant, on
    every writable endpoint; nothing is changed."""
    office = world.client("office")
    before = (ReadingSet.objects.count(), RefrigerantEvent.objects.count())
    for method, path, field, noun in _unknown_cases(world):
        response = getattr(office, method)(path, {field: 1}, format="json")
        assert response.status_code == 400, (path, response.json())
        message = response.json()[field][0]
        assert message.startswith(f"not a field of a {noun}; did you mean "), (path, message)
    assert (ReadingSet.objects.count(), RefrigerantEvent.objects.count()) == before
    world.own_reading.refresh_from_db()
    assert world.own_reading.head_kpa_gauge == 1700.0


def test_a_reading_set_whose_only_field_is_misspelt_is_refused(world):
    """Issue 13: a set carrying only a misspelt reading was stored empty. Now it is a 400
    naming the field and the one meant; nothing is stored."""
    response = world.client("technician").post(
        f"/api/v1/visits/{world.own_visit.pk}/reading-sets/",
        {
            "unit": world.own_unit.pk,
            "client_id": str(uuid.uuid4()),
            "units": {"pressure": "psig"},
            "suction_presure": 62.0,
        },
        format="json",
    )
    assert response.status_code == 400
    assert response.json() == {
        "suction_presure": ["not a field of a reading set; did you mean suction_pressure?"]
    }
    assert ReadingSet.objects.count() == 2  # the world's own and other sets only


def test_unknown_names_are_reported_with_the_other_errors(world):
    """A body with an unknown name and a bad known field gets both errors at once."""
    response = world.client("office").post(
        "/api/v1/customers/", {"name": "", "zzz": 1}, format="json"
    )
    assert response.status_code == 400
    body = response.json()
    assert body["zzz"] == ["not a field of a customer; the schema lists its fields"]
    assert "name" in body


def test_read_only_fields_sent_back_are_ignored(world):
    """A client may send back what it read (id, diagnosis, created_at): those names are
    known, so they are ignored as before, not refused."""
    response = world.client("technician").post(
        f"/api/v1/visits/{world.own_visit.pk}/reading-sets/",
        {
            "id": 999999,
            "unit": world.own_unit.pk,
            "client_id": str(uuid.uuid4()),
            "units": {"temperature": "F"},
            "box_temp": 36.0,
            "diagnosis": {"score": 100},
            "created_at": "2020-01-01T00:00:00Z",
        },
        format="json",
    )
    assert response.status_code == 201, response.json()
    assert response.json()["id"] != 999999
    assert response.json()["created_at"] != "2020-01-01T00:00:00Z"


# --- reading sets no working system can produce --------------------------------------------


@pytest.fixture
def visit_unit(cooler_visit_unit):
    return cooler_visit_unit


_post = post_reading_set


def test_suction_above_head_on_a_running_compressor_is_refused(technician, visit_unit):
    """Issue 13: suction 120 psig over head 100 psig with the compressor running was stored.
    A running compressor always lifts, so both fields are named, each with the other's
    reading in the request's unit; nothing is stored."""
    response = _post(
        token_client(technician),
        visit_unit,
        units={"pressure": "psig"},
        suction_pressure=120.0,
        head_pressure=100.0,
        compressor_running=True,
    )
    assert response.status_code == 400
    body = response.json()
    assert set(body) == {"suction_pressure", "head_pressure"}
    assert body["suction_pressure"][0].startswith("at or above the head pressure (100 psig)")
    assert body["head_pressure"][0].startswith("at or below the suction pressure (120 psig)")
    assert not ReadingSet.objects.filter(visit_unit=visit_unit).exists()


def test_it_words_the_limit_in_the_pressure_unit_of_the_request(technician, visit_unit):
    """The same slip sent in kPa (gauge) is answered in kPa: 700 over 600 kPa."""
    response = _post(
        token_client(technician),
        visit_unit,
        units={"pressure": "kPa"},
        suction_pressure=700.0,
        head_pressure=600.0,
        compressor_running=True,
    )
    assert response.status_code == 400
    assert "(600 kPa)" in response.json()["suction_pressure"][0]


def test_a_suction_pressure_below_the_saturation_range_is_refused(technician, visit_unit):
    """Issue 13: -10 psig on R-404A was stored and scored. The refrigerant's saturation
    range ends at -60 C (CoolProp tables, checked in the core's plausibility tests), about
    -7 psig here: below it there is no saturation temperature, so the reading is refused
    with the lowest pressure in psig (exact psi factor, NIST SP 811; shown to 0.1)."""
    response = _post(
        token_client(technician),
        visit_unit,
        units={"pressure": "psig"},
        suction_pressure=-10.0,
        compressor_running=True,
    )
    assert response.status_code == 400
    message = response.json()["suction_pressure"][0]
    assert message.startswith("below the saturation range of R-404A (lowest ")
    table = saturation.table("R-404A")
    lowest_kpa_abs = max(
        table.pressure_range_kpa_abs("dew")[0], table.pressure_range_kpa_abs("bubble")[0]
    )
    shown = float(re.search(r"lowest (-?[\d.]+) psig", message).group(1))
    assert shown == pytest.approx((lowest_kpa_abs - SEA_LEVEL_KPA) / KPA_PER_PSI, abs=0.05)
    assert -8.5 < shown < -6.5
    assert not ReadingSet.objects.exists()


def test_a_suction_line_colder_than_its_dew_point_is_refused_in_fahrenheit(technician, visit_unit):
    """R-404A at 62 psig boils at about 25 F (docs/references.md §1.3: 25 F is 62-63 psig at sea
    level); a suction line at 10 F on a running unit is 15 F below it, past instrument
    error. The dew point is stated in F, as the request was; within 0.6 F of 25 F."""
    response = _post(
        token_client(technician),
        visit_unit,
        units={"pressure": "psig", "temperature": "F"},
        suction_pressure=62.0,
        suction_line_temp=10.0,
        compressor_running=True,
    )
    assert response.status_code == 400
    message = response.json()["suction_line_temp"][0]
    dew_f = float(re.search(r"\((-?[\d.]+) F\)", message).group(1))
    assert dew_f == pytest.approx(25.0, abs=0.6)


def test_a_plausible_set_is_stored(technician, visit_unit):
    """Readings a healthy cooler gives (62 psig, 235 psig, lines at 35 F and 95 F) pass."""
    response = _post(
        token_client(technician),
        visit_unit,
        units={"pressure": "psig", "temperature": "F"},
        suction_pressure=62.0,
        suction_line_temp=35.0,
        head_pressure=235.0,
        liquid_line_temp=95.0,
        compressor_running=True,
    )
    assert response.status_code == 201, response.json()


def test_an_edit_that_makes_a_set_implausible_is_refused(office_user, visit_unit):
    """A PATCH is judged on the set it would leave. Off-cycle, suction and head equalise;
    saying afterwards that the compressor ran is refused, worded in the units the set was
    entered in (psig), and nothing changes. The same edit with a head that lifts passes."""
    stored = ReadingSetFactory(
        visit_unit=visit_unit,
        suction_kpa_gauge=100 * KPA_PER_PSI,
        head_kpa_gauge=99 * KPA_PER_PSI,
        suction_line_temp_c=None,
        liquid_line_temp_c=None,
        compressor_running=False,
        entered_units={"pressure": "psig", "temperature": "F"},
    )
    office = token_client(office_user)
    url = f"/api/v1/visits/{visit_unit.visit_id}/reading-sets/{stored.pk}/"
    response = office.patch(url, {"compressor_running": True}, format="json")
    assert response.status_code == 400
    assert response.json()["suction_pressure"][0].startswith(
        "at or above the head pressure (99 psig)"
    )
    stored.refresh_from_db()
    assert stored.compressor_running is False
    fixed = office.patch(
        url,
        {"compressor_running": True, "head_pressure": 1000.0, "units": {"pressure": "kPa"}},
        format="json",
    )
    assert fixed.status_code == 200, fixed.json()
    stored.refresh_from_db()
    assert (stored.compressor_running, stored.head_kpa_gauge) == (True, 1000.0)


# --- amounts far beyond the unit's charge ---------------------------------------------------


@pytest.fixture
def small_unit(technician):
    """A reach-in with a 15 lb full charge on an in-progress visit."""
    site = SiteFactory()
    visit = VisitFactory(site=site, status="in_progress", technicians=[technician])
    unit = UnitFactory(site=site, application="reach_in", full_charge_kg=15 * KG_PER_LB)
    return VisitUnitF(visit=visit, unit=unit)


def _event(client, visit_unit, amount: float, unit: str = "lb", **fields):
    return client.post(
        f"/api/v1/visits/{visit_unit.visit_id}/refrigerant-events/",
        {
            "unit": visit_unit.unit_id,
            "kind": "added",
            "amount": amount,
            "units": {"mass": unit},
            "cylinder": "CYL-0417",  # what a technician must give (synthetic values)
            "certification_number": "TEST-CERT-0001",
            **fields,
        },
        format="json",
    )


CONFIRM = (
    "over 1.25 times the unit's full charge (15 lb); if the amount is right, send it again "
    'with "confirm_amount": true'
)


def test_an_addition_far_beyond_the_full_charge_needs_confirming(technician, small_unit):
    """Issue 13: 5,000 lb added to a 15 lb unit was accepted. Now it is a 400 on amount
    saying the full charge in the request's unit and how to confirm; nothing is stored."""
    response = _event(token_client(technician), small_unit, 5000.0, client_id=str(uuid.uuid4()))
    assert response.status_code == 400
    assert response.json() == {"amount": [CONFIRM]}
    assert not RefrigerantEvent.objects.exists()


def test_a_confirmed_amount_is_stored_and_a_retry_returns_it(technician, small_unit):
    """With confirm_amount the same request is stored (the flag is not); a retry of its
    client_id, confirmed or not, returns the stored event and stores nothing new."""
    client = token_client(technician)
    client_id = str(uuid.uuid4())
    first = _event(client, small_unit, 5000.0, client_id=client_id, confirm_amount=True)
    assert first.status_code == 201, first.json()
    assert "confirm_amount" not in first.json()
    assert RefrigerantEvent.objects.get().amount_kg == pytest.approx(5000 * KG_PER_LB)
    for retry in ({"confirm_amount": True}, {}):
        again = _event(client, small_unit, 5000.0, client_id=client_id, **retry)
        assert again.status_code == 200
        assert again.json()["id"] == first.json()["id"]
    assert RefrigerantEvent.objects.count() == 1


def test_a_recharge_of_about_one_charge_needs_no_confirming(technician, small_unit):
    """18 lb into a 15 lb unit (1.2 times: a recharge after recovery, a nameplate charge
    that runs short) is stored as sent."""
    response = _event(token_client(technician), small_unit, 18.0)
    assert response.status_code == 201, response.json()


def test_a_recovery_far_beyond_the_charge_is_refused_in_the_requests_unit(technician, small_unit):
    """Recovering 100 kg from a 15 lb (6.8 kg) unit is refused, worded in kg."""
    response = _event(token_client(technician), small_unit, 100.0, "kg", kind="recovered")
    assert response.status_code == 400
    assert "(6.8 kg)" in response.json()["amount"][0]


def test_confirm_amount_belongs_to_refrigerant_events_only(technician, visit_unit):
    """confirm_amount is not a field of a reading set."""
    response = _post(token_client(technician), visit_unit, confirm_amount=True)
    assert response.status_code == 400
    assert "confirm_amount" in response.json()
