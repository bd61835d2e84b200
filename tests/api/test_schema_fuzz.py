"""Schemathesis against the project's own OpenAPI schema, signed in as each role.

Every operation of /api/schema/ gets a bounded number of generated requests (valid and
invalid), sent through the WSGI application with a token of each role. Expected: never a
5xx, and every documented response matches its schema. Path ids are steered half of the
time to records that exist, so the handlers behind the 404s are reached too.
"""

from __future__ import annotations

import random

import pytest
import schemathesis
from django.core.signals import request_finished, request_started
from django.core.wsgi import get_wsgi_application
from django.db import close_old_connections
from hypothesis import HealthCheck, Phase, settings
from rest_framework.authtoken.models import Token
from schemathesis.checks import not_a_server_error
from schemathesis.specs.openapi.checks import response_schema_conformance

from fleet.api.throttles import WriteRateThrottle

pytestmark = pytest.mark.django_db

ROLES = ("office", "technician", "manager")


#: Bounded so the whole run stays well under a minute on two cores: a few generated cases
#: (valid and invalid) per operation, no exhaustive coverage phase, a fixed seed.
CONFIG = {
    "seed": 20261202,
    "phases": {
        "examples": {"enabled": True},
        "fuzzing": {"enabled": True},
        "coverage": {"enabled": False},
        "stateful": {"enabled": False},
    },
    "generation": {"max-examples": 6},
}


@pytest.fixture
def wsgi_app(db):
    """The real WSGI application, minus closing the database connection after each request
    (as Django's test client does): the test's transaction must survive the requests."""
    request_started.disconnect(close_old_connections)
    request_finished.disconnect(close_old_connections)
    yield get_wsgi_application()
    request_started.connect(close_old_connections)
    request_finished.connect(close_old_connections)


@pytest.fixture
def api_schema(wsgi_app):
    return schemathesis.openapi.from_wsgi(
        "/api/schema/?format=json", wsgi_app, config=schemathesis.Config.from_dict(CONFIG)
    )


schema = schemathesis.pytest.from_fixture("api_schema")


def _known_ids(world) -> dict[str, list[object]]:
    return {
        "id": [
            world.own_unit.pk,
            world.own_visit.pk,
            world.own_site.pk,
            world.own_reading.pk,
            world.own_event.pk,
            world.own_component.pk,
        ],
        "visit_pk": [world.own_visit.pk, world.other_visit.pk],
        "unit_pk": [world.own_unit.pk, world.other_unit.pk],
        "designation": ["R-404A", "R-448A", "R-744"],
    }


def _steer(case, known: dict[str, list[object]]) -> None:
    """Half of the cases aim their path parameters at records that exist."""
    params = case.path_parameters or {}
    chooser = random.Random(repr(sorted(params.items())))
    if params and chooser.random() < 0.5:
        for name in params:
            if name in known:
                params[name] = chooser.choice(known[name])


@schema.parametrize()
@settings(
    max_examples=6,
    deadline=None,
    phases=[Phase.explicit, Phase.generate],
    suppress_health_check=list(HealthCheck),
)
def test_the_api_never_fails_and_matches_its_schema(case, world, monkeypatch):
    """No 5xx for any role, and every documented response conforms to the schema."""
    monkeypatch.setattr(WriteRateThrottle, "allow_request", lambda self, request, view: True)
    _steer(case, _known_ids(world))
    for role in ROLES:
        token, _ = Token.objects.get_or_create(user=getattr(world, role))
        case.call_and_validate(
            headers={"Authorization": f"Token {token.key}"},
            checks=[not_a_server_error, response_schema_conformance],
        )
