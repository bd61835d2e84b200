"""A small fleet for the office pages: two sites, a manager granted one of them, visits of
two technicians, a submitted visit with a stored diagnosis, an open flag and a leak rate
over its limit. All values are synthetic test inputs."""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass

import pytest
from django.test import Client
from django.utils import timezone

from diagnostics.models import Diagnosis, Flag, LeakRate
from fleet.models import Site, Unit, Visit
from tests.factories import (
    ReadingSetFactory,
    RefrigerantEventFactory,
    SiteFactory,
    UnitFactory,
    VisitFactory,
    VisitUnitFactory,
    document_for,
)

#: A fault on the superheat and a finding with the sight-glass evidence (synthetic values).
METRICS = {
    "superheat": (12.0, 5.0, 3.0, 7.0, "fault", 15.0),
    "box_temp": (3.0, 2.0, 0.0, 4.0, "ok", 0.0),
}
DOCUMENT = document_for(metrics=METRICS, findings={"undercharge": 0.8}, signals=("bubbles",))


def store_diagnosis(reading_set, score: float = 72.0, document: dict = DOCUMENT) -> Diagnosis:
    diagnosis, _ = Diagnosis.objects.update_or_create(
        reading_set=reading_set,
        defaults={
            "algorithm_version": "test-1",
            "score": score,
            "document": document,
            "computed_at": timezone.now(),
        },
    )
    return diagnosis


def open_flag(unit: Unit, kind: str = "head_pressure_drift", **extra) -> Flag:
    now = timezone.now()
    return Flag.objects.create(
        unit=unit,
        kind=kind,
        severity=extra.pop("severity", "warning"),
        summary=extra.pop("summary", "Condenser split rising about 0.6 K a month"),
        evidence=[{"text": "split 14 K against a design of 11 K"}],
        opened_at=now,
        updated_at=now,
        **extra,
    )


def over_limit_addition(visit_unit, occurred_on: dt.date, due_in_days: int = 30) -> LeakRate:
    event = RefrigerantEventFactory(visit_unit=visit_unit, amount_kg=3.0, occurred_on=occurred_on)
    return LeakRate.objects.create(
        event=event,
        rule_set="test rules",
        method="rolling_average",
        rolling_average_percent=40.0,
        annualizing_percent=45.0,
        threshold_percent=20.0,
        over_threshold=True,
        repair_due_on=occurred_on + dt.timedelta(days=due_in_days),
        verification_due_on=occurred_on + dt.timedelta(days=due_in_days + 10),
        computed_at=timezone.now(),
    )


@dataclass
class World:
    site: Site
    other_site: Site
    unit: Unit
    other_unit: Unit
    own_visit: Visit
    other_visit: Visit
    submitted: Visit
    flag: Flag
    leak: LeakRate


def build_world(technician, other_technician, manager, extra: int = 0) -> World:
    """The fleet; ``extra`` adds that many more sites, units, visits, flags and leaks, so a
    page's query count can be compared for one object and many."""
    site = SiteFactory(name="Harbour Deli")
    other_site = SiteFactory(name="Mill Bakery")
    site.managers.add(manager)
    unit = UnitFactory(site=site, tag="HD-WIC-1", refrigerant=_r("R-404A"))
    other_unit = UnitFactory(site=other_site, tag="MB-RI-1", refrigerant=_r("R-290"))
    now = timezone.now()
    own_visit = VisitFactory(
        site=site, status="scheduled", window_start=now, technicians=[technician]
    )
    VisitUnitFactory(visit=own_visit, unit=unit)
    other_visit = VisitFactory(
        site=other_site, status="scheduled", window_start=now, technicians=[other_technician]
    )
    VisitUnitFactory(visit=other_visit, unit=other_unit)
    submitted = VisitFactory(
        site=site,
        status="submitted",
        submitted_at=now,
        window_start=now - dt.timedelta(days=1),
        technicians=[technician],
    )
    covered = VisitUnitFactory(visit=submitted, unit=unit)
    store_diagnosis(ReadingSetFactory(visit_unit=covered))
    flag = open_flag(unit)
    leak = over_limit_addition(covered, timezone.localdate() - dt.timedelta(days=3))
    for i in range(extra):
        more_site = SiteFactory(name=f"Extra site {i}")
        more_site.managers.add(manager)
        more_unit = UnitFactory(site=more_site, tag=f"EX-{i}")
        visit = VisitFactory(
            site=more_site,
            status="submitted",
            submitted_at=now,
            window_start=now - dt.timedelta(hours=2 + i),
            technicians=[technician],
        )
        vu = VisitUnitFactory(visit=visit, unit=more_unit)
        store_diagnosis(ReadingSetFactory(visit_unit=vu), score=60 + i)
        extra_vu = VisitUnitFactory(visit=visit, unit=UnitFactory(site=more_site))
        store_diagnosis(ReadingSetFactory(visit_unit=extra_vu))
        open_flag(more_unit, severity="urgent")
        over_limit_addition(vu, timezone.localdate() - dt.timedelta(days=i))
        UnitFactory(site=site, tag=f"HD-EX-{i}")
    return World(site, other_site, unit, other_unit, own_visit, other_visit, submitted, flag, leak)


def _r(designation: str):
    from tests.factories import refrigerant

    return refrigerant(designation)


@pytest.fixture
def world(technician, other_technician, manager) -> World:
    return build_world(technician, other_technician, manager)


def signed_in(user) -> Client:
    client = Client()
    client.force_login(user)
    return client


@pytest.fixture
def office(office_user) -> Client:
    return signed_in(office_user)


@pytest.fixture
def tech(technician) -> Client:
    return signed_in(technician)


@pytest.fixture
def boss(manager) -> Client:
    return signed_in(manager)
