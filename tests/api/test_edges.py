"""The API's edges: bodies too deep or too large, ids beyond what a record can have, numbers
that are booleans, text with control characters or without end, a site left at its default
tariff, and a database that cannot be reached. Each answers a 4xx or 503 in JSON that
names the problem, never a 500."""

from __future__ import annotations

import socket
import uuid

import pytest
from django.core.exceptions import RequestDataTooBig
from django.db import OperationalError, connection
from django.test import override_settings
from rest_framework.test import APIClient

from fleet.api.exceptions import exception_handler
from fleet.api.parsers import MAX_JSON_DEPTH
from fleet.api.serializers_.fields import FREE_TEXT_MAX_LENGTH
from fleet.models import Customer, ReadingSet, Site

from .conftest import post_reading_set

pytestmark = pytest.mark.django_db

#: One more than the largest id a 64-bit column holds, and a 20-digit id.
PAST_MAX_ID = 2**63
TWENTY_DIGITS = 10**19 + 7


def test_json_nested_a_thousand_deep_is_a_400_even_anonymous(world):
    """1,000 nested arrays: 400 saying how deep a body may nest, to anyone (the token
    request takes anonymous callers), instead of a recursion error."""
    deep = "[" * 1000 + "]" * 1000
    for client, url in (
        (APIClient(), "/api/v1/auth/token/"),
        (world.client("office"), "/api/v1/auth/token/"),
        (world.client("office"), "/api/v1/customers/"),
        (world.client("technician"), f"/api/v1/visits/{world.own_visit.pk}/reading-sets/"),
    ):
        response = client.post(url, deep, content_type="application/json")
        assert response.status_code == 400, (url, response.content[:200])
        assert f"deeper than {MAX_JSON_DEPTH} levels" in response.json()["detail"]


def test_json_just_past_the_depth_limit_is_refused_and_at_it_parsed(world):
    """The limit is exact: an object nested MAX_JSON_DEPTH deep reaches the serializer (which
    refuses the field by name), one level more is refused as a body."""
    client = world.client("office")

    def nested(depth: int) -> dict:
        body: dict | list = []
        for _ in range(depth - 2):
            body = [body]
        return {"name": "Deep", "notes": body}

    at_limit = client.post("/api/v1/customers/", nested(MAX_JSON_DEPTH), format="json")
    assert at_limit.status_code == 400
    assert "notes" in at_limit.json()
    past = client.post("/api/v1/customers/", nested(MAX_JSON_DEPTH + 1), format="json")
    assert past.status_code == 400
    assert "deeper than" in past.json()["detail"]


@pytest.mark.parametrize("text", ['{"name": NaN}', '{"name": "\\ud800"}', "{"])
def test_what_is_not_json_is_a_400(world, text):
    response = world.client("office").post(
        "/api/v1/customers/", text, content_type="application/json"
    )
    assert response.status_code == 400
    assert response.json()["detail"].startswith("JSON parse error")


@override_settings(DATA_UPLOAD_MAX_MEMORY_SIZE=1000)
def test_an_oversized_body_is_a_small_413_in_json(world):
    """Anonymous or signed in, JSON or a form: a body over DATA_UPLOAD_MAX_MEMORY_SIZE is a
    413 with a short JSON reason, not a page."""
    big = '{"username": "' + "x" * 2000 + '", "password": "y"}'
    anonymous = APIClient().post("/api/v1/auth/token/", big, content_type="application/json")
    assert anonymous.status_code == 413
    assert "larger than 1000 bytes" in anonymous.json()["detail"]
    assert len(anonymous.content) < 200
    # A signed-in browser's form, too large as well: not a type the API reads, in JSON.
    browser = APIClient(enforce_csrf_checks=True)
    browser.force_login(world.office)
    browser.cookies["csrftoken"] = "k" * 32
    form = browser.post(
        "/api/v1/customers/",
        "name=" + "x" * 2000,
        content_type="application/x-www-form-urlencoded",
    )
    assert form.status_code == 415
    assert form["Content-Type"] == "application/json"


