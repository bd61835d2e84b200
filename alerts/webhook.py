"""The signed webhook: an alert POSTed as JSON to another system (docs/api.md, "Alert
webhook").

The signature is HMAC-SHA256, keyed with the shared secret, over the timestamp, a dot and
the exact body bytes; it goes in ``X-Rimewatch-Signature`` as ``sha256=<hex>``, the Unix
timestamp in ``X-Rimewatch-Timestamp``. A receiver recomputes it and refuses a timestamp
more than ``TOLERANCE_SECONDS`` away from its clock, so a captured request cannot be replayed
later.
"""

from __future__ import annotations

import hashlib
import hmac
import json
import urllib.error
import urllib.request
from typing import Any

TIMESTAMP_HEADER = "X-Rimewatch-Timestamp"
SIGNATURE_HEADER = "X-Rimewatch-Signature"
EVENT_HEADER = "X-Rimewatch-Event"
#: How far a receiver lets a timestamp be from its own clock.
TOLERANCE_SECONDS = 300
TIMEOUT_SECONDS = 10


class WebhookRefused(Exception):
    """The receiver answered, but not with a 2xx."""


def body_of(payload: dict[str, Any]) -> bytes:
    return json.dumps(payload, separators=(",", ":"), sort_keys=True).encode()


def signature(secret: str, timestamp: int, body: bytes) -> str:
    digest = hmac.new(secret.encode(), f"{timestamp}.".encode() + body, hashlib.sha256)
    return f"sha256={digest.hexdigest()}"


def verify(secret: str, timestamp: str, body: bytes, signed: str, now: float) -> bool:
    """What a receiver checks: the signature matches and the timestamp is recent."""
    if not timestamp.isdigit() or abs(now - int(timestamp)) > TOLERANCE_SECONDS:
        return False
    return hmac.compare_digest(signature(secret, int(timestamp), body), signed)


def post(url: str, secret: str, key: str, payload: dict[str, Any], now: float) -> int:
    """POST the signed payload; the receiver's status, or WebhookRefused if not 2xx."""
    body = body_of(payload)
    timestamp = int(now)
    request = urllib.request.Request(  # the URL is the operator's setting
        url,
        data=body,
        method="POST",
        headers={
            "Content-Type": "application/json",
            TIMESTAMP_HEADER: str(timestamp),
            SIGNATURE_HEADER: signature(secret, timestamp, body),
            EVENT_HEADER: key,
        },
    )
    try:
        with urllib.request.urlopen(request, timeout=TIMEOUT_SECONDS) as response:
            status: int = response.status
    except urllib.error.HTTPError as exc:
        raise WebhookRefused(f"{url} answered {exc.code}") from exc
    return status
