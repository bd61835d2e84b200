"""The office's visit page shows why a unit has no readings (said when the visit was
submitted) and which cylinder and certification a refrigerant record was made under."""

from __future__ import annotations

import pytest
from django.urls import reverse

from tests.factories import (
    RefrigerantEventFactory,
    SiteFactory,
    UnitFactory,
    VisitFactory,
    VisitUnitFactory,
)

pytestmark = pytest.mark.django_db


def test_the_visit_page_says_why_a_unit_was_not_read(office):
    site = SiteFactory()
    visit = VisitFactory(site=site, status="submitted", work_summary="Cleaned WIC-1")
    read = VisitUnitFactory(visit=visit, unit=UnitFactory(site=site, tag="WIC-1"))
    VisitUnitFactory(
        visit=visit,
        unit=UnitFactory(site=site, tag="RI-2"),
        not_read_reason="off_by_design",
        not_read_note="emptied for the winter",
    )
    RefrigerantEventFactory(
        visit_unit=read, cylinder="CYL-0417", certification_number="TEST-CERT-0001"
    )

    page = office.get(reverse("fleet:visit", args=[visit.pk])).content.decode()

    assert "Not read:</strong> Off by design (not in use): “emptied for the winter”" in page
    assert "Cylinder CYL-0417 · Certification TEST-CERT-0001" in page
    assert page.count("Not read:") == 1  # WIC-1 has its refrigerant record, and no reason
