"""Rate limits for signing in and for writes (rates in settings.REST_FRAMEWORK)."""

from __future__ import annotations

from rest_framework.permissions import SAFE_METHODS
from rest_framework.throttling import SimpleRateThrottle, UserRateThrottle


class WriteRateThrottle(UserRateThrottle):
    """Limits each user's writes; reads are not counted, so a phone can always list."""

    scope = "write"

    def allow_request(self, request, view) -> bool:
        if request.method in SAFE_METHODS:
            return True
        return super().allow_request(request, view)


class AuthRateThrottle(SimpleRateThrottle):
    """Limits attempts to obtain a token per client address, signed in or not, so a
    password cannot be guessed at speed."""

    scope = "auth"

    def get_cache_key(self, request, view) -> str:
        return self.cache_format % {"scope": self.scope, "ident": self.get_ident(request)}
