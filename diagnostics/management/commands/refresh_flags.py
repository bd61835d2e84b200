"""Recompute trends and flags for every unit in service."""

from __future__ import annotations

from typing import Any

from django.core.management.base import BaseCommand

from diagnostics.services import refresh_flags


class Command(BaseCommand):
    help = "Recompute every unit's trends and open, update or clear its flags."

    def handle(self, *args: Any, **options: Any) -> None:
        result = refresh_flags()
        self.stdout.write(
            f"Flags: {result.opened} opened, {result.updated} changed, {result.cleared} cleared."
        )
