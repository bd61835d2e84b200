"""Start-up checks of the deployment's settings (run by `manage.py check`, `migrate`,
`runserver` and gunicorn's start, config/gunicorn.conf.py)."""

from __future__ import annotations

from typing import Any

from django.conf import settings
from django.core.checks import CheckMessage, Warning

#: Backends that keep messages on this machine: what they "send" is read in the log, a
#: file or memory, so a password-reset link would be there for anyone reading it.
LOCAL_EMAIL_BACKENDS = {
    "django.core.mail.backends.console.EmailBackend": "the server's log",
    "django.core.mail.backends.filebased.EmailBackend": "files on the server",
    "django.core.mail.backends.locmem.EmailBackend": "memory",
    "django.core.mail.backends.dummy.EmailBackend": "nowhere",
}


def email_is_delivered(app_configs: Any = None, **kwargs: Any) -> list[CheckMessage]:
    """With DEBUG off, e-mail that would not leave the server is worth a warning: reports
    never arrive, and password-reset links land where server logs are read."""
    where = LOCAL_EMAIL_BACKENDS.get(settings.EMAIL_BACKEND)
    if settings.DEBUG or where is None:
        return []
    return [
        Warning(
            f"E-mail goes to {where} ({settings.EMAIL_BACKEND}), not to its recipients: "
            "monthly reports are not delivered and password-reset links would go to "
            f"{where}.",
            hint="Set EMAIL_HOST (and EMAIL_PORT, EMAIL_HOST_USER, EMAIL_HOST_PASSWORD, "
            "EMAIL_USE_TLS, DEFAULT_FROM_EMAIL) to send through an SMTP server.",
            id="rimewatch.W001",
        )
    ]
