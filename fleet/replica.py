"""Reads a read replica may answer: Django's database router for it.

With ``REPLICA_DATABASE_URL`` set the settings name a second database alias
(``RIMEWATCH_READ_REPLICA``, "replica"): a PostgreSQL standby that follows the primary.
Reads of our own records made inside ``replica_reads()`` go to it: the gathering of a
report (``reports.services``) and the pages' GET requests (``config.replica``). Everything
else reads the primary: every write, the API (a client reads back what it just wrote),
and Django's own tables (sessions, the cache table, sign-in attempts, the job queue),
whose next read must see the last write. Without a replica every read is the primary's.
"""

from __future__ import annotations

from collections.abc import Iterator
from contextlib import contextmanager
from contextvars import ContextVar

from django.conf import settings
from django.db import DEFAULT_DB_ALIAS
from django.db.models import Model

#: The apps whose records a replica may serve inside ``replica_reads``.
REPLICA_APPS = frozenset({"fleet", "diagnostics", "reports", "alerts"})

_REPLICA_READS: ContextVar[bool] = ContextVar("replica_reads", default=False)


def replica_alias() -> str:
    """The replica's alias, or "" when there is none."""
    alias: str = getattr(settings, "RIMEWATCH_READ_REPLICA", "")
    return alias


@contextmanager
def replica_reads() -> Iterator[None]:
    """Within the block, reads of our records may come from the replica (a moment behind
    the primary: only for work that does not read back its own writes)."""
    token = _REPLICA_READS.set(True)
    try:
        yield
    finally:
        _REPLICA_READS.reset(token)


class ReplicaRouter:
    """Reads inside ``replica_reads`` to the replica, everything else to the primary."""

    def db_for_read(self, model: type[Model], **hints: object) -> str | None:
        alias = replica_alias()
        if alias and _REPLICA_READS.get() and model._meta.app_label in REPLICA_APPS:
            return alias
        return None

    def db_for_write(self, model: type[Model], **hints: object) -> str:
        return DEFAULT_DB_ALIAS

    def allow_relation(self, obj1: Model, obj2: Model, **hints: object) -> bool | None:
        """A record read from the replica is the primary's record: they may be related."""
        same = {DEFAULT_DB_ALIAS, replica_alias()}
        return True if {obj1._state.db, obj2._state.db} <= same else None

    def allow_migrate(self, db: str, app_label: str, **hints: object) -> bool:
        """Only the primary is migrated: the replica copies its tables."""
        return db == DEFAULT_DB_ALIAS
