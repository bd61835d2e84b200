"""Alerts as background work: new events found and inserted once, each delivered by a job
of its own (retried: a mail server or receiver down is tried again later; what was sent
already is not sent again)."""

from __future__ import annotations

import datetime as dt

from django.db import IntegrityError, transaction
from django.utils import timezone

from jobs.retry import retried

from . import services
from .models import AlertEvent


@retried
def deliver_event(event_id: int) -> int:
    return services.deliver(event_id)


def detect_events(now: dt.datetime | None = None) -> int:
    """Insert the events not alerted yet, each with its delivery job enqueued in the same
    transaction (the unique key decides between concurrent passes); how many were new."""
    now = now or timezone.now()
    found = services.candidates(now)
    known = set(
        AlertEvent.objects.filter(key__in=[c.key for c in found]).values_list("key", flat=True)
    )
    new = 0
    for c in found:
        if c.key in known:
            continue
        try:
            with transaction.atomic():
                event = AlertEvent.objects.create(
                    key=c.key,
                    kind=c.kind,
                    unit=c.unit,
                    title=c.title[:200],
                    detail=c.detail,
                    happened_at=c.happened_at,
                )
                deliver_event.enqueue(event.pk)
        except IntegrityError:  # another pass inserted it first
            continue
        known.add(c.key)
        new += 1
    return new
