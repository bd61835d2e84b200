"""Who may see which site's reports: the office sees every site, a manager the sites they
are listed on (``Site.managers``), anyone else none. Views filter with these querysets, so
a report outside one's reach is answered 404, never 403."""

from __future__ import annotations

from django.db.models import QuerySet

from fleet.choices import Role
from fleet.models import Site

from .models import MonthlyReport


def is_office(user) -> bool:
    if not user.is_authenticated or not user.is_active:
        return False
    return user.is_superuser or user.groups.filter(name=Role.OFFICE).exists()


def sites_within_reach(user) -> QuerySet[Site]:
    if not user.is_authenticated or not user.is_active:
        return Site.objects.none()
    if is_office(user):
        return Site.objects.all()
    return Site.objects.filter(managers=user)


def reports_within_reach(user) -> QuerySet[MonthlyReport]:
    """Stored reports the user may read; the bulky HTML column is left out."""
    return MonthlyReport.objects.filter(site__in=sites_within_reach(user)).defer("html")
