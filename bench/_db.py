"""A throwaway SQLite database for a bench script: settings pointed at a temp folder, migrated.

The environment must be set before ``django.setup()`` reads the settings, so every bench
calls ``setup_database`` first and imports models only afterwards.
"""

from __future__ import annotations

import os
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent


def setup_database(tmp: Path, *, postgres: bool = False, migrate: bool = True, **env: str) -> Path:
    """Point the test settings at ``tmp/bench.sqlite3``, set ``env``, set Django up, migrate.

    Returns the database file. The saturation-table cache stays in the project's var/ (unless
    the caller's environment says otherwise), so a bench does not rebuild it every run.

    ``postgres``: use the PostgreSQL that ``DATABASE_URL`` names instead (a throwaway one:
    run the bench under ``scripts/with-postgres.sh``); refused if it names anything else.
    ``migrate=False``: a database a bench has already built (a measuring child process).
    """
    database = tmp / "bench.sqlite3"
    if postgres:
        if not os.environ.get("DATABASE_URL", "").startswith("postgres"):
            raise SystemExit("--postgres: run under scripts/with-postgres.sh (no DATABASE_URL)")
    else:
        os.environ["DATABASE_URL"] = f"sqlite:///{database}"
    os.environ["RIMEWATCH_VAR_DIR"] = str(tmp)
    os.environ.setdefault("RIMEWATCH_CACHE_DIR", str(ROOT / "var" / "cache"))
    os.environ["DJANGO_SETTINGS_MODULE"] = "config.settings_test"
    os.environ.update(env)
    import django

    django.setup()
    from django.core.management import call_command

    if migrate:
        call_command("migrate", verbosity=0, interactive=False)
    return database