def test_a_body_django_found_too_large_is_a_413():
    """Django's own refusal (RequestDataTooBig, raised where something reads ``request.body``
    before the parser) is the same 413 JSON, not Django's 400 page."""
    response = exception_handler(RequestDataTooBig("too big"), {})
    assert response is not None
    assert response.status_code == 413
    assert "larger than" in response.data["detail"]


@pytest.mark.parametrize("number", [PAST_MAX_ID, TWENTY_DIGITS, 10**400])
@pytest.mark.parametrize(
    "path",
    [
        "sites/{}/",
        "sites/{}/reports/",
        "sites/{}/reports/2026-01.pdf",
        "units/{}/",
        "units/{}/diagnosis/",
        "units/{}/trends/",
        "units/{}/flags/",
        "customers/{}/",
        "components/{}/",
        "visits/{}/",
        "visits/{}/history/",
        "visits/{}/reading-sets/",
        "visits/{}/refrigerant-events/",
    ],
)
def test_a_url_id_beyond_any_record_is_a_json_404(world, path, number):
    response = world.client("office").get("/api/v1/" + path.format(number))
    assert response.status_code == 404
    assert "detail" in response.json()


@pytest.mark.parametrize("number", [PAST_MAX_ID, TWENTY_DIGITS])
def test_a_record_id_of_a_visit_beyond_any_record_is_a_404(world, number):
    visit = world.own_visit.pk
    for kind in ("reading-sets", "refrigerant-events"):
        response = world.client("office").get(f"/api/v1/visits/{visit}/{kind}/{number}/")
        assert response.status_code == 404


@pytest.mark.parametrize(
    "query",
    [
        "units/?site={}",
        "units/?customer={}",
        "sites/?customer={}",
        "components/?unit={}",
        "visits/?site={}",
        "visits/?unit={}",
    ],
)
def test_a_filter_id_beyond_any_record_is_a_400_naming_it(world, query):
    response = world.client("office").get("/api/v1/" + query.format(TWENTY_DIGITS))
    assert response.status_code == 400
    name = query.split("?")[1].split("=")[0]
    assert list(response.json()) == [name]


def test_ids_beyond_any_record_in_a_body_are_a_400_naming_the_field(world):
    client = world.client("office")
    customer = world.own_site.customer_id
    for number in (PAST_MAX_ID, TWENTY_DIGITS, 10**30):
        site = client.post(
            "/api/v1/sites/",
            {"customer": number, "name": "Far", "time_zone": "UTC", "managers": [number]},
            format="json",
        )
        assert site.status_code == 400
        assert {"customer", "managers"} <= set(site.json())
        visit = client.post(
            "/api/v1/visits/",
            {"site": world.own_site.pk, "technicians": [number], "units": [number]},
            format="json",
        )
        assert visit.status_code == 400
        assert {"technicians", "units"} <= set(visit.json())
    reading = post_reading_set(
        client, world.own_reading.visit_unit, unit=TWENTY_DIGITS, box_temp=35.0
    )
    assert reading.status_code == 400
    assert "unit" in reading.json()
    assert Site.objects.filter(customer_id=customer).count() == 1


def test_a_fraction_is_not_a_record_id(world):
    """``1.5`` was read as record 1; an id is a whole number (``2.0`` is record 2)."""
    client = world.client("office")
    customer = world.own_site.customer_id
    body = {"name": "Half", "time_zone": "UTC"}
    half = client.post("/api/v1/sites/", {**body, "customer": customer + 0.5}, format="json")
    assert half.status_code == 400
    assert half.json() == {
        "customer": [f"must be a record id, a whole number; got {customer + 0.5}"]
    }
    visit = client.post(
        "/api/v1/visits/",
        {"site": world.own_site.pk, "units": [world.own_unit.pk + 0.25]},
        format="json",
    )
    assert visit.status_code == 400
    assert "units" in visit.json()
    whole = client.post("/api/v1/sites/", {**body, "customer": float(customer)}, format="json")
    assert whole.status_code == 201, whole.json()
    assert whole.json()["customer"] == customer


