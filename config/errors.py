"""Answers given outside the API's views: a path that names nothing, and a database that
cannot be reached.

Under ``/api/`` both are JSON, as every answer of the API is (an id beyond what a record can
have does not match its path, so it is this 404); elsewhere they are Django's own 404 page
and a small 503 page that needs neither the database nor a template. The API's exception
handler answers the outages inside its views itself.
"""

from __future__ import annotations

import logging
from collections.abc import Callable

from django.db import InterfaceError, OperationalError
from django.http import HttpRequest, HttpResponse, JsonResponse
from django.views.defaults import page_not_found

from fleet.api.exceptions import DATABASE_RETRY_AFTER, DATABASE_UNAVAILABLE

log = logging.getLogger(__name__)

_PAGE = (
    "<!doctype html><html lang=en><meta charset=utf-8><title>Try again shortly</title>"
    "<h1>Try again shortly</h1><p>Rimewatch cannot reach its database just now. Nothing "
    "was changed; reload this page in a minute.</p></html>"
)


def _is_api(request: HttpRequest) -> bool:
    return request.path.startswith("/api/")


def not_found(request: HttpRequest, exception: Exception) -> HttpResponse:
    """``handler404``: JSON under ``/api/``, the usual page elsewhere."""
    if _is_api(request):
        return JsonResponse({"detail": "Not found."}, status=404)
    return page_not_found(request, exception)


class DatabaseOutageMiddleware:
    """Turns a lost database connection in a view into a 503 with ``Retry-After``."""

    def __init__(self, get_response: Callable[[HttpRequest], HttpResponse]) -> None:
        self.get_response = get_response

    def __call__(self, request: HttpRequest) -> HttpResponse:
        return self.get_response(request)

    def process_exception(self, request: HttpRequest, exc: Exception) -> HttpResponse | None:
        if not isinstance(exc, OperationalError | InterfaceError):
            return None
        log.error("database unavailable, answered 503 on %s: %s", request.path, exc)
        response = (
            JsonResponse({"detail": DATABASE_UNAVAILABLE}, status=503)
            if _is_api(request)
            else HttpResponse(_PAGE, status=503)
        )
        response["Retry-After"] = str(DATABASE_RETRY_AFTER)
        return response
