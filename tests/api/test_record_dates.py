"""The date rules the pages and the API share live in the models (``fleet/validation.py``
over ``fleet/limits.py``): the API refuses what the pages refuse, naming the field."""

from __future__ import annotations

import datetime as dt

import pytest
from django.core.exceptions import ValidationError
from django.utils import timezone

from tests.factories import ComponentFactory, SiteFactory, UnitFactory, VisitFactory

from .conftest import token_client

pytestmark = pytest.mark.django_db


def test_a_visit_window_over_two_days_is_refused(office_user):
    """A ten-year window (start this week, end ten years on) is a slipped year, not a job."""
    site = SiteFactory()
    start = timezone.now().replace(microsecond=0)
    for end in (start + dt.timedelta(days=3653), start + dt.timedelta(days=2, minutes=1)):
        body = {
            "reference": "V-LONG-1",
            "site": site.pk,
            "kind": "planned",
            "window_start": start.isoformat(),
            "window_end": end.isoformat(),
        }
        response = token_client(office_user).post("/api/v1/visits/", body, format="json")
        assert response.status_code == 400
        assert response.json() == {
            "window_end": [
                "must be at most 2 days after the start (book longer work as one visit per trip)"
            ]
        }
    body["window_end"] = (start + dt.timedelta(days=2)).isoformat()
    response = token_client(office_user).post("/api/v1/visits/", body, format="json")
    assert response.status_code == 201, response.json()


@pytest.mark.parametrize("value", ["9999-12-31", "0001-01-01", "1899-12-31"])
def test_a_unit_installed_out_of_range_is_refused(office_user, value):
    unit = UnitFactory()
    response = token_client(office_user).patch(
        f"/api/v1/units/{unit.pk}/", {"installed_on": value}, format="json"
    )
    assert response.status_code == 400
    (message,) = response.json()["installed_on"]
    assert message.startswith("must fall between 1900-01-01 and 2199-12-31")
    unit.refresh_from_db()
    assert unit.installed_on != dt.date.fromisoformat(value)


def test_the_models_refuse_dates_out_of_range_wherever_they_are_written():
    """Admin, pages and API all call ``full_clean``: the rule is the models'."""
    unit = UnitFactory.build(site=SiteFactory(), retired_on=dt.date(9999, 12, 31))
    with pytest.raises(ValidationError) as refused:
        unit.full_clean(exclude=["refrigerant"])
    assert "retired_on" in refused.value.message_dict
    part = ComponentFactory(unit=UnitFactory())
    part.removed_on = dt.date(9999, 12, 31)
    with pytest.raises(ValidationError) as refused:
        part.full_clean()
    assert "removed_on" in refused.value.message_dict
    visit = VisitFactory.build(site=SiteFactory(), reference="V-OLD-1")
    visit.window_start = dt.datetime(1, 1, 1, 8, tzinfo=dt.UTC)
    visit.window_end = dt.datetime(1, 1, 1, 12, tzinfo=dt.UTC)
    with pytest.raises(ValidationError) as refused:
        visit.full_clean()
    assert refused.value.message_dict["window_start"] == ["must fall in the years 1970 to 2199"]
