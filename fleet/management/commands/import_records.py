"""Load an export_records file into an empty database, all or nothing."""

from __future__ import annotations

from pathlib import Path
from typing import Any

from django.core.management.base import BaseCommand, CommandError, CommandParser

from fleet.backup import ImportRefused, import_records


class Command(BaseCommand):
    help = (
        "Import an export_records file into this database, which must be empty (migrated, "
        "no records): every record and stored file, in one transaction, counts checked."
    )

    def add_arguments(self, parser: CommandParser) -> None:
        parser.add_argument("file", type=Path, help="The JSON file export_records wrote.")

    def handle(self, *args: Any, **options: Any) -> None:
        path: Path = options["file"]
        try:
            done = import_records(
                path,
                stdout=self.stdout,
                progress=self.stdout.isatty(),
                verbosity=options["verbosity"],
            )
        except ImportRefused as exc:
            raise CommandError(f"Nothing imported: {exc}") from exc
        self.stdout.write(
            self.style.SUCCESS(
                f"Imported {sum(done.counts.values())} records of {len(done.counts)} kinds "
                f"and {done.files} stored files from {path}."
            )
        )
