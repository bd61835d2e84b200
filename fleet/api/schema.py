"""The schema's error answers: every operation lists the 4xx (and the 503) it can give, with
the body the exception handler writes, so an integrator sees them without reading the code.

Which answers an operation lists follows from the view itself: its request body, its path
and query parameters, its permissions and its rate limits (the rules are those of
docs/api.md, "Errors").
"""

from __future__ import annotations

from typing import Any

from drf_spectacular.openapi import AutoSchema
from drf_spectacular.plumbing import ComponentRegistry, ResolvedComponent
from rest_framework.permissions import SAFE_METHODS, AllowAny, IsAuthenticated

from fleet.api.throttles import WriteRateThrottle

_REASONS = {"type": "array", "items": {"type": "string"}}

#: ``{"detail": ...}``: DRF's answer for credentials, roles, rates and unavailability.
ERROR_DETAIL = ResolvedComponent(
    name="ErrorDetail",
    type=ResolvedComponent.SCHEMA,
    object="ErrorDetail",
    schema={
        "type": "object",
        "properties": {"detail": {"type": "string", "description": "What went wrong."}},
        "required": ["detail"],
    },
)

#: Each field at fault by its wire name with its reasons (a nested object or a list of
#: them gives its own fields' reasons); ``non_field_errors`` for the body as a whole,
#: ``detail`` for a body that is not JSON or a refusal of the request as a whole.
FIELD_ERRORS = ResolvedComponent(
    name="FieldErrors",
    type=ResolvedComponent.SCHEMA,
    object="FieldErrors",
    schema={
        "type": "object",
        "properties": {
            "non_field_errors": _REASONS,
            "detail": {"type": "string", "description": "The request as a whole was refused."},
        },
        "additionalProperties": {
            "description": "A field's reasons, or its nested fields' reasons.",
            "anyOf": [
                {"type": "array", "items": {"anyOf": [{"type": "string"}, {"type": "object"}]}},
                {"type": "object"},
            ],
        },
    },
)

_RETRY_AFTER = {
    "Retry-After": {
        "description": "Seconds to wait before trying again.",
        "schema": {"type": "integer"},
    }
}

#: Status -> (what it means, body, headers).
ERRORS: dict[str, tuple[str, ResolvedComponent, dict[str, Any]]] = {
    "400": (
        "A field is missing, malformed, impossible or unknown, each named with its reasons "
        "(in the units the request used); or the body is not JSON.",
        FIELD_ERRORS,
        {},
    ),
    "401": ("No credentials, or an unknown token.", ERROR_DETAIL, {}),
    "403": ("The account has no role in Rimewatch, or its role may not do this.", ERROR_DETAIL, {}),
    "404": (
        "Not there, or outside your reach (answered alike); an unknown refrigerant is named "
        "as the field at fault.",
        FIELD_ERRORS,
        {},
    ),
    "409": (
        "The record's state forbids it: an illegal visit move, a write on a visit closed to "
        "your role, a client_id already used on another visit or with a different body, a "
        "record others still refer to, or a write that raced another; the field at fault "
        "(status, visit, client_id or non_field_errors) says why.",
        FIELD_ERRORS,
        {},
    ),
    "413": ("The request body is larger than the API takes.", ERROR_DETAIL, {}),
    "429": ("Too many requests: a rate limit.", ERROR_DETAIL, _RETRY_AFTER),
    "503": (
        "The database is unavailable for the moment; nothing was stored.",
        ERROR_DETAIL,
        _RETRY_AFTER,
    ),
}


class ErrorsAutoSchema(AutoSchema):
    """drf-spectacular's AutoSchema, plus the error answers of each operation."""

    def get_operation(
        self,
        path: str,
        path_regex: str,
        path_prefix: str,
        method: str,
        registry: ComponentRegistry,
    ) -> dict[str, Any] | None:
        operation = super().get_operation(path, path_regex, path_prefix, method, registry)
        if operation is None:
            return None
        responses: dict[str, Any] = operation.setdefault("responses", {})
        for status in self.error_statuses(operation):
            description, body, headers = ERRORS[status]
            registry.register_on_missing(body)
            answer = responses.setdefault(status, {"description": description})
            answer.setdefault("content", {"application/json": {"schema": body.ref}})
            if headers:
                answer.setdefault("headers", headers)
        return operation

    def error_statuses(self, operation: dict[str, Any]) -> list[str]:
        """The error statuses ``operation`` can answer, by the view behind it."""
        writes = self.method not in SAFE_METHODS
        parameters = operation.get("parameters", [])
        queried = any(
            p["in"] == "query" and p["name"] not in {"page", "page_size"} for p in parameters
        )
        permissions = self.view.get_permissions()
        open_to_all = all(isinstance(p, AllowAny) for p in permissions)
        any_user = all(type(p) is IsAuthenticated for p in permissions)
        limited = any(
            writes or not isinstance(t, WriteRateThrottle) for t in self.view.get_throttles()
        )
        statuses = {
            "400": "requestBody" in operation or queried,
            "401": not open_to_all,
            "403": not any_user,
            "404": any(p["in"] == "path" for p in parameters),
            "409": writes,
            "413": "requestBody" in operation,
            "429": limited,
            "503": True,
        }
        return [status for status, answered in statuses.items() if answered]
