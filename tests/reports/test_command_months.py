"""`monthly_reports --month` outside the service era is refused once, naming the option,
instead of failing once per site ("no such month: 10000-01")."""

from __future__ import annotations

import io

import pytest
from django.core.management import CommandError, call_command

from reports.models import MonthlyReport
from tests.factories import SiteFactory

pytestmark = pytest.mark.django_db


@pytest.mark.parametrize("month", ["9999-12", "0001-01", "1969-12", "2200-01"])
def test_a_month_outside_the_era_is_refused_before_any_site(month):
    SiteFactory()
    with pytest.raises(CommandError) as refused:
        call_command("monthly_reports", "--month", month, stdout=io.StringIO(), verbosity=0)
    assert str(refused.value) == (
        f"--month: {month} must fall between 1970-01-01 and 2199-12-31 "
        "(outside the years this service records)"
    )
    assert not MonthlyReport.objects.exists()
