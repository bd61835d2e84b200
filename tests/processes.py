"""Fresh processes on the production settings, as a deployment starts them: for tests that
need a second process (a cache another worker shares, a server holding its own pooled
database connection)."""

from __future__ import annotations

import os

#: Long enough for Django's check of SECRET_KEY; used by no deployment.
THROWAWAY_SECRET_KEY = "throwaway-key-for-a-test-process-" + "x" * 40


def production_env(**extra: str) -> dict[str, str]:
    """This process's environment on ``config.settings`` (not the test settings), without
    DEBUG or a database URL of its own unless ``extra`` gives one."""
    env = {
        key: value
        for key, value in os.environ.items()
        if key not in {"DJANGO_SETTINGS_MODULE", "DEBUG", "DATABASE_URL"}
    }
    env.update(
        DJANGO_SETTINGS_MODULE="config.settings",
        SECRET_KEY=THROWAWAY_SECRET_KEY,
        EMAIL_HOST="smtp.example.com",
        **extra,
    )
    return env
