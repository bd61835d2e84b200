"""Sign-in protection: wrong passwords lock a username out at its client address on the
sign-in page, the admin's sign-in and the token endpoint alike, and the address is taken
from X-Forwarded-For only through the proxies configured as trusted."""

from __future__ import annotations

from collections.abc import Callable

import pytest
from axes.models import AccessAttempt
from django.conf import settings as django_settings
from django.core.management import call_command
from django.http import HttpRequest
from django.test import Client
from rest_framework.test import APIClient

from fleet.api.throttles import AuthRateThrottle, client_address

pytestmark = pytest.mark.django_db

PASSWORD = "test-pass-123"  # tests.factories.UserFactory's synthetic password
WRONG_TRIES = 50

#: One sign-in attempt: (username, password, extra request headers) -> status code.
Attempt = Callable[[str, str, dict[str, str]], int]


def _page(path: str) -> Attempt:
    def attempt(username: str, password: str, extra: dict[str, str]) -> int:
        response = Client().post(path, {"username": username, "password": password}, **extra)
        return response.status_code

    return attempt


def _token(username: str, password: str, extra: dict[str, str]) -> int:
    response = APIClient().post(
        "/api/v1/auth/token/", {"username": username, "password": password}, format="json", **extra
    )
    return response.status_code


#: endpoint -> (attempt, the status of a right password, of a wrong one)
ENDPOINTS: dict[str, tuple[Attempt, int, int]] = {
    "sign-in page": (_page("/accounts/login/"), 302, 200),
    "admin sign-in": (_page("/admin/login/"), 302, 200),
    "token endpoint": (_token, 200, 400),
}


@pytest.fixture
def staff_technician(technician):
    """Staff too, so the admin's sign-in accepts the right password."""
    technician.is_staff = True
    technician.save()
    return technician


@pytest.fixture
def unthrottled(monkeypatch):
    """The token endpoint's per-address rate out of the way, so what refuses is the lockout
    (the rate has its own tests)."""
    monkeypatch.setattr(AuthRateThrottle, "get_rate", lambda self: "100000/minute")


def _proxies(settings, count: int) -> None:
    settings.REST_FRAMEWORK = {**django_settings.REST_FRAMEWORK, "NUM_PROXIES": count}


@pytest.mark.parametrize("endpoint", ENDPOINTS)
def test_fifty_wrong_passwords_then_the_right_one_is_refused(
    endpoint, staff_technician, unthrottled
):
    attempt, right, wrong = ENDPOINTS[endpoint]
    assert attempt("tech1", PASSWORD, {}) == right  # the password works before
    codes = [attempt("tech1", f"guess-{n}", {}) for n in range(WRONG_TRIES)]
    limit = django_settings.AXES_FAILURE_LIMIT
    assert codes[: limit - 1] == [wrong] * (limit - 1)
    assert set(codes[limit:]) == {429}
    assert attempt("tech1", PASSWORD, {}) == 429


def test_the_page_says_why_and_who_can_unlock(technician):
    sign_in = _page("/accounts/login/")
    for n in range(django_settings.AXES_FAILURE_LIMIT):
        sign_in("tech1", f"guess-{n}", {})
    response = Client().post("/accounts/login/", {"username": "tech1", "password": PASSWORD})
    assert response.status_code == 429
    assert "Signing in is paused" in response.content.decode()
    assert "ask the office to unlock it" in response.content.decode()


def test_the_token_endpoint_names_the_lockout(technician, unthrottled):
    for n in range(django_settings.AXES_FAILURE_LIMIT):
        _token("tech1", f"guess-{n}", {})
    response = APIClient().post(
        "/api/v1/auth/token/", {"username": "tech1", "password": PASSWORD}, format="json"
    )
    assert response.status_code == 429
    assert "too many failed sign-ins" in response.json()["detail"]


def test_the_office_unlocks_a_username(technician, unthrottled):
    """`manage.py axes_reset_username` (or deleting the access attempts in the admin)."""
    for n in range(django_settings.AXES_FAILURE_LIMIT):
        _token("tech1", f"guess-{n}", {})
    assert _token("tech1", PASSWORD, {}) == 429
    call_command("axes_reset_username", "tech1")
    assert _token("tech1", PASSWORD, {}) == 200


def test_a_lockout_is_per_username_and_address(technician, other_technician, unthrottled):
    """Someone guessing tech1's password does not lock tech1 out of every other address,
    nor tech2 out of this one."""
    for n in range(django_settings.AXES_FAILURE_LIMIT):
        _token("tech1", f"guess-{n}", {"REMOTE_ADDR": "198.51.100.20"})
    assert _token("tech1", PASSWORD, {"REMOTE_ADDR": "198.51.100.20"}) == 429
    assert _token("tech1", PASSWORD, {"REMOTE_ADDR": "198.51.100.21"}) == 200
    assert _token("tech2", PASSWORD, {"REMOTE_ADDR": "198.51.100.20"}) == 200


