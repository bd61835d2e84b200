"""The job queue stays out of an export: a waiting job imported elsewhere would run again
there (an e-mail sent twice), and a password-reset job holds a working reset link."""

from __future__ import annotations

import pytest

from alerts.models import AlertChoice
from fleet.backup import export_records
from jobs.tasks import send_email
from tests.factories import UserFactory

pytestmark = pytest.mark.django_db


def test_an_export_leaves_the_job_queue_out_and_keeps_the_alert_choices(tmp_path):
    AlertChoice.objects.create(user=UserFactory(username="chooser"), flag_opened="off")
    send_email.enqueue(
        "Reset", "https://example.invalid/accounts/reset/abc/", ["a@example.invalid"]
    )

    exported = export_records(tmp_path / "export.json", verbosity=0)

    assert not any(label.startswith("django_tasks_database.") for label in exported.counts)
    assert exported.counts["alerts.alertchoice"] == 1
    assert "/accounts/reset/abc/" not in (tmp_path / "export.json").read_text()
