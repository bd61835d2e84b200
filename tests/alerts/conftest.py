"""The jobs' in-process runner (``tests.jobs.conftest``) for the alert deliveries."""

from tests.jobs.conftest import run_jobs

__all__ = ["run_jobs"]
