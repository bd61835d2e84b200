"""The schema lists, on every operation, each error status the API can answer there, with
the body the exception handler writes."""

from __future__ import annotations

import pytest
from drf_spectacular.generators import SchemaGenerator

WRITES = {"post", "put", "patch", "delete"}
DETAIL = {"$ref": "#/components/schemas/ErrorDetail"}
FIELDS = {"$ref": "#/components/schemas/FieldErrors"}


@pytest.fixture(scope="module")
def schema():
    return SchemaGenerator().get_schema(request=None, public=True)


def _operations(schema):
    for path, item in schema["paths"].items():
        for method, operation in item.items():
            yield path, method, operation


def _body(operation, status):
    return operation["responses"][status]["content"]["application/json"]["schema"]


def test_every_operation_lists_its_error_answers(schema):
    seen = 0
    for path, method, operation in _operations(schema):
        where = f"{method.upper()} {path}"
        listed = set(operation["responses"])
        parameters = operation.get("parameters", [])
        has_body = "requestBody" in operation
        expected = {"503"}
        if not (path == "/api/v1/auth/token/" and method == "post"):
            expected.add("401")
        if has_body:
            expected |= {"400", "413"}
        if any(p["in"] == "path" for p in parameters):
            expected.add("404")
        if method in WRITES:
            expected |= {"409", "429"}
        assert expected <= listed, (where, expected - listed)
        if method not in WRITES:
            assert not {"409", "413"} & listed, where
        for status in listed & {"401", "403", "413", "429", "503"}:
            assert _body(operation, status) == DETAIL, (where, status)
        for status in listed & {"400", "404", "409"}:
            if "content" in operation["responses"][status]:
                assert _body(operation, status) == FIELDS, (where, status)
        for status in listed & {"429", "503"}:
            assert "Retry-After" in operation["responses"][status]["headers"], (where, status)
        seen += 1
    assert seen > 40


@pytest.mark.parametrize(
    ("path", "method", "statuses", "absent"),
    [
        # A phone's post: every refusal it can meet, the changed body under a used client_id.
        (
            "/api/v1/visits/{visit_pk}/reading-sets/",
            "post",
            {"400", "401", "403", "404", "409", "413", "429", "503"},
            set(),
        ),
        (
            "/api/v1/visits/{visit_pk}/refrigerant-events/",
            "post",
            {"400", "401", "403", "404", "409", "413", "429", "503"},
            set(),
        ),
        # Reads are not rate-limited, and the list takes filters (400) but no body.
        ("/api/v1/customers/", "get", {"400", "401", "403", "503"}, {"409", "413", "429"}),
        ("/api/v1/sites/{id}/", "delete", {"401", "403", "404", "409", "429", "503"}, {"413"}),
        # Signing in needs no credentials, but a wrong password is a 400, no role a 403,
        # and the attempts are limited.
        ("/api/v1/auth/token/", "post", {"400", "403", "429", "503"}, {"401", "404"}),
        # Any signed-in account may revoke its token: no role needed.
        ("/api/v1/auth/token/", "delete", {"401", "429", "503"}, {"403", "404"}),
        # The reports answer no-role accounts with nothing, not a 403.
        ("/api/v1/sites/{site_id}/reports/", "get", {"401", "404", "503"}, {"403", "429"}),
    ],
)
def test_named_operations_list_exactly_their_errors(schema, path, method, statuses, absent):
    listed = set(schema["paths"][path][method]["responses"])
    assert statuses <= listed
    assert not absent & listed


def test_the_error_bodies_are_components(schema):
    detail = schema["components"]["schemas"]["ErrorDetail"]
    assert detail["required"] == ["detail"]
    fields = schema["components"]["schemas"]["FieldErrors"]
    assert fields["properties"]["non_field_errors"]["items"] == {"type": "string"}
    assert "additionalProperties" in fields
