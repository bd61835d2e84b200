"""Generate and store the monthly health reports of one month, with a progress bar.

    python manage.py monthly_reports --month 2026-03 [--site ID] [--out DIR] [--email]
    python manage.py monthly_reports --month 2026-03 --enqueue [--site ID] [--email]

Each run stores a new version of each site-month (earlier versions stay). ``--out`` also
writes each PDF into a folder; ``--email`` sends each report to the site's managers.
A site that fails is reported and the others still run; the command then exits non-zero.

``--enqueue`` makes nothing here: it claims each site's month and enqueues one job per site
for the workers (``manage.py db_worker``, as many as run, on any machine) to share, as the
scheduler does on the first of the month. A site-month claimed already (by the scheduler
or an earlier --enqueue) is left to that claim, so no site is made twice.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

from django.core.management.base import BaseCommand, CommandError, CommandParser
from django.utils import timezone
from tqdm import tqdm

from fleet.limits import SERVICE_ERA
from fleet.models import Site
from fleet.validation import date_problem
from jobs.schedule import enqueue_month
from reports.months import Month
from reports.services import email_report, generate_monthly_report


def _month(text: str) -> Month:
    """The month asked for, within ``SERVICE_ERA`` (9999-12 has no month after it to end
    on: refused here, not once per site)."""
    try:
        month = Month.parse(text)
    except ValueError as exc:
        raise CommandError(f"--month: {exc}") from exc
    problem = date_problem(month.first_day, SERVICE_ERA)
    if problem:
        raise CommandError(f"--month: {text} {problem}")
    return month


class Command(BaseCommand):
    help = "Generate and store the monthly site health reports for --month YYYY-MM."

    def add_arguments(self, parser: CommandParser) -> None:
        parser.add_argument("--month", required=True, help="The month to report on, YYYY-MM.")
        parser.add_argument("--site", type=int, help="Only this site (its id).")
        parser.add_argument("--out", type=Path, help="Also write each PDF into this folder.")
        parser.add_argument(
            "--email", action="store_true", help="Email each report to the site's managers."
        )
        parser.add_argument(
            "--enqueue",
            action="store_true",
            help="Enqueue one job per site for the workers instead of making them here.",
        )

    def handle(self, *args: Any, **options: Any) -> None:
        month = _month(options["month"])
        wanted = Site.objects.select_related("customer").order_by("customer__name", "name")
        if options["site"] is not None:
            wanted = wanted.filter(pk=options["site"])
            if not wanted.exists():
                raise CommandError(f"--site: no site with id {options['site']}")
        out: Path | None = options["out"]
        if options["enqueue"]:
            if out is not None:
                raise CommandError("--out: the workers store the reports; leave --out out")
            sites = list(wanted)
            enqueued = enqueue_month(month, sites, email=options["email"])
            self.stdout.write(
                self.style.SUCCESS(
                    f"{enqueued} report job(s) for {month} enqueued; "
                    f"{len(sites) - enqueued} site(s) claimed already."
                )
            )
            return
        if out is not None:
            out.mkdir(parents=True, exist_ok=True)
        now = timezone.now()
        failures: list[str] = []
        sites = list(wanted)
        quiet = options["verbosity"] == 0
        with tqdm(total=len(sites), desc=f"reports {month}", unit="site", disable=quiet) as bar:
            for site in sites:
                bar.set_postfix_str(site.name[:30])
                try:
                    report = generate_monthly_report(site, month, now)
                except Exception as exc:  # one bad site must not stop the month's run
                    failures.append(f"{site.name} (id {site.pk}): {exc}")
                    bar.update(1)
                    continue
                line = f"{site.name}: version {report.version}, {report.page_count} pages"
                if out is not None:
                    with report.pdf.open("rb") as fh:
                        (out / report.filename).write_bytes(fh.read())
                    line += f", written to {out / report.filename}"
                if options["email"]:
                    sent = email_report(report)
                    line += f", emailed to {sent} manager{'s' if sent != 1 else ''}"
                with tqdm.external_write_mode():
                    self.stdout.write(line)
                bar.update(1)
        if failures:
            raise CommandError("reports failed for " + "; ".join(failures))
        self.stdout.write(self.style.SUCCESS(f"{len(sites)} report(s) for {month} stored."))
