"""Development settings: DEBUG on and a key fit only for a developer's own machine.

``make run`` selects this module. It fills in the two variables production must set
itself, then reads everything else as production does.
"""

from __future__ import annotations

import os

_DEVELOPMENT = {"DEBUG": "1", "SECRET_KEY": "dev-only-insecure-key-never-use-in-production"}
_FILLED_IN = [name for name in _DEVELOPMENT if name not in os.environ]
os.environ.update({name: _DEVELOPMENT[name] for name in _FILLED_IN})
try:
    from .settings import *  # noqa: F403
finally:
    # Only for reading the settings: processes this one starts get the environment it had.
    for name in _FILLED_IN:
        del os.environ[name]

ALLOWED_HOSTS = [*ALLOWED_HOSTS, "testserver"]  # noqa: F405
# Files as they are in static/, found by the finders: no collectstatic while developing.
STORAGES = {
    **STORAGES,  # noqa: F405
    "staticfiles": {"BACKEND": "django.contrib.staticfiles.storage.StaticFilesStorage"},
}
STATIC_ROOT.mkdir(parents=True, exist_ok=True)  # noqa: F405 -- WhiteNoise expects it
# Mail (monthly reports with their PDFs, alerts, password resets) goes to files under
# var/mail while developing, one file a message, rather than filling the terminal; an
# EMAIL_HOST or EMAIL_BACKEND in the environment still wins.
if not EMAIL_HOST and "EMAIL_BACKEND" not in os.environ:  # noqa: F405
    EMAIL_BACKEND = "django.core.mail.backends.filebased.EmailBackend"
    EMAIL_FILE_PATH = VAR_DIR / "mail"  # noqa: F405