@pytest.mark.parametrize("flag", [True, False])
def test_a_boolean_is_not_a_temperature(world, flag):
    """``true`` would be stored as 1.0 degree: refused, naming the field."""
    response = post_reading_set(
        world.client("office"),
        world.own_reading.visit_unit,
        units={"temperature": "F"},
        box_temp=flag,
        compressor_amps=[8.0, flag],
    )
    assert response.status_code == 400
    errors = response.json()
    assert errors["box_temp"] == ["must be a number, not true or false"]
    assert "compressor_amps" in errors
    assert ReadingSet.objects.count() == 2  # the world's two


def test_a_boolean_is_not_a_design_value_or_an_elevation(world):
    client = world.client("office")
    site = client.patch(f"/api/v1/sites/{world.own_site.pk}/", {"elevation_m": True}, format="json")
    assert site.status_code == 400
    assert site.json() == {"elevation_m": ["must be a number, not true or false"]}
    unit = client.patch(
        f"/api/v1/units/{world.own_unit.pk}/",
        {"units": {"mass": "lb"}, "full_charge": True},
        format="json",
    )
    assert unit.status_code == 400
    assert "full_charge" in unit.json()


@pytest.mark.parametrize("char", ["\x00", "\x07", "\x1b", "\x7f", "\x85"])
def test_control_characters_are_refused_naming_the_field(world, char):
    client = world.client("office")
    customer = client.post(
        "/api/v1/customers/", {"name": f"Cold{char}Co", "notes": f"gate{char}code"}, format="json"
    )
    assert customer.status_code == 400
    assert set(customer.json()) == {"name", "notes"}
    assert f"U+{ord(char):04X}" in customer.json()["name"][0]
    reading = post_reading_set(client, world.own_reading.visit_unit, notes=f"oil{char}stain")
    assert reading.status_code == 400
    assert list(reading.json()) == ["notes"]
    assert not Customer.objects.filter(name__startswith="Cold").exists()


def test_tabs_and_line_breaks_stay_in_notes_but_not_in_a_name(world):
    client = world.client("office")
    notes = "line one\n\tline two\r\nend"
    stored = client.post("/api/v1/customers/", {"name": "Tabbed", "notes": notes}, format="json")
    assert stored.status_code == 201, stored.json()
    assert stored.json()["notes"] == notes
    named = client.post("/api/v1/customers/", {"name": "Two\nLines"}, format="json")
    assert named.status_code == 400
    assert "one line" in named.json()["name"][0]


def test_free_text_is_capped(world):
    """1 MB of notes is refused, naming the field and the cap; the cap itself is accepted."""
    client = world.client("office")
    visit_unit = world.own_reading.visit_unit
    huge = post_reading_set(client, visit_unit, notes="y" * 1_000_000)
    assert huge.status_code == 400
    assert str(FREE_TEXT_MAX_LENGTH) in huge.json()["notes"][0]
    longest = post_reading_set(client, visit_unit, notes="y" * FREE_TEXT_MAX_LENGTH)
    assert longest.status_code == 201, longest.json()
    for path, body in (
        ("customers/", {"name": "Long", "notes": "z" * 5000}),
        (f"visits/{world.own_visit.pk}/submit/", {"work_summary": "z" * 5000}),
    ):
        response = client.post("/api/v1/" + path, body, format="json")
        assert response.status_code == 400, path
        assert set(response.json()) <= {"notes", "work_summary"}


