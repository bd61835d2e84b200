"""Enqueue the scheduled jobs as they fall due, once a minute (``--once``: one pass).

    python manage.py run_scheduler [--once] [--interval SECONDS]

The jobs themselves run in the worker (``manage.py db_worker``). Several schedulers may
run at once (on several machines, say): each job's claim is unique, so each runs once.
"""

from __future__ import annotations

import logging
import time
from typing import Any

from django.core.management.base import BaseCommand, CommandParser
from django.db import close_old_connections

from jobs.schedule import Tick, tick

log = logging.getLogger(__name__)


class Command(BaseCommand):
    help = "Enqueue the monthly reports, nightly flag refresh, digest and alerts as they fall due."

    def add_arguments(self, parser: CommandParser) -> None:
        parser.add_argument("--once", action="store_true", help="One pass, then exit.")
        parser.add_argument(
            "--interval", type=float, default=60.0, help="Seconds between passes (default 60)."
        )

    def handle(self, *args: Any, **options: Any) -> None:
        while True:
            try:
                done = tick()
            except Exception:  # a database outage, say: try again at the next pass
                if options["once"]:
                    raise
                log.exception("scheduler pass failed")
                done = Tick(0, (), 0)
            if done.reports or done.daily or done.alerts or options["verbosity"] > 1:
                self.stdout.write(
                    f"enqueued {done.reports} report(s), daily: {', '.join(done.daily) or '-'}, "
                    f"{done.alerts} alert(s)"
                )
            if options["once"]:
                return
            time.sleep(options["interval"])
            # As after a request: a connection gone stale or past its age is replaced.
            close_old_connections()
