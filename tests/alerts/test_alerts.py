"""Alerts: an urgent fault, an opened flag or a near leak deadline reaches the office once,
by e-mail as each person chose (at most one immediate mail a day per unit and kind, the
rest in the digest) and by the signed webhook; delivery is a retried job."""

from __future__ import annotations

import datetime as dt
import json
import smtplib
import threading
import time
from http.server import BaseHTTPRequestHandler, ThreadingHTTPServer
from zoneinfo import ZoneInfo

import pytest
import time_machine
from django.core import mail
from django.core.mail.backends import locmem
from django.db import IntegrityError, transaction
from django.urls import reverse
from django.utils import timezone
from django_tasks import TaskResultStatus
from django_tasks_db.models import DBTaskResult

from alerts import webhook
from alerts.models import AlertChoice, AlertDelivery, AlertEvent
from alerts.services import deliver, send_digests
from alerts.tasks import detect_events
from diagnostics.models import Diagnosis, Flag, LeakRate
from tests.factories import (
    ReadingSetFactory,
    RefrigerantEventFactory,
    SiteFactory,
    UnitFactory,
    UserFactory,
    VisitFactory,
    VisitUnitFactory,
    document_for,
)
from tests.jobs.conftest import run_queued

pytestmark = pytest.mark.django_db

CHICAGO = ZoneInfo("America/Chicago")
NOW = dt.datetime(2026, 12, 5, 10, 0, tzinfo=CHICAGO)


@pytest.fixture(autouse=True)
def clock():
    with time_machine.travel(NOW, tick=False) as clock:
        yield clock


def fault_on(unit, *, at: dt.datetime = NOW, status: str = "fault") -> Diagnosis:
    """A visit to ``unit`` whose readings put the condenser split at ``status``."""
    visit = VisitFactory(site=unit.site)
    reading = ReadingSetFactory(
        visit_unit=VisitUnitFactory(visit=visit, unit=unit), taken_at=at - dt.timedelta(hours=1)
    )
    return Diagnosis.objects.create(
        reading_set=reading,
        algorithm_version="synthetic",
        score=40.0,
        computed_at=at,
        document=document_for(status=status),
    )


def office(name: str, **choices: str):
    user = UserFactory(username=name, role="office")
    if choices:
        AlertChoice.objects.create(user=user, **choices)
    return user


def inboxes() -> list[tuple[str, str]]:
    return [(m.to[0], m.subject) for m in mail.outbox]


def test_an_urgent_fault_is_alerted_once(run_jobs):
    person = office("office-a")
    unit = UnitFactory(tag="WIC-7")
    fault_on(unit)
    fault_on(UnitFactory(), status="ok")  # readings on their aim alert nothing

    assert detect_events() == 1
    assert detect_events() == 0
    run_jobs()
    assert detect_events() == 0
    run_jobs()

    event = AlertEvent.objects.get()
    assert event.kind == "urgent_fault"
    assert inboxes() == [(person.email, f"Rimewatch alert: {event.title}")]
    assert "WIC-7" in event.title
    assert "condenser split" in mail.outbox[0].body
    assert "qualified, certified technicians" in mail.outbox[0].body


def test_each_person_is_told_as_they_chose(run_jobs):
    """At once, in the digest, or not at all; other roles are not the office's alerts."""
    now_person = office("office-now")
    digest_person = office("office-digest", urgent_fault="digest")
    office("office-off", urgent_fault="off")
    UserFactory(username="tech-x", role="technician")
    fault_on(UnitFactory(tag="RI-2"))

    detect_events()
    run_jobs()
    assert [to for to, _ in inboxes()] == [now_person.email]

    mail.outbox.clear()
    assert send_digests(NOW.date()) == 1
    assert [to for to, _ in inboxes()] == [digest_person.email]
    assert "RI-2" in mail.outbox[0].body
    assert send_digests(NOW.date()) == 0  # sent once


def test_one_immediate_mail_per_unit_and_kind_a_day_the_rest_in_the_digest(run_jobs, clock):
    person = office("office-flood")
    unit, other = UnitFactory(tag="FZ-1"), UnitFactory(tag="FZ-2")
    fault_on(unit, at=NOW - dt.timedelta(hours=3))
    fault_on(unit)
    fault_on(other)

    detect_events()
    run_jobs()
    assert len(mail.outbox) == 2  # one for each unit
    assert {("FZ-1" in s, "FZ-2" in s) for _, s in inboxes()} == {(True, False), (False, True)}

    mail.outbox.clear()
    send_digests(NOW.date())
    assert inboxes() == [(person.email, "Rimewatch daily digest: 1 alert(s)")]
    assert "FZ-1" in mail.outbox[0].body

    clock.shift(dt.timedelta(days=1))
    mail.outbox.clear()
    fault_on(unit, at=timezone.now())
    detect_events()
    run_jobs()
    assert len(mail.outbox) == 1  # a new day: at once again