def test_a_site_without_a_tariff_takes_the_default(world):
    """Left out, the tariff is 0.15 per kWh in USD (as the model and the office form say);
    stated, it is kept; more than four decimals is a 400 on the field."""
    client = world.client("office")
    body = {"customer": world.own_site.customer_id, "name": "No tariff", "time_zone": "UTC"}
    response = client.post("/api/v1/sites/", body, format="json")
    assert response.status_code == 201, response.json()
    assert (response.json()["tariff_per_kwh"], response.json()["currency"]) == ("0.1500", "USD")
    stated = client.post(
        "/api/v1/sites/", {**body, "name": "Tariff", "tariff_per_kwh": "0.2345"}, format="json"
    )
    assert stated.json()["tariff_per_kwh"] == "0.2345"
    bad = client.post(
        "/api/v1/sites/", {**body, "name": "Bad", "tariff_per_kwh": "0.12345"}, format="json"
    )
    assert bad.status_code == 400
    assert list(bad.json()) == ["tariff_per_kwh"]


def _refuse(execute, sql, params, many, context):
    raise OperationalError("could not connect to server: Connection refused")


def test_a_database_outage_is_a_503_with_retry_after(world):
    """Every query failing as when the server is gone: reads and writes, signed in by token
    or not, are answered 503 JSON with Retry-After."""
    office = world.client("office")
    visit_unit = world.own_reading.visit_unit
    with connection.execute_wrapper(_refuse):
        answers = [
            office.get("/api/v1/sites/"),
            office.post("/api/v1/customers/", {"name": "Outage"}, format="json"),
            post_reading_set(office, visit_unit, box_temp=35.0, units={"temperature": "F"}),
            APIClient().post(
                "/api/v1/auth/token/", {"username": "a", "password": "b"}, format="json"
            ),
        ]
    for response in answers:
        assert response.status_code == 503, response.content[:200]
        assert response["Retry-After"] == "30"
        assert "database" in response.json()["detail"]


def test_a_failing_write_after_the_checks_is_a_503(world):
    """The database goes away between the checks and the insert: 503, and the phone's retry
    under the same client_id later stores the set once."""
    office = world.client("office")
    visit_unit = world.own_reading.visit_unit
    body = {"unit": visit_unit.unit_id, "client_id": str(uuid.uuid4())}

    def refuse_inserts(execute, sql, params, many, context):
        if sql.lstrip().upper().startswith("INSERT"):
            raise OperationalError("server closed the connection unexpectedly")
        return execute(sql, params, many, context)

    url = f"/api/v1/visits/{visit_unit.visit_id}/reading-sets/"
    with connection.execute_wrapper(refuse_inserts):
        failed = office.post(url, body, format="json")
    assert failed.status_code == 503
    assert office.post(url, body, format="json").status_code == 201
    assert office.post(url, body, format="json").status_code == 200


def _closed_port() -> int:
    with socket.socket() as sock:
        sock.bind(("127.0.0.1", 0))
        return int(sock.getsockname()[1])


# serialized_rollback: the flush after this test then leaves the content types to the next
# serialized test (tests/api/test_concurrent_retries.py) instead of recreating them.
@pytest.mark.django_db(transaction=True, serialized_rollback=True)
@pytest.mark.skipif(
    connection.vendor != "postgresql",
    reason="a real refused connection needs a server to point away from; the SQLite runs "
    "refuse every query instead (above)",
)
def test_a_server_that_refuses_connections_is_a_503(world):
    """The connection pointed at a closed port, as when PostgreSQL is down."""
    office = world.client("office")
    settings_dict = connection.settings_dict
    saved = (settings_dict["HOST"], settings_dict["PORT"])
    connection.close()
    settings_dict["HOST"], settings_dict["PORT"] = "127.0.0.1", str(_closed_port())
    try:
        write = office.post("/api/v1/customers/", {"name": "Down"}, format="json")
        read = APIClient().post(
            "/api/v1/auth/token/", {"username": "a", "password": "b"}, format="json"
        )
    finally:
        connection.close()
        settings_dict["HOST"], settings_dict["PORT"] = saved
    for response in (write, read):
        assert response.status_code == 503
        assert response["Retry-After"] == "30"
        assert "database" in response.json()["detail"]
    assert not Customer.objects.filter(name="Down").exists()
