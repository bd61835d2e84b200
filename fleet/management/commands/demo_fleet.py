"""Load the invented demo fleet (idempotent) and print the demo sign-ins."""

from __future__ import annotations

from typing import Any

from django.core.management.base import BaseCommand
from django.utils import timezone
from tqdm import tqdm

from fixtures.load import load_demo_fleet


class Command(BaseCommand):
    help = "Load the invented demo fleet: sites, units and 18 months of visits (re-runnable)."

    def handle(self, *args: Any, **options: Any) -> None:
        bar = tqdm(total=0, desc="demo visits", unit="visit", disable=options["verbosity"] == 0)

        def progress(done: int, total: int) -> None:
            bar.total = total
            bar.update(done - bar.n)

        summary = load_demo_fleet(timezone.localdate(), progress=progress)
        bar.close()
        if summary.created_anything:
            made = ", ".join(
                f"{n} {what.replace('_', ' ')}" for what, n in summary.created.items() if n
            )
            self.stdout.write(self.style.SUCCESS(f"Demo fleet loaded: {made}."))
        else:
            self.stdout.write("Demo fleet already loaded; nothing changed.")
        self.stdout.write("Demo sign-ins (invented users; change these on any shared machine):")
        for username, role, password in summary.users:
            self.stdout.write(f"  {role:<11} {username:<18} {password}")
