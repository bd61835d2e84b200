"""The demo fleet loads once, tells its stories, and loads again without changing anything."""

from __future__ import annotations

import datetime as dt
from collections import Counter

import pytest
from django.core.management import call_command

from diagnostics.models import Diagnosis, Flag, LeakRate
from fixtures.demo.fleet import SITES
from fixtures.demo.visits import MONTHS
from fixtures.load import load_demo_fleet
from fleet import models

pytestmark = pytest.mark.django_db

STORY_FLAGS = {
    ("GLN-WIC-2", "head_pressure_drift"),
    ("CKD-WIF-1", "start_components"),
    ("GLM-CASE-3", "leak_rate"),
}
STORY_FINDINGS = {
    "GLN-WIC-2": "condenser_heat_rejection",
    "CKD-WIF-1": "compressor_not_starting",
    "GLM-CASE-3": "undercharge",
    "LCP-RI-2": "low_evaporator_airflow",
}


def test_the_demo_fleet_tells_its_stories_and_loads_idempotently(capsys):
    """Six sites (one near 1,600 m), about 40 units, 18 months of visits up to today; the
    story units raise exactly their flags and findings, the healthy ones none; a second load
    changes nothing."""
    today = dt.date(2026, 12, 1)
    summary = load_demo_fleet(today)
    assert summary.created["sites"] == 6
    assert 35 <= summary.created["units"] <= 45
    assert models.Site.objects.filter(elevation_m__gte=1500).count() == 1
    assert models.Visit.objects.count() == len(SITES) * (MONTHS + 1)
    latest = models.ReadingSet.objects.order_by("-taken_at").first()
    assert latest.taken_at.date() >= today - dt.timedelta(days=1)
    assert set(
        models.Refrigerant.objects.filter(units__isnull=False).values_list("designation", flat=True)
    ) >= {"R-404A", "R-448A", "R-449A", "R-134a", "R-290"}

    open_flags = set(Flag.objects.filter(cleared_at__isnull=True).values_list("unit__tag", "kind"))
    assert open_flags == STORY_FLAGS

    fired = Counter()
    stored = list(Diagnosis.objects.values_list("reading_set__visit_unit__unit__tag", "document"))
    details = Diagnosis.details_of([document for _, document in stored])
    for (tag, _), row in zip(stored, details, strict=True):
        assert row["metrics"], tag  # every demo diagnosis was stored with its details
        for finding in row["findings"]:
            fired[(tag, finding["code"])] += 1
    for tag, code in STORY_FINDINGS.items():
        assert fired[(tag, code)] >= 1, (tag, code)
    story_tags = set(STORY_FINDINGS)
    healthy_noise = sum(n for (tag, _), n in fired.items() if tag not in story_tags)
    assert healthy_noise <= 0.01 * Diagnosis.objects.count(), fired
    assert LeakRate.objects.filter(over_threshold=True).exists()

    counts = {
        m: m.objects.count()
        for m in (models.Visit, models.ReadingSet, models.RefrigerantEvent, Diagnosis)
    }
    again = load_demo_fleet(today + dt.timedelta(days=3))
    assert not again.created_anything
    assert counts == {m: m.objects.count() for m in counts}
    call_command("demo_fleet", verbosity=0)
    assert "already loaded" in capsys.readouterr().out