@pytest.mark.parametrize("endpoint", ENDPOINTS)
def test_a_new_forwarded_for_each_time_does_not_escape_the_lockout(
    endpoint, staff_technician, unthrottled
):
    """No proxy trusted (the default): X-Forwarded-For is the client's own words and is
    not read, so a new one each time is the same address."""
    attempt, _, _ = ENDPOINTS[endpoint]
    for n in range(WRONG_TRIES):
        attempt("tech1", f"guess-{n}", {"HTTP_X_FORWARDED_FOR": f"10.9.{n // 250}.{n % 250}"})
    assert attempt("tech1", PASSWORD, {"HTTP_X_FORWARDED_FOR": "10.200.0.1"}) == 429
    assert set(AccessAttempt.objects.values_list("ip_address", flat=True)) == {"127.0.0.1"}


def test_a_new_forwarded_for_each_time_does_not_escape_the_token_throttle(technician):
    rate = int(django_settings.REST_FRAMEWORK["DEFAULT_THROTTLE_RATES"]["auth"].split("/")[0])
    codes = [
        _token("tech1", "guess", {"HTTP_X_FORWARDED_FOR": f"10.8.0.{n}"}) for n in range(rate + 1)
    ]
    assert codes[-1] == 429
    assert codes.count(429) == 1


def test_through_one_trusted_proxy_the_address_it_saw_is_used(settings, technician, unthrottled):
    """One proxy trusted: the right-most X-Forwarded-For entry (what our proxy appended) is
    the client; anything the client wrote to the left of it is ignored."""
    _proxies(settings, 1)
    proxy = {"REMOTE_ADDR": "10.0.0.2"}
    guesser = {**proxy, "HTTP_X_FORWARDED_FOR": "203.0.113.5"}
    for n in range(django_settings.AXES_FAILURE_LIMIT):
        spoofed = f"192.0.2.{n}, 203.0.113.5"  # the client's own entry, then the proxy's
        _token("tech1", f"guess-{n}", {**proxy, "HTTP_X_FORWARDED_FOR": spoofed})
    assert set(AccessAttempt.objects.values_list("ip_address", flat=True)) == {"203.0.113.5"}
    assert _token("tech1", PASSWORD, guesser) == 429
    # The technician at another address, through the same proxy, is not locked out.
    assert _token("tech1", PASSWORD, {**proxy, "HTTP_X_FORWARDED_FOR": "198.51.100.7"}) == 200


def test_an_entry_that_is_no_address_gives_way_to_the_connection(settings, technician, unthrottled):
    """A proxy count higher than the proxies there are lets a client's own entry through:
    one that is no address is not stored (PostgreSQL would refuse it), the connection's is."""
    _proxies(settings, 1)
    forged = {"REMOTE_ADDR": "198.51.100.9", "HTTP_X_FORWARDED_FOR": "not-an-address"}
    assert _token("tech1", "guess", forged) == 400
    assert list(AccessAttempt.objects.values_list("ip_address", flat=True)) == ["198.51.100.9"]


def test_through_one_trusted_proxy_the_token_throttle_counts_per_client(settings, technician):
    _proxies(settings, 1)
    rate = int(django_settings.REST_FRAMEWORK["DEFAULT_THROTTLE_RATES"]["auth"].split("/")[0])
    proxy = {"REMOTE_ADDR": "10.0.0.2"}
    first = {**proxy, "HTTP_X_FORWARDED_FOR": "203.0.113.5"}
    codes = [_token("nobody", "guess", first) for _ in range(rate + 1)]
    assert codes[-1] == 429
    assert _token("nobody", "guess", {**proxy, "HTTP_X_FORWARDED_FOR": "203.0.113.6"}) == 400


def test_the_client_address_rule(rf, settings):
    """What the throttles and the lockout both key on."""
    request = rf.get("/", REMOTE_ADDR="10.0.0.2", HTTP_X_FORWARDED_FOR="192.0.2.1, 203.0.113.5")
    _proxies(settings, 0)
    assert client_address(request) == "10.0.0.2"
    _proxies(settings, 1)
    assert client_address(request) == "203.0.113.5"
    _proxies(settings, 2)
    assert client_address(request) == "192.0.2.1"
    assert client_address(rf.get("/", REMOTE_ADDR="10.0.0.2")) == "10.0.0.2"
    assert client_address(HttpRequest()) is None  # a request made in code, no connection
