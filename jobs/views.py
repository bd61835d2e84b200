"""The office's view of background work: the jobs that failed, newest first, with whether
another attempt is queued or the job gave up."""

from __future__ import annotations

from django.conf import settings
from django.http import HttpRequest, HttpResponse
from django.views.decorators.http import require_GET
from django_tasks import TaskResultStatus
from django_tasks_db.models import DBTaskResult

from fleet.choices import Role
from fleet.views.base import page, within_reach

#: The failures a page lists (the admin's task results hold every one).
SHOWN = 200


@within_reach(Role.OFFICE)
@require_GET
def failed_jobs(request: HttpRequest) -> HttpResponse:
    attempts: int = settings.RIMEWATCH_JOB_ATTEMPTS
    rows = []
    for result in DBTaskResult.objects.filter(status=TaskResultStatus.FAILED).order_by(
        "-finished_at"
    )[:SHOWN]:
        kwargs = result.args_kwargs.get("kwargs", {})
        attempt = int(kwargs.get("attempt", 1))
        lines = result.traceback.strip().splitlines()
        rows.append(
            {
                "name": result.task_path.rsplit(".", 1)[-1].replace("_", " "),
                "arguments": ", ".join(
                    [str(a) for a in result.args_kwargs.get("args", [])]
                    + [f"{k}={v}" for k, v in kwargs.items() if k != "attempt"]
                ),
                "attempt": attempt,
                "retried": attempt < attempts,
                "failed_at": result.finished_at,
                "error": lines[-1] if lines else result.exception_class_path,
            }
        )
    waiting = DBTaskResult.objects.filter(status=TaskResultStatus.READY).count()
    return page(
        request,
        "jobs/failed.html",
        {"rows": rows, "attempts": attempts, "waiting": waiting, "shown": SHOWN},
    )
