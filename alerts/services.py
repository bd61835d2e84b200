"""Finding what to alert and delivering it.

``candidates`` looks at what was stored lately (``alerts.tasks.detect_events`` inserts
the new ones; the scheduler runs it each minute, the nightly flag refresh after its work):
a visit's readings judged far off their aim (a metric at ``fault``: the "act now" of the
pages and reports), a flag opened, a leak-repair or verification deadline (40 CFR 82.157)
within ``RIMEWATCH_ALERT_LEAK_DAYS``.

``deliver`` tells the office of one event: each office user with an e-mail address, as
they chose (``AlertChoice``); at most one immediate e-mail a day per person, unit and
kind, the rest wait for the digest; then the webhook, if one is configured. Each step is
recorded before the next, so a retried delivery sends only what is still unsent.
"""

from __future__ import annotations

import datetime as dt
import time
from collections.abc import Iterator
from dataclasses import dataclass

from django.conf import settings
from django.contrib.auth.models import User
from django.core.mail import EmailMessage, get_connection
from django.db import IntegrityError, transaction
from django.db.models import Q
from django.utils import timezone

from diagnostics.deadlines import open_leak_deadlines
from diagnostics.models import Diagnosis, Flag, LeakRate
from fleet.choices import Role
from fleet.models import Unit

from . import webhook
from .models import AlertChoice, AlertDelivery, AlertEvent, AlertKind, Way

#: How far back a pass looks for what was stored: a scheduler down for less than this
#: misses nothing, and a reading set backdated further (an old visit entered late) or a
#: rescore of old visits alerts nothing.
LOOKBACK = dt.timedelta(days=2)


@dataclass(frozen=True)
class Candidate:
    key: str
    kind: str
    unit: Unit
    title: str
    detail: str
    happened_at: dt.datetime


def _faults(now: dt.datetime) -> Iterator[Candidate]:
    diagnoses = list(
        Diagnosis.objects.filter(
            reading_set__taken_at__gte=now - LOOKBACK, reading_set__taken_at__lte=now
        ).select_related("reading_set__visit_unit__unit__site", "reading_set__visit_unit__visit")
    )
    Diagnosis.attach_details(diagnoses)
    for d in diagnoses:
        faults = [m["name"].replace("_", " ") for m in d.metrics if m["status"] == "fault"]
        if not faults:
            continue
        visit_unit = d.reading_set.visit_unit
        unit = visit_unit.unit
        causes = [f["title"] for f in d.findings]
        yield Candidate(
            f"fault:visit-unit:{visit_unit.pk}",
            AlertKind.URGENT_FAULT,
            unit,
            f"{unit.tag} at {unit.site.name}: far off its aim on visit "
            f"{visit_unit.visit.reference}",
            "Far off aim: "
            + ", ".join(faults)
            + (f". Probable cause: {causes[0]}." if causes else "."),
            d.reading_set.taken_at,
        )


def _flags(now: dt.datetime) -> Iterator[Candidate]:
    for flag in Flag.objects.filter(opened_at__gte=now - LOOKBACK).select_related("unit__site"):
        yield Candidate(
            f"flag:{flag.pk}",
            AlertKind.FLAG_OPENED,
            flag.unit,
            f"{flag.unit.tag} at {flag.unit.site.name}: {flag.get_kind_display().lower()} "
            f"({flag.get_severity_display().lower()})",
            flag.shown_summary,
            flag.opened_at,
        )


def _leak_deadlines(now: dt.datetime) -> Iterator[Candidate]:
    today = timezone.localdate(now)
    window = (today - LOOKBACK, today + dt.timedelta(days=settings.RIMEWATCH_ALERT_LEAK_DAYS))
    rates = list(
        LeakRate.objects.filter(
            Q(repair_due_on__range=window) | Q(verification_due_on__range=window)
        ).select_related("event__visit_unit__unit__site")
    )
    for deadline in open_leak_deadlines(rates):
        if not window[0] <= deadline.due_on <= window[1]:
            continue
        unit = deadline.rate.event.visit_unit.unit
        what = "leak repair" if deadline.kind == "repair" else "initial verification test"
        yield Candidate(
            f"leak:{deadline.rate.pk}:{deadline.kind}",
            AlertKind.LEAK_DEADLINE,
            unit,
            f"{unit.tag} at {unit.site.name}: {what} due {deadline.due_on:%d %b %Y}",
            f"A refrigerant addition on {deadline.rate.event.occurred_on:%d %b %Y} showed a "
            "leak rate over the threshold; the rules set this deadline "
            "(40 CFR 82.157 under the U.S. EPA rule set). Only certified technicians may "
            "repair and recharge.",
            now,
        )


def candidates(now: dt.datetime) -> list[Candidate]:
    """Everything stored lately that calls for an alert, new or not."""
    return [*_faults(now), *_flags(now), *_leak_deadlines(now)]


