"""A pooled database connection the server has closed (PostgreSQL restarted, an idle
timeout, an administrator's ``pg_terminate_backend``) costs no request a 500: the
production settings keep connections (``DB_CONN_MAX_AGE``) and try a kept one before a
request uses it (``conn_health_checks``), so Django opens a new one instead.

The Django test client cannot show this: it closes the connection around each request as
no server does. So a real gunicorn serves the test database on the production settings,
its connection is terminated from here, and the next request must still answer 200."""

from __future__ import annotations

import socket
import subprocess
import sys
import time
import urllib.error
import urllib.request
from pathlib import Path

import pytest
from django.db import connection
from rest_framework.authtoken.models import Token

from tests.factories import SiteFactory, UserFactory
from tests.processes import production_env

pytestmark = [
    pytest.mark.django_db(transaction=True, serialized_rollback=True),
    pytest.mark.skipif(
        connection.vendor != "postgresql",
        reason="a second process needs the test database on a server, and only PostgreSQL "
        "has connections to terminate; `make test` runs this on a throwaway PostgreSQL",
    ),
]

ROOT = Path(__file__).resolve().parents[2]
#: How the server's connection is found among the test database's backends.
APPLICATION_NAME = "rimewatch-stale-connection-test"


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return int(s.getsockname()[1])


def _get(url: str, token: str) -> tuple[int, bytes]:
    request = urllib.request.Request(
        url, headers={"Authorization": f"Token {token}", "Host": "localhost"}
    )
    try:
        with urllib.request.urlopen(request, timeout=30) as response:
            return response.status, response.read()
    except urllib.error.HTTPError as error:
        return error.code, error.read()


def _server_backends() -> list[int]:
    with connection.cursor() as cursor:
        cursor.execute(
            "SELECT pid FROM pg_stat_activity WHERE application_name = %s", [APPLICATION_NAME]
        )
        return [row[0] for row in cursor.fetchall()]


@pytest.fixture
def server():
    """gunicorn, one sync worker, on the production settings and the test database."""
    db = connection.settings_dict
    url = (
        f"postgres://{db['USER']}@{db['HOST']}:{db['PORT']}/{db['NAME']}"
        f"?application_name={APPLICATION_NAME}"
    )
    port = _free_port()
    env = production_env(
        DATABASE_URL=url,
        DB_CONN_MAX_AGE="600",
        ALLOWED_HOSTS="localhost",
        SECURE_SSL_REDIRECT="0",
    )
    process = subprocess.Popen(
        [
            *(sys.executable, "-m", "gunicorn", "config.wsgi", "--workers", "1"),
            *("--bind", f"127.0.0.1:{port}", "--log-level", "warning"),
        ],
        cwd=ROOT,
        env=env,
        stdout=subprocess.PIPE,
        stderr=subprocess.STDOUT,
        text=True,
    )
    base = f"http://127.0.0.1:{port}"
    deadline = time.monotonic() + 30
    while time.monotonic() < deadline:
        try:
            with socket.create_connection(("127.0.0.1", port), timeout=1):
                break
        except OSError:
            assert process.poll() is None, process.communicate()[0]
            time.sleep(0.1)
    try:
        yield base
    finally:
        process.terminate()
        output, _ = process.communicate(timeout=30)
        assert "Traceback" not in output, output


def test_a_connection_the_database_closed_costs_no_request_a_500(server):
    office = UserFactory(username="office-stale", role="office")
    token = Token.objects.create(user=office).key
    SiteFactory(name="Quay Fishmonger")
    url = f"{server}/api/v1/sites/"

    status, body = _get(url, token)
    assert status == 200, body
    assert b"Quay Fishmonger" in body
    kept = _server_backends()
    assert len(kept) == 1, "the server keeps its connection between requests"

    with connection.cursor() as cursor:
        cursor.execute("SELECT pg_terminate_backend(%s)", [kept[0]])
        assert cursor.fetchone() == (True,)

    status, body = _get(url, token)
    assert status == 200, body
    assert b"Quay Fishmonger" in body
    replaced = _server_backends()
    assert len(replaced) == 1
    assert replaced != kept, "a new connection took the closed one's place"