def test_two_workers_at_one_instant_still_send_one_immediate_mail():
    """Two events of one unit and kind delivered at the same instant by two workers: each
    worker's "already mailed today?" would see nothing yet, so the database's unique key
    decides. The first worker's immediate row is stored (not yet sent) as the second
    decides: the second goes to the digest, and no third immediate row can be stored."""
    person = office("office-race")
    unit = UnitFactory(tag="RC-1")
    for hours in (3, 2, 1):
        fault_on(unit, at=NOW - dt.timedelta(hours=hours))
    detect_events()
    first, second, third = AlertEvent.objects.order_by("pk")
    flood_key = AlertDelivery.flood_key_of(first)
    AlertDelivery.objects.create(
        event=first, user=person, way="immediate", day=NOW.date(), flood_key=flood_key
    )

    deliver(second.pk)
    assert AlertDelivery.objects.get(event=second, user=person).way == "digest"
    assert mail.outbox == []
    with pytest.raises(IntegrityError), transaction.atomic():
        AlertDelivery.objects.create(
            event=third, user=person, way="immediate", day=NOW.date(), flood_key=flood_key
        )


def test_an_opened_flag_is_alerted_in_the_digest_by_default(run_jobs):
    person = office("office-flag")
    unit = UnitFactory(tag="CND-3")
    Flag.objects.create(
        unit=unit,
        kind="head_pressure_drift",
        severity="warning",
        summary="Condenser split rising",
        opened_at=NOW,
        updated_at=NOW,
    )
    detect_events()
    run_jobs()
    assert mail.outbox == []
    send_digests(NOW.date())
    assert inboxes() == [(person.email, "Rimewatch daily digest: 1 alert(s)")]
    assert "head pressure drifting up" in mail.outbox[0].body


def leak_rate(unit, *, due_in_days: int, repaired: bool = False) -> LeakRate:
    added = RefrigerantEventFactory(
        visit_unit=VisitUnitFactory(visit=VisitFactory(site=unit.site), unit=unit),
        kind="added",
        occurred_on=NOW.date() - dt.timedelta(days=20),
    )
    if repaired:
        RefrigerantEventFactory(
            visit_unit=added.visit_unit,
            kind="leak_repaired",
            amount_kg=None,
            occurred_on=NOW.date() - dt.timedelta(days=5),
        )
    return LeakRate.objects.create(
        event=added,
        rule_set="us_epa",
        method="rolling_average",
        threshold_percent=20.0,
        rolling_average_percent=35.0,
        over_threshold=True,
        repair_due_on=NOW.date() + dt.timedelta(days=due_in_days),
        computed_at=NOW,
    )


def test_a_leak_repair_deadline_near_and_open_is_alerted(run_jobs, settings):
    settings.RIMEWATCH_ALERT_LEAK_DAYS = 7
    office("office-leak")
    near = leak_rate(UnitFactory(tag="DC-9"), due_in_days=3)
    leak_rate(UnitFactory(), due_in_days=3, repaired=True)
    leak_rate(UnitFactory(), due_in_days=30)

    assert detect_events() == 1
    run_jobs()
    event = AlertEvent.objects.get()
    assert event.key == f"leak:{near.pk}:repair"
    assert len(mail.outbox) == 1
    assert "DC-9" in mail.outbox[0].subject
    assert "certified technicians" in mail.outbox[0].body


class Receiver:
    """A local HTTP endpoint recording what it was sent; answers ``status``."""

    def __init__(self) -> None:
        self.requests: list[tuple[dict[str, str], bytes]] = []
        self.status = 204
        outer = self

        class Handler(BaseHTTPRequestHandler):
            def do_POST(self) -> None:
                body = self.rfile.read(int(self.headers["Content-Length"]))
                outer.requests.append((dict(self.headers), body))
                self.send_response(outer.status)
                self.send_header("Content-Length", "0")
                self.end_headers()

            def log_message(self, *args) -> None:
                pass

        self.server = ThreadingHTTPServer(("127.0.0.1", 0), Handler)
        self.url = f"http://127.0.0.1:{self.server.server_address[1]}/hook"
        threading.Thread(target=self.server.serve_forever, daemon=True).start()


@pytest.fixture
def receiver(settings):
    r = Receiver()
    settings.RIMEWATCH_ALERT_WEBHOOK_URL = r.url
    settings.RIMEWATCH_ALERT_WEBHOOK_SECRET = "shared-secret-for-tests"
    yield r
    r.server.shutdown()


