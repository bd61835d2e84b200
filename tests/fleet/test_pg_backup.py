"""The documented PostgreSQL backup (scripts/pg-backup.sh: pg_dump's custom format, the
newest N kept) restores with pg_restore into a new database holding every row."""

from __future__ import annotations

import os
import subprocess
from pathlib import Path

import psycopg
import pytest
from django.db import connection

from tests.factories import UserFactory
from tests.reports.factories import FlagFactory

pytestmark = [
    pytest.mark.skipif(
        connection.vendor != "postgresql",
        reason="pg_dump and pg_restore need PostgreSQL; `make test` runs this on a throwaway one",
    ),
    # pg_dump reads from another connection: the rows must be committed.
    pytest.mark.django_db(transaction=True, serialized_rollback=True),
]

SCRIPTS = Path(__file__).resolve().parents[2] / "scripts"


def _url(name: str) -> str:
    s = connection.settings_dict
    return f"postgres://{s['USER']}@{s['HOST']}:{s['PORT']}/{name}"


def _run(*command: str, **env: str) -> str:
    done = subprocess.run(
        command, env={**os.environ, **env}, capture_output=True, text=True, check=False
    )
    assert done.returncode == 0, done.stderr
    return done.stdout


def _counts(url: str) -> dict[str, int]:
    lines = _run("bash", str(SCRIPTS / "pg-row-counts.sh"), url).split()
    return {table: int(n) for table, n in (line.split("|") for line in lines)}


def test_a_nightly_dump_restores_into_a_new_database_with_every_row(tmp_path):
    FlagFactory.create_batch(3)  # units, their sites, customers and refrigerants, and flags
    UserFactory(username="office9", role="office")
    source = _url(connection.settings_dict["NAME"])
    written = [
        _run(
            "bash",
            str(SCRIPTS / "pg-backup.sh"),
            DATABASE_URL=source,
            BACKUP_DIR=str(tmp_path),
            BACKUP_KEEP="2",
        ).strip()
        for _ in range(3)
    ]
    kept = sorted(str(p) for p in tmp_path.glob("rimewatch-*.dump"))
    assert kept == sorted(written[1:]), "the newest two are kept"
    assert not list(tmp_path.glob(".*partial"))

    restored = connection.settings_dict["NAME"] + "_restored"
    with psycopg.connect(_url("postgres"), autocommit=True) as admin:
        admin.execute(f'DROP DATABASE IF EXISTS "{restored}"')
        admin.execute(f'CREATE DATABASE "{restored}"')
        try:
            _run(
                "pg_restore",
                "--no-owner",
                "--no-privileges",
                "--exit-on-error",
                f"--dbname={_url(restored)}",
                written[-1],
            )
            before, after = _counts(source), _counts(_url(restored))
        finally:
            admin.execute(f'DROP DATABASE "{restored}"')
    assert after == before
    assert before["diagnostics_flag"] == 3
    assert before["auth_user"] == 1
    assert before["fleet_refrigerant"] > 10  # the seeded catalogue came along