def office_recipients() -> list[User]:
    """Active office users with an e-mail address, with their choices."""
    return list(
        User.objects.filter(is_active=True)
        .filter(Q(groups__name=Role.OFFICE) | Q(is_superuser=True))
        .exclude(email="")
        .select_related("alert_choice")
        .distinct()
        .order_by("pk")
    )


def choice_of(user: User) -> AlertChoice:
    try:
        return user.alert_choice
    except AlertChoice.DoesNotExist:
        return AlertChoice(user=user)


def _mail(event: AlertEvent) -> EmailMessage:
    site = event.unit.site
    body = (
        f"{event.title}\n\n{event.detail}\n\n"
        f"Unit {event.unit.tag} at {site.name} ({site.customer.name}).\n"
        "Any work on it is for qualified, certified technicians following local codes.\n"
    )
    return EmailMessage(f"Rimewatch alert: {event.title}", body)


def _decide(event: AlertEvent, user: User, wanted: str, today: dt.date) -> None:
    """Record how ``user`` hears of ``event``: at once, unless they already had an
    immediate e-mail today about this unit and kind (the database's unique key decides,
    also between two workers at the same instant), then in the digest. Nothing when an
    earlier attempt of this job decided it already."""
    ways = [Way.IMMEDIATE, Way.DIGEST] if wanted == Way.IMMEDIATE else [Way.DIGEST]
    for way in ways:
        flood_key = AlertDelivery.flood_key_of(event) if way == Way.IMMEDIATE else None
        try:
            with transaction.atomic():
                AlertDelivery.objects.create(
                    event=event, user=user, way=way, day=today, flood_key=flood_key
                )
            return
        except IntegrityError:
            continue  # immediate taken today: the digest; or decided on an earlier attempt


def deliver(event_id: int, now: dt.datetime | None = None) -> int:
    """Tell the office of one event; how many e-mails went out now."""
    now = now or timezone.now()
    today = timezone.localdate(now)
    event = AlertEvent.objects.select_related("unit__site__customer").get(pk=event_id)
    for user in office_recipients():
        wanted = choice_of(user).way(event.kind)
        if wanted == Way.OFF:
            continue
        _decide(event, user, wanted, today)
    sent = 0
    pending = AlertDelivery.objects.filter(
        event=event, way=Way.IMMEDIATE, sent_at__isnull=True
    ).select_related("user")
    connection = get_connection()
    # One refused address or a receiver down holds back neither the others nor the
    # webhook; the first failure is raised at the end, so the job is retried for the rest.
    failures: list[Exception] = []
    for delivery in pending:
        message = _mail(event)
        message.to = [delivery.user.email]
        try:
            connection.send_messages([message])
        except Exception as exc:
            failures.append(exc)
            continue
        AlertDelivery.objects.filter(pk=delivery.pk).update(sent_at=timezone.now())
        sent += 1
    url, secret = settings.RIMEWATCH_ALERT_WEBHOOK_URL, settings.RIMEWATCH_ALERT_WEBHOOK_SECRET
    if url and secret and event.webhook_sent_at is None:
        try:
            webhook.post(url, secret, event.key, payload_of(event), time.time())
        except Exception as exc:
            failures.append(exc)
        else:
            AlertEvent.objects.filter(pk=event.pk).update(webhook_sent_at=timezone.now())
    if failures:
        raise failures[0]
    return sent


def payload_of(event: AlertEvent) -> dict[str, object]:
    """The webhook's JSON body (docs/api.md)."""
    site = event.unit.site
    return {
        "key": event.key,
        "kind": event.kind,
        "title": event.title,
        "detail": event.detail,
        "happened_at": event.happened_at.isoformat(),
        "unit": {"id": event.unit_id, "tag": event.unit.tag},
        "site": {"id": site.pk, "name": site.name, "customer": site.customer.name},
    }


def send_digests(day: dt.date) -> int:
    """One e-mail per person listing what waits for their digest; how many went out."""
    waiting = (
        AlertDelivery.objects.filter(way=Way.DIGEST, sent_at__isnull=True, day__lte=day)
        .select_related("user", "event__unit__site")
        .order_by("user_id", "event__happened_at")
    )
    by_user: dict[int, list[AlertDelivery]] = {}
    for delivery in waiting:
        by_user.setdefault(delivery.user_id, []).append(delivery)
    connection = get_connection()
    failures: list[Exception] = []
    for deliveries in by_user.values():
        user = deliveries[0].user
        lines = [f"- {d.event.title}\n  {d.event.detail}" for d in deliveries]
        body = (
            f"{len(deliveries)} alert(s) since your last digest:\n\n"
            + "\n".join(lines)
            + "\n\nAny work is for qualified, certified technicians following local codes.\n"
        )
        message = EmailMessage(f"Rimewatch daily digest: {len(deliveries)} alert(s)", body)
        message.to = [user.email]
        try:
            connection.send_messages([message])
        except Exception as exc:  # the others still get theirs; a retry sends this one
            failures.append(exc)
            continue
        AlertDelivery.objects.filter(pk__in=[d.pk for d in deliveries]).update(
            sent_at=timezone.now()
        )
    if failures:
        raise failures[0]
    return len(by_user)
