"""The password-reset e-mail leaves the request: the page answers without the mail server,
and the worker sends the message, retrying while the server is down."""

from __future__ import annotations

import smtplib

from django.core import mail
from django.core.mail.backends import locmem
from django.urls import reverse
from django_tasks import TaskResultStatus
from django_tasks_db.models import DBTaskResult

from tests.factories import UserFactory


class DownBackend(locmem.EmailBackend):
    def send_messages(self, messages):
        raise smtplib.SMTPServerDisconnected("mail server down")


def test_the_reset_mail_is_sent_by_the_worker_not_the_request(client, run_jobs, settings, db):
    user = UserFactory(username="forgetful", email="forgetful@example.invalid")
    settings.EMAIL_BACKEND = "tests.jobs.test_mail.DownBackend"

    response = client.post(reverse("password_reset"), {"email": user.email})

    assert response.status_code == 302  # answered, though the mail server is down
    assert mail.outbox == []
    run_jobs()
    failed = DBTaskResult.objects.get(status=TaskResultStatus.FAILED)
    assert "SMTPServerDisconnected" in failed.exception_class_path
    assert DBTaskResult.objects.filter(status=TaskResultStatus.READY).count() == 1

    settings.EMAIL_BACKEND = "django.core.mail.backends.locmem.EmailBackend"
    DBTaskResult.objects.filter(status=TaskResultStatus.READY).update(run_after=failed.finished_at)
    run_jobs()
    [message] = mail.outbox
    assert message.to == [user.email]
    assert "/accounts/reset/" in message.body
