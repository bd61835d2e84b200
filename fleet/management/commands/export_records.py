"""Write every record (and stored report file) to one JSON file (fleet.backup says what and why)."""

from __future__ import annotations

from pathlib import Path
from typing import Any

from django.core.management.base import BaseCommand, CommandParser

from fleet.backup import EXCLUDED, FORMAT_VERSION, export_records


class Command(BaseCommand):
    help = (
        "Export every record to one JSON file (format version "
        f"{FORMAT_VERSION}), for import_records into an empty database. Users' password "
        "hashes are included unless --no-passwords: keep the file as safe as the database."
    )

    def add_arguments(self, parser: CommandParser) -> None:
        parser.add_argument("file", type=Path, help="The JSON file to write.")
        parser.add_argument(
            "--no-passwords",
            action="store_true",
            help="Leave out password hashes: every user sets a new password after an import.",
        )

    def handle(self, *args: Any, **options: Any) -> None:
        path: Path = options["file"]
        done = export_records(
            path,
            passwords=not options["no_passwords"],
            stdout=self.stdout,
            progress=self.stdout.isatty(),
            verbosity=options["verbosity"],
        )
        for name in done.missing:
            self.stderr.write(f"warning: {name} is named by a record but not stored; not exported")
        self.stdout.write(
            self.style.SUCCESS(
                f"Exported {sum(done.counts.values())} records of {len(done.counts)} kinds "
                f"and {done.files} stored files to {path}."
            )
        )
        if options["verbosity"] > 1:
            for label, n in done.counts.items():
                self.stdout.write(f"  {label:<32} {n}")
            for label, why in EXCLUDED.items():
                self.stdout.write(f"  not exported: {label} ({why})")
