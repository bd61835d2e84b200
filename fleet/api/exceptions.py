"""Every error as a 4xx JSON body that names the field and the reason; never a 500 for a
request the database or the model refused, and a 503 with ``Retry-After`` when the database
cannot be reached."""

from __future__ import annotations

import logging

from django.core.exceptions import RequestDataTooBig
from django.core.exceptions import ValidationError as DjangoValidationError
from django.db import IntegrityError, InterfaceError, OperationalError
from django.db.models import ProtectedError, RestrictedError
from rest_framework import status
from rest_framework.exceptions import ValidationError
from rest_framework.response import Response
from rest_framework.views import exception_handler as drf_exception_handler

from diagnostics.core.refrigerants import UnknownRefrigerant
from fleet.api.parsers import body_too_large
from fleet.services import IllegalTransition

log = logging.getLogger(__name__)

#: Seconds a client is asked to wait when the database cannot be reached: long enough for
#: a restart or a fail-over, short enough that a phone's queued readings go soon after.
DATABASE_RETRY_AFTER = 30
#: The answer's words, shared with the office pages' 503.
DATABASE_UNAVAILABLE = "the database cannot be reached just now; nothing was stored, try again"


def database_unavailable() -> Response:
    """503 JSON with ``Retry-After``: the request may be sent again unchanged."""
    return Response(
        {"detail": DATABASE_UNAVAILABLE},
        status=status.HTTP_503_SERVICE_UNAVAILABLE,
        headers={"Retry-After": str(DATABASE_RETRY_AFTER)},
    )


def django_errors(exc: DjangoValidationError, rename: dict[str, str] | None = None) -> dict:
    """A model's ValidationError as DRF's field -> [messages], with fields renamed to the wire."""
    rename = rename or {}
    if hasattr(exc, "error_dict"):
        return {
            rename.get(field, field): [str(m) for e in errors for m in e.messages]
            for field, errors in exc.error_dict.items()
        }
    return {"non_field_errors": list(exc.messages)}


def exception_handler(exc: Exception, context: dict) -> Response | None:
    """DRF's handler, plus the errors of the models, the database and the visit life cycle."""
    if isinstance(exc, DjangoValidationError):
        exc = ValidationError(django_errors(exc))
    elif isinstance(exc, RequestDataTooBig):
        exc = body_too_large()
    response = drf_exception_handler(exc, context)
    if response is not None:
        return response
    if isinstance(exc, IllegalTransition):
        return Response({"status": [str(exc)]}, status=status.HTTP_409_CONFLICT)
    if isinstance(exc, ProtectedError | RestrictedError):
        kinds = sorted({str(obj._meta.verbose_name_plural) for obj in exc.args[1]})
        return Response(
            {"non_field_errors": [f"still referenced by {', '.join(kinds)}; remove those first"]},
            status=status.HTTP_409_CONFLICT,
        )
    if isinstance(exc, UnknownRefrigerant):
        return Response({"refrigerant": [str(exc)]}, status=status.HTTP_404_NOT_FOUND)
    if isinstance(exc, OperationalError | InterfaceError):
        # Connection refused, server gone, a fail-over: the client may retry unchanged
        # (a retried write under the same client_id is still stored once).
        log.error("database unavailable, answered 503: %s", exc)
        return database_unavailable()
    if isinstance(exc, IntegrityError):
        # The model validation runs first, so this is a race with another writer.
        log.warning("integrity error answered 409: %s", exc)
        return Response(
            {"non_field_errors": ["conflicts with a record stored meanwhile; fetch and retry"]},
            status=status.HTTP_409_CONFLICT,
        )
    return None
