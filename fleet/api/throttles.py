"""Rate limits for signing in and for writes (rates in settings.REST_FRAMEWORK)."""

from __future__ import annotations

from ipaddress import ip_address
from typing import TYPE_CHECKING

from rest_framework.permissions import SAFE_METHODS
from rest_framework.throttling import BaseThrottle, SimpleRateThrottle, UserRateThrottle

if TYPE_CHECKING:  # rest_framework.views imports this module (its default throttles)
    from django.http import HttpRequest
    from rest_framework.request import Request
    from rest_framework.views import APIView


def client_address(request: HttpRequest | Request) -> str | None:
    """The client's address as the throttles key on it, for the sign-in lockout too: the
    connection's address, or with N trusted proxies (NUM_PROXIES, from
    RIMEWATCH_TRUSTED_PROXY_COUNT) the address the outermost of them saw, the N-th from the
    right of X-Forwarded-For. Whatever a client writes further left is never used, and an
    entry that is no address (a proxy count set higher than the proxies there are) gives
    way to the connection's address. None for a request that came through no connection."""
    ident = BaseThrottle().get_ident(request)  # type: ignore[arg-type]
    try:
        return str(ip_address(ident))
    except ValueError:
        return request.META.get("REMOTE_ADDR") or None


class CellRate(SimpleRateThrottle):
    """A rate limit that keeps one number per client, not a list of timestamps: the
    generic cell rate algorithm (GCRA, the "virtual scheduling" form).

    Each allowed request moves the client's theoretical arrival time one interval
    (period / rate) later; a request is refused while that time runs more than
    (period - interval) ahead of now. So a client may make ``rate`` requests at once, as
    with DRF's own throttle, then one per interval. The state is one float however busy
    the client is, which keeps a cache shared by every worker process (files) cheap to
    read and write on each request; DRF's list of timestamps grows with the rate.
    """

    # Set by SimpleRateThrottle.__init__ from the rate (None without one).
    num_requests: int | None
    duration: int | None
    early_by: float

    def allow_request(self, request: Request, view: APIView) -> bool:
        if self.num_requests is None or self.duration is None:  # no rate configured
            return True
        self.key = self.get_cache_key(request, view)
        if self.key is None:
            return True
        now = self.timer()
        interval = self.duration / self.num_requests
        arrival = max(self.cache.get(self.key, now), now)
        self.early_by = arrival - now - (self.duration - interval)
        if self.early_by > 0:
            return False
        self.cache.set(self.key, arrival + interval, self.duration)
        return True

    def wait(self) -> float | None:
        """Seconds until the refused client may try again (Retry-After)."""
        return self.early_by


class WriteRateThrottle(CellRate, UserRateThrottle):
    """Limits each user's writes; reads are not counted, so a phone can always list."""

    scope = "write"

    def allow_request(self, request: Request, view: APIView) -> bool:
        if request.method in SAFE_METHODS:
            return True
        return super().allow_request(request, view)


class AuthRateThrottle(CellRate, SimpleRateThrottle):
    """Limits attempts to obtain a token per client address, signed in or not, so a
    password cannot be guessed at speed."""

    scope = "auth"

    def get_cache_key(self, request: Request, view: APIView) -> str:
        return self.cache_format % {"scope": self.scope, "ident": self.get_ident(request)}
