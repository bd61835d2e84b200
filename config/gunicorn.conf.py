"""Gunicorn settings for serving Rimewatch: ``gunicorn -c config/gunicorn.conf.py config.wsgi``.

Only what serving needs beyond gunicorn's defaults; the bind address, worker count and
the rest come from the command line or ``GUNICORN_CMD_ARGS``.
"""

from __future__ import annotations

import gc
import os


def post_worker_init(worker: object) -> None:
    """Load every view, serializer and module the URLs reach, then freeze all that in
    Python's garbage collector: the code, tables and caches loaded once are never garbage,
    yet a full collection walks them all (about 100 ms here, one request in a few hundred
    stalled and the requests queued behind it). Frozen, a full collection walks only what
    requests left behind."""
    from django.urls import get_resolver

    get_resolver().url_patterns  # noqa: B018 -- imports the URL configuration's views
    gc.collect()
    gc.freeze()


def when_ready(server: object) -> None:
    """Run Django's system checks once as the server starts, as `runserver` does: a
    warning (e-mail that would go to the log, say) is printed, an error stops the start."""
    os.environ.setdefault("DJANGO_SETTINGS_MODULE", "config.settings")
    import django
    from django.core.management import call_command

    django.setup()
    call_command("check")
