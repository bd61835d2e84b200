"""The pages' GET requests read from the replica, when there is one (fleet/replica.py).

A page shown just after the same browser changed something reads the primary instead, so
the office sees its own change at once, however far the replica lags: a POST (any unsafe
method) sets a short-lived cookie, and while the browser sends it its pages read the
primary. The API always reads the primary.
"""

from __future__ import annotations

from collections.abc import Callable

from django.conf import settings
from django.http import HttpRequest, HttpResponse

from fleet.replica import replica_alias, replica_reads

#: The cookie that keeps a browser's pages on the primary just after it wrote something.
PIN_COOKIE = "rimewatch_primary"
_SAFE = ("GET", "HEAD", "OPTIONS")


class ReplicaReadsMiddleware:
    """GET pages read our records from the replica; unsafe requests pin the browser to
    the primary for ``RIMEWATCH_REPLICA_PIN_SECONDS``."""

    def __init__(self, get_response: Callable[[HttpRequest], HttpResponse]) -> None:
        self.get_response = get_response

    def __call__(self, request: HttpRequest) -> HttpResponse:
        if not replica_alias() or request.path.startswith("/api/"):
            return self.get_response(request)
        if request.method not in _SAFE:
            response = self.get_response(request)
            response.set_cookie(
                PIN_COOKIE,
                "1",
                max_age=settings.RIMEWATCH_REPLICA_PIN_SECONDS,
                secure=settings.SESSION_COOKIE_SECURE,
                httponly=True,
                samesite="Lax",
            )
            return response
        if PIN_COOKIE in request.COOKIES:
            return self.get_response(request)
        with replica_reads():
            return self.get_response(request)
