"""A throwaway database for a bench script: settings pointed at a temp folder, migrated.

SQLite in the temp folder (``setup_database``), or a database of its own on a throwaway
PostgreSQL server (``setup_postgres``, under ``scripts/with-postgres.sh``). The environment
must be set before ``django.setup()`` reads the settings, so every bench calls one of them
first and imports models only afterwards.
"""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent


def bench_environment(tmp: Path, url: str, env: dict[str, str]) -> dict[str, str]:
    """The variables a bench (or a command it runs) sets: the test settings on database
    ``url``, var/ in ``tmp``, and ``env``."""
    return {
        "RIMEWATCH_CACHE_DIR": os.environ.get("RIMEWATCH_CACHE_DIR", str(ROOT / "var" / "cache")),
        "DATABASE_URL": url,
        "RIMEWATCH_VAR_DIR": str(tmp),
        "DJANGO_SETTINGS_MODULE": "config.settings_test",
        **env,
    }


def _setup(tmp: Path, url: str, env: dict[str, str], migrate: bool = True) -> None:
    os.environ.update(bench_environment(tmp, url, env))
    import django

    django.setup()
    from django.core.management import call_command

    if migrate:
        call_command("migrate", verbosity=0, interactive=False)


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
        server = postgres_server()
        if server is None:
            raise SystemExit("--postgres: run under scripts/with-postgres.sh (no DATABASE_URL)")
        _setup(tmp, server, env, migrate=migrate)
    else:
        _setup(tmp, f"sqlite:///{database}", env, migrate=migrate)
    return database


def postgres_server() -> str | None:
    """The PostgreSQL server's URL from ``DATABASE_URL`` (as ``scripts/with-postgres.sh``
    exports it), or None when the bench does not run against one."""
    url = os.environ.get("DATABASE_URL", "")
    return url if url.startswith(("postgres://", "postgresql://")) else None


def rerun_with_postgres() -> None:
    """Run this bench again under ``scripts/with-postgres.sh`` (a throwaway server that is
    stopped and deleted afterwards), and exit with its status."""
    env = {**os.environ, "REQUIRE_POSTGRES": "1"}
    command = ["bash", str(ROOT / "scripts" / "with-postgres.sh"), sys.executable, *sys.argv]
    raise SystemExit(subprocess.run(command, env=env, check=False).returncode)


def database_url(server: str, name: str) -> str:
    """The URL of database ``name`` on the server of ``server`` (made empty: dropped first)."""
    import psycopg

    with psycopg.connect(server, autocommit=True) as connection:
        connection.execute(f'DROP DATABASE IF EXISTS "{name}"')
        connection.execute(f'CREATE DATABASE "{name}"')
    return server.rsplit("/", 1)[0] + "/" + name


def drop_database(server: str, name: str) -> None:
    """Drop database ``name`` from the server of ``server`` (its room back for the next)."""
    import psycopg

    with psycopg.connect(server, autocommit=True) as connection:
        connection.execute(f'DROP DATABASE IF EXISTS "{name}"')


def setup_postgres(tmp: Path, url: str, **env: str) -> None:
    """Point the test settings at the PostgreSQL database ``url`` (var/ in ``tmp``), set
    ``env``, set Django up, migrate."""
    _setup(tmp, url, env)