def test_the_webhook_is_signed_and_a_replay_or_a_forgery_fails_the_check(run_jobs, receiver):
    office("office-hook")
    unit = UnitFactory(tag="IM-4", site=SiteFactory(name="Harbour Deli"))
    fault_on(unit)
    detect_events()
    run_jobs()

    [(headers, body)] = receiver.requests
    payload = json.loads(body)
    assert payload["kind"] == "urgent_fault"
    assert payload["unit"]["tag"] == "IM-4"
    assert payload["site"]["name"] == "Harbour Deli"
    assert headers[webhook.EVENT_HEADER] == payload["key"]
    stamp, signed = headers[webhook.TIMESTAMP_HEADER], headers[webhook.SIGNATURE_HEADER]
    secret = "shared-secret-for-tests"
    now = time.time()
    assert webhook.verify(secret, stamp, body, signed, now)
    assert not webhook.verify("another-secret", stamp, body, signed, now)
    assert not webhook.verify(secret, stamp, body.replace(b"IM-4", b"IM-5"), signed, now)
    assert not webhook.verify(secret, stamp, body, signed, now + webhook.TOLERANCE_SECONDS + 1)
    assert AlertEvent.objects.get().webhook_sent_at is not None


def test_a_refused_webhook_is_retried_and_nothing_is_sent_twice(run_jobs, receiver, clock):
    office("office-retry")
    fault_on(UnitFactory())
    receiver.status = 503
    detect_events()
    run_jobs()

    failed = DBTaskResult.objects.get(status=TaskResultStatus.FAILED)
    assert "WebhookRefused" in failed.exception_class_path
    assert len(mail.outbox) == 1
    assert len(receiver.requests) == 1
    assert AlertEvent.objects.get().webhook_sent_at is None

    receiver.status = 200
    clock.shift(dt.timedelta(minutes=1))
    assert run_jobs() == 1
    assert len(mail.outbox) == 1  # the e-mail went on the first attempt, not again
    assert len(receiver.requests) == 2
    assert AlertEvent.objects.get().webhook_sent_at is not None


def test_the_alerts_page_saves_a_persons_own_choices(client, office_user, technician):
    client.force_login(office_user)
    url = reverse("alerts:settings")
    assert client.get(url).status_code == 200
    response = client.post(
        url, {"urgent_fault": "immediate", "flag_opened": "off", "leak_deadline": "digest"}
    )
    assert response.status_code == 302
    choice = AlertChoice.objects.get(user=office_user)
    assert (choice.flag_opened, choice.leak_deadline) == ("off", "digest")

    bad = client.post(url, {"urgent_fault": "hourly", "flag_opened": "off", "leak_deadline": "off"})
    assert bad.status_code == 400
    assert "hourly is not one of the available choices" in bad.content.decode()

    client.force_login(technician)
    assert client.get(url).status_code == 404


def test_the_alerts_page_lists_the_latest_in_the_same_queries_however_many(
    client, office_user, django_assert_max_num_queries
):
    client.force_login(office_user)
    url = reverse("alerts:settings")

    def alert(count: int) -> None:
        for _ in range(count):
            unit = UnitFactory()
            AlertEvent.objects.create(
                key=f"flag:{unit.pk}",
                kind="flag_opened",
                unit=unit,
                title=f"{unit.tag} flag",
                happened_at=NOW,
            )

    alert(1)
    client.get(url)
    with django_assert_max_num_queries(10) as few:
        client.get(url)
    alert(10)
    with django_assert_max_num_queries(len(few.captured_queries)):
        page = client.get(url)
    assert page.content.decode().count(" flag</a>") == 11


class RefusingBackend(locmem.EmailBackend):
    """A mail server that refuses one address (as SMTP refuses a recipient)."""

    def send_messages(self, messages):
        if any(to.startswith("office-refused") for m in messages for to in m.to):
            raise smtplib.SMTPRecipientsRefused({"office-refused@example.invalid": (550, b"no")})
        return super().send_messages(messages)


def test_one_refused_address_holds_back_neither_the_others_nor_the_webhook(
    run_jobs, receiver, settings, clock
):
    settings.EMAIL_BACKEND = "tests.alerts.test_alerts.RefusingBackend"
    office("office-refused")
    fine = office("office-fine")
    fault_on(UnitFactory())
    detect_events()
    run_jobs()

    assert [to for to, _ in inboxes()] == [fine.email]
    assert len(receiver.requests) == 1
    assert DBTaskResult.objects.filter(status=TaskResultStatus.FAILED).count() == 1

    settings.EMAIL_BACKEND = "django.core.mail.backends.locmem.EmailBackend"
    clock.shift(dt.timedelta(minutes=1))
    run_jobs()
    assert [to for to, _ in inboxes()] == [fine.email, "office-refused@example.invalid"]
    assert len(receiver.requests) == 1


def test_a_refused_digest_is_sent_on_the_retry_and_the_others_once(settings):
    settings.EMAIL_BACKEND = "tests.alerts.test_alerts.RefusingBackend"
    office("office-refused", urgent_fault="digest")
    fine = office("office-fine", urgent_fault="digest")
    fault_on(UnitFactory())
    detect_events()
    run_queued()

    with pytest.raises(smtplib.SMTPRecipientsRefused):
        send_digests(NOW.date())
    assert [to for to, _ in inboxes()] == [fine.email]

    settings.EMAIL_BACKEND = "django.core.mail.backends.locmem.EmailBackend"
    assert send_digests(NOW.date()) == 1
    assert [to for to, _ in inboxes()] == [fine.email, "office-refused@example.invalid"]
