"""Recompute trends and flags for every unit in service."""

from __future__ import annotations

from typing import Any

from django.core.management.base import BaseCommand

from diagnostics.services import refresh_flags


class Command(BaseCommand):
    help = "Recompute every unit's trends and open, update or clear its flags."

    def handle(self, *args: Any, **options: Any) -> None:
        result = refresh_flags()
        for unit in result.skipped:
            self.stdout.write(self.style.WARNING(str(unit)))
        summary = (
            f"Flags: {result.opened} opened, {result.updated} changed, {result.cleared} cleared."
        )
        if result.skipped:
            summary += f" {len(result.skipped)} unit(s) skipped, named above."
        self.stdout.write(summary)
