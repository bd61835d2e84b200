"""Every record as one JSON file, and back into an empty database with nothing lost.

The records are Django's own: ``dumpdata`` writes them (natural keys for content types and
permissions, which differ between databases; every other row keeps its primary key, which
the audit trail and the admin's log name) and ``loaddata`` reads them back in one
transaction, resetting PostgreSQL's sequences. This module adds what those two lack:

- a format name and version, and the migrations the records were written under, checked
  before anything is loaded (loaddata would load into another schema until a row fails);
- a refusal to load into a database that already holds records (loaddata would overwrite
  rows with the same primary key and keep the others: a mix nobody asked for);
- the stored files (report PDFs), which dumpdata names but does not carry;
- many-to-many lists in a fixed order, so one database exported twice reads the same;
- times kept to the microsecond (Django's JSON cuts them to the millisecond:
  ``fleet.exact_json``);
- the counts per model, checked after the load, before the transaction commits.

Computed results (diagnoses, flags, leak rates, stored reports) are exported as stored, not
recomputed: a flag's history (when it opened, who acknowledged it) cannot be recomputed,
and a report cites the diagnoses of the algorithm version it was made with. ``rescore``
after an import brings them to the running version when that is wanted.

Users keep their password hashes so that sign-ins survive a restore; a hash is a secret
(it can be attacked offline), so an export is kept as carefully as the database itself, or
made with ``passwords=False`` (every password unusable: each user sets a new one). API
tokens (keys stored in the clear), sessions, content types and permissions are not
exported: phones sign in again, and migrate creates the rest.
"""

from __future__ import annotations

import base64
import hashlib
import json
import sys
import tempfile
from collections import Counter
from collections.abc import Iterable
from dataclasses import dataclass
from io import TextIOBase
from pathlib import Path
from typing import Any, TextIO

from django.apps import apps
from django.contrib.auth.hashers import UNUSABLE_PASSWORD_PREFIX
from django.core import serializers
from django.core.files.base import ContentFile
from django.core.files.storage import default_storage
from django.core.management import call_command
from django.db import connection, models, transaction
from django.db.migrations.recorder import MigrationRecorder
from tqdm import tqdm

FORMAT = "rimewatch-records"
#: dumpdata's JSON with whole microseconds (fleet.exact_json).
DUMP_FORMAT = "rimewatch-exact-json"
FORMAT_VERSION = 1

#: Not exported, and why (labels as dumpdata's --exclude takes them).
EXCLUDED = {
    "contenttypes": "created by migrate; referred to by natural key",
    "auth.permission": "created by migrate; referred to by natural key",
    "sessions": "sign-ins in progress; users sign in again",
    "authtoken": "API keys stored in the clear; phones sign in again",
    "axes": "sign-in failures and lockouts: a restore starts with none, as after a reset",
    "django_tasks_database": "the job queue: a waiting job imported elsewhere would run twice (an "
    "e-mail sent again), and a password-reset job holds a working link",
}

#: Reference rows the migrations seed into every new database (the role groups, the
#: refrigerant catalogue): an import replaces them with the export's own.
SEEDED = ("auth.group", "fleet.refrigerant")


class ImportRefused(Exception):
    """The file cannot be imported into this database; the message says why and what to do."""


@dataclass(frozen=True)
class Exported:
    """What was written or loaded: rows per model, stored files, and the files a record
    names that the storage no longer had (the record still names them, as before)."""

    counts: dict[str, int]
    files: int
    missing: tuple[str, ...] = ()


def _labels() -> set[str]:
    return {model._meta.label_lower for model in exported_models()}


def exported_models() -> list[type[models.Model]]:
    """Every model whose rows an export carries, in the order Django lists them."""
    excluded_apps = {label for label in EXCLUDED if "." not in label}
    return [
        model
        for model in apps.get_models()
        if model._meta.app_label not in excluded_apps
        and model._meta.label_lower not in EXCLUDED
        and model._meta.managed
        and not model._meta.proxy
    ]


def applied_migrations() -> dict[str, list[str]]:
    """The migrations applied to this database, by app."""
    applied: dict[str, list[str]] = {}
    for app_label, name in sorted(MigrationRecorder(connection).applied_migrations()):
        applied.setdefault(app_label, []).append(name)
    return applied


Output = TextIO | TextIOBase | None


def export_records(
    path: Path,
    *,
    passwords: bool = True,
    stdout: Output = None,
    verbosity: int = 1,
    progress: bool = False,
) -> Exported:
    """Write every record (and stored file) to ``path``; with ``progress`` (a terminal),
    dumpdata shows its progress bar."""
    serializers.register_serializer(DUMP_FORMAT, "fleet.exact_json")
    with tempfile.TemporaryDirectory() as tmp:
        dump = Path(tmp) / "records.json"
        call_command(
            "dumpdata",
            exclude=list(EXCLUDED),
            natural_foreign=True,
            output=str(dump),
            format=DUMP_FORMAT,
            stdout=_terminal(stdout, progress),
            verbosity=verbosity,
        )
        records: list[dict[str, Any]] = json.loads(dump.read_text(encoding="utf-8"))
    _fix_order(records)
    if not passwords:
        for record in records:
            if record["model"] == "auth.user":
                record["fields"]["password"] = UNUSABLE_PASSWORD_PREFIX
    stored, missing = _stored_files(verbosity)
    files = [
        {"name": name, "sha256": hashlib.sha256(data).hexdigest(), "content": _b64(data)}
        for name, data in stored
    ]
    found = Counter(record["model"] for record in records)
    counts = {label: found[label] for label in sorted(_labels())}
    document = {
        "format": FORMAT,
        "format_version": FORMAT_VERSION,
        "migrations": applied_migrations(),
        "counts": counts,
        "records": records,
        "files": files,
    }
    with path.open("w", encoding="utf-8") as out:
        json.dump(document, out, ensure_ascii=False, indent=1)
        out.write("\n")
    return Exported(counts=counts, files=len(files), missing=missing)


