"""A task that is retried: a failed run enqueues the next attempt with a growing wait.

django-tasks (like Django 6's django.tasks) runs each enqueued job once; a failure is stored
with its traceback and no more. ``retried`` wraps a function so that a failed attempt
enqueues the next one (``attempt`` + 1) to run after 1, 4, 16 ... times
``RIMEWATCH_JOB_FIRST_RETRY_SECONDS``, up to ``RIMEWATCH_JOB_ATTEMPTS`` in all, then re-raises
so the failure stays on the record (the office's failed-jobs page lists it).
"""

from __future__ import annotations

import datetime as dt
import functools
import logging
from collections.abc import Callable
from typing import Any, TypeVar

from django.conf import settings
from django.utils import timezone
from django_tasks import task
from django_tasks.base import Task

log = logging.getLogger(__name__)

T = TypeVar("T")

#: Each wait is this many times the one before.
BACKOFF_FACTOR = 4


def retry_delay(attempt: int) -> dt.timedelta:
    """How long after failed attempt ``attempt`` (1 = the first) the next one runs."""
    first: int = settings.RIMEWATCH_JOB_FIRST_RETRY_SECONDS
    return dt.timedelta(seconds=first * BACKOFF_FACTOR ** (attempt - 1))


def retried(func: Callable[..., T]) -> Task[..., T]:
    """``func`` as a task taking one more keyword, ``attempt`` (1 when first enqueued)."""

    @functools.wraps(func)
    def run(*args: Any, attempt: int = 1, **kwargs: Any) -> T:
        try:
            return func(*args, **kwargs)
        except Exception:
            attempts: int = settings.RIMEWATCH_JOB_ATTEMPTS
            if attempt < attempts:
                later = timezone.now() + retry_delay(attempt)
                job.using(run_after=later).enqueue(*args, attempt=attempt + 1, **kwargs)
                log.warning("%s attempt %d failed; retrying at %s", job.name, attempt, later)
            else:
                log.error("%s failed %d times; giving up", job.name, attempt)
            raise

    job: Task[..., T] = task(run)
    return job
