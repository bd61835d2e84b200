"""Sign-in e-mail off the request path: the password-reset form composes its message in the
request (it needs the user and the token) and hands the sending to a job."""

from __future__ import annotations

from typing import Any

from django.contrib.auth.forms import PasswordResetForm
from django.template import loader

from .tasks import send_email


class QueuedPasswordResetForm(PasswordResetForm):
    def send_mail(
        self,
        subject_template_name: str,
        email_template_name: str,
        context: dict[str, Any],
        from_email: str | None,
        to_email: str,
        html_email_template_name: str | None = None,
    ) -> None:
        # As Django's own form composes it (a subject on one line), then queued.
        subject = "".join(loader.render_to_string(subject_template_name, context).splitlines())
        body = loader.render_to_string(email_template_name, context)
        html = (
            loader.render_to_string(html_email_template_name, context)
            if html_email_template_name
            else ""
        )
        send_email.enqueue(subject, body, [to_email], from_email=from_email, html=html)