def import_records(
    path: Path, *, stdout: Output = None, verbosity: int = 1, progress: bool = False
) -> Exported:
    """Load an export into this database, which must hold no records yet; with
    ``progress``, loaddata counts the records as it goes (its verbosity 3)."""
    document = _read(path)
    _check_schema(document["migrations"])
    _check_empty()
    files: list[dict[str, str]] = document["files"]
    for item in files:
        data = base64.b64decode(item["content"])
        if hashlib.sha256(data).hexdigest() != item["sha256"]:
            raise ImportRefused(f"the stored file {item['name']!r} is damaged in the export")
    to_write = [item for item in files if not _same_file_there(item)]
    with tempfile.TemporaryDirectory() as tmp, transaction.atomic():
        for label in SEEDED:
            apps.get_model(label)._base_manager.all().delete()
        fixture = Path(tmp) / "records.json"
        fixture.write_text(json.dumps(document["records"], ensure_ascii=False), encoding="utf-8")
        loud = 3 if progress and verbosity > 0 else verbosity
        call_command("loaddata", str(fixture), stdout=_terminal(stdout, progress), verbosity=loud)
        counts = {
            label: apps.get_model(label)._base_manager.count() for label in document["counts"]
        }
        if counts != document["counts"]:
            lost = {k: (n, counts.get(k)) for k, n in document["counts"].items() if counts[k] != n}
            raise ImportRefused(f"the counts after loading differ (exported, loaded): {lost}")
        for item in tqdm(
            to_write, desc="stored files", unit="file", disable=verbosity == 0 or not to_write
        ):
            default_storage.save(item["name"], ContentFile(base64.b64decode(item["content"])))
    return Exported(counts=counts, files=len(files))


def _terminal(stdout: Output, progress: bool) -> Output:
    """The terminal itself for progress lines (carriage returns, no line ends), which a
    command's output wrapper would end each with a new line."""
    return sys.stdout if progress else stdout


def _read(path: Path) -> dict[str, Any]:
    try:
        document = json.loads(path.read_text(encoding="utf-8"))
    except (OSError, UnicodeDecodeError, json.JSONDecodeError) as exc:
        raise ImportRefused(f"{path} is not a readable export: {exc}") from exc
    if not isinstance(document, dict) or document.get("format") != FORMAT:
        raise ImportRefused(f"{path} is not a Rimewatch export (no format {FORMAT!r})")
    if document.get("format_version") != FORMAT_VERSION:
        raise ImportRefused(
            f"{path} is in format version {document.get('format_version')!r}; this release "
            f"reads version {FORMAT_VERSION}"
        )
    return document


def _check_schema(exported: dict[str, list[str]]) -> None:
    """The export's migrations must be this database's: the records fit no other schema."""
    here = applied_migrations()
    differing = sorted(
        app for app in exported.keys() | here.keys() if exported.get(app) != here.get(app)
    )
    if differing:
        raise ImportRefused(
            "the export was made under other migrations than this database has "
            f"({', '.join(differing)}): import with the release that exported it, into a "
            "database migrated by that release, then upgrade as usual"
        )


def _check_empty() -> None:
    held = {
        model._meta.label_lower: n
        for model in exported_models()
        if model._meta.label_lower not in SEEDED and (n := model._base_manager.count())
    }
    if held:
        listed = ", ".join(f"{n} {label}" for label, n in sorted(held.items()))
        raise ImportRefused(
            f"this database already holds records ({listed}); import only into an empty "
            "database: create a new one and run migrate first"
        )


def _fix_order(records: Iterable[dict[str, Any]]) -> None:
    """Sort each many-to-many list (ids or natural keys): a database returns them in no
    promised order."""
    many = {
        model._meta.label_lower: [f.name for f in model._meta.many_to_many]
        for model in exported_models()
    }
    for record in records:
        for name in many.get(record["model"], []):
            if name in record["fields"]:
                record["fields"][name].sort()


def _file_fields() -> list[tuple[type[models.Model], models.FileField]]:
    return [
        (model, field)
        for model in exported_models()
        for field in model._meta.concrete_fields
        if isinstance(field, models.FileField)
    ]


def _same_file_there(item: dict[str, str]) -> bool:
    """Whether the storage already has this file as exported (a restore onto the machine
    that made the export); another file under its name is refused, never overwritten."""
    if not default_storage.exists(item["name"]):
        return False
    with default_storage.open(item["name"], "rb") as stored:
        if hashlib.sha256(stored.read()).hexdigest() == item["sha256"]:
            return True
    raise ImportRefused(
        f"another file is stored as {item['name']!r}; import with an empty media folder "
        "(MEDIA_ROOT)"
    )


def _stored_files(verbosity: int) -> tuple[list[tuple[str, bytes]], tuple[str, ...]]:
    """Every stored file a record names (by name), and the names the storage lacks."""
    names = sorted(
        {
            name
            for model, field in _file_fields()
            for name in model._base_manager.exclude(**{field.name: ""}).values_list(
                field.name, flat=True
            )
        }
    )
    found = []
    missing = []
    for name in tqdm(names, desc="stored files", unit="file", disable=verbosity == 0 or not names):
        if not default_storage.exists(name):
            missing.append(name)
            continue
        with default_storage.open(name, "rb") as stored:
            found.append((name, stored.read()))
    return found, tuple(missing)


def _b64(data: bytes) -> str:
    return base64.b64encode(data).decode("ascii")
