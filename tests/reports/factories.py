"""Factories for the stored results a report reads, and a bulk builder of site histories.

All numbers are synthetic test inputs shaped like the diagnostics core's output
(``diagnostics/core/types.py``), not reference values: the reports read stored rows and must
show them as stored, whatever their values.
"""

from __future__ import annotations

import datetime as dt
import hashlib
import math
import uuid
from dataclasses import dataclass
from zoneinfo import ZoneInfo

import factory
from django.core.files.base import ContentFile
from django.utils import timezone

from diagnostics.models import Diagnosis, Flag, LeakRate
from fleet import models
from reports.models import MonthlyReport
from reports.months import Month
from tests.factories import (
    ReadingSetFactory,
    RefrigerantEventFactory,
    SiteFactory,
    UnitFactory,
    VisitFactory,
    document_for,
    refrigerant,
)


class DiagnosisFactory(factory.django.DjangoModelFactory):
    class Meta:
        model = Diagnosis

    reading_set = factory.SubFactory(ReadingSetFactory)
    algorithm_version = "test-1"
    score = 92.0
    document = factory.LazyFunction(document_for)
    energy_penalty_pct = None
    evaporating_c = -3.5
    condensing_c = 36.0
    superheat_k = 4.5
    subcooling_k = 3.0
    evaporator_td_k = 5.5
    condenser_split_k = 11.0
    compression_ratio = 3.4
    computed_at = factory.LazyFunction(timezone.now)


class LeakRateFactory(factory.django.DjangoModelFactory):
    class Meta:
        model = LeakRate

    event = factory.SubFactory(RefrigerantEventFactory)
    rule_set = "US EPA 40 CFR 82 Subpart F / 84 Subpart C"
    method = "rolling_average"
    annualizing_percent = 36.5
    rolling_average_percent = 27.8
    threshold_percent = 20.0
    over_threshold = True
    in_scope = True
    repair_due_on = factory.LazyAttribute(lambda r: r.event.occurred_on + dt.timedelta(days=30))
    verification_due_on = None
    note = ""
    computed_at = factory.LazyFunction(timezone.now)


class FlagFactory(factory.django.DjangoModelFactory):
    class Meta:
        model = Flag

    unit = factory.SubFactory(UnitFactory)
    kind = "head_pressure_drift"
    severity = "warning"
    summary = "Condenser split rising about 0.6 K a month"
    evidence = factory.LazyFunction(
        lambda: [
            {
                "text": "condenser split above its limit",
                "quantities": [["condenser_split", 16.5, "K"]],
                "observed_on": "2026-02-05",
            }
        ]
    )
    projected_on = dt.date(2026, 5, 1)
    opened_at = factory.LazyFunction(lambda: timezone.now() - dt.timedelta(days=40))
    updated_at = factory.LazyFunction(timezone.now)
    cleared_at = None


FAKE_PDF = b"%PDF-1.4\n% synthetic test file, not a rendered report\n%%EOF\n"


class MonthlyReportFactory(factory.django.DjangoModelFactory):
    """A stored report row with a small synthetic file (no rendering)."""

    class Meta:
        model = MonthlyReport

    site = factory.SubFactory(SiteFactory)
    month = dt.date(2026, 3, 1)
    version = factory.Sequence(lambda n: n + 1)
    generated_at = factory.LazyFunction(timezone.now)
    algorithm_version = "test-1"
    layout_version = "1"
    display_units = "us"
    checksum_sha256 = hashlib.sha256(FAKE_PDF).hexdigest()
    pdf = factory.LazyFunction(lambda: ContentFile(FAKE_PDF, name="report.pdf"))
    html = "<!DOCTYPE html><html><body><h1>Synthetic stored report</h1></body></html>"
    page_count = 1
    unit_count = 1


# --- bulk histories (queries and benchmarks) ----------------------------------------------------


@dataclass(frozen=True)
class SiteHistory:
    site: models.Site
    units: list[models.Unit]
    visits: list[models.Visit]


def bulk_site_history(
    n_units: int,
    month: Month,
    *,
    months: int = 12,
    site: models.Site | None = None,
    refrigerant_designation: str = "R-404A",
) -> SiteHistory:
    """A site with ``n_units`` units and one planned visit a month for ``months`` months
    ending with ``month``, each unit read and diagnosed at each visit (bulk inserts).

    Synthetic data: the condenser split of the first unit creeps up 0.5 K a month; every
    third unit has a run capacitor; the second unit gets refrigerant added twice with stored
    leak rates; the first unit has an open flag.
    """
    site = site or SiteFactory()
    tz = ZoneInfo(site.time_zone)
    ref = refrigerant(refrigerant_designation)
    units = models.Unit.objects.bulk_create(
        [
            models.Unit(
                site=site,
                tag=f"B-{i + 1:03d}",
                description="Walk-in cooler" if i % 2 == 0 else "Reach-in cooler",
                application="medium_temp",
                refrigerant=ref,
                full_charge_kg=12.0,
                metering_device="txv",
                design_box_temp_c=2.0,
                design_evap_td_k=5.5,
                design_condenser_split_k=11.0,
                nameplate_volts=230,
                phase=1,
                rla_a=10.0,
                lra_a=60.0,
            )
            for i in range(n_units)
        ]
    )
    models.Component.objects.bulk_create(
        [
            models.Component(
                unit=u,
                kind="run_capacitor",
                rating_uf_min=42.3,
                rating_uf_max=47.7,
                installed_on=dt.date(2020, 1, 1),
            )
            for i, u in enumerate(units)
            if i % 3 == 0
        ]
    )
    visits = []
    first = month.shift(-(months - 1))
    for m in range(months):
        mon = first.shift(m)
        start = dt.datetime.combine(mon.first_day + dt.timedelta(days=4), dt.time(9), tzinfo=tz)
        visits.append(
            VisitFactory(
                site=site,
                kind="planned",
                status="submitted",
                window_start=start,
                window_end=start + dt.timedelta(hours=4),
            )
        )
    visit_units = models.VisitUnit.objects.bulk_create(
        [models.VisitUnit(visit=v, unit=u) for v in visits for u in units]
    )
    readings, diagnoses = [], []
    for vu_index, vu in enumerate(visit_units):
        m, i = divmod(vu_index, len(units))
        taken = visits[m].window_start + dt.timedelta(minutes=10 + i)
        ambient = 24.0 + 8.0 * math.sin((m + i) / 2.0)
        readings.append(
            models.ReadingSet(
                visit_unit=vu,
                client_id=uuid.uuid4(),
                taken_at=taken,
                stage="as_found",
                box_temp_c=2.0 + 0.2 * math.cos(m),
                entering_air_temp_c=round(ambient, 1),
                suction_kpa_gauge=350.0,
                suction_line_temp_c=0.0,
                head_kpa_gauge=1700.0,
                liquid_line_temp_c=33.0,
                compressor_amps_1=7.0 + 0.1 * m,
                supply_volts_1=229.0,
                run_capacitor_uf=45.0 - 0.2 * m if i % 3 == 0 else None,
                compressor_running=True,
            )
        )
    readings = models.ReadingSet.objects.bulk_create(readings)
    now = timezone.now()
    for r_index, rs in enumerate(readings):
        m, i = divmod(r_index, len(units))
        split = 11.0 + (0.5 * m if i == 0 else 0.3 * math.sin(m + i))
        ambient = rs.entering_air_temp_c
        status = "fault" if split > 15.0 else "ok"
        diagnoses.append(
            Diagnosis(
                reading_set=rs,
                algorithm_version="test-1",
                score=100.0 - (15.0 if status == "fault" else 0.0) - (i % 4),
                document=document_for(
                    split_k=split, status=status, condensing_target_c=ambient + 11.0
                ),
                energy_penalty_pct=2.0 * max(0.0, split - 11.0),
                evaporating_c=-3.5,
                condensing_c=ambient + split,
                superheat_k=4.5,
                subcooling_k=3.0,
                evaporator_td_k=5.5,
                condenser_split_k=split,
                compression_ratio=3.4,
                computed_at=now,
            )
        )
    Diagnosis.objects.bulk_create(diagnoses)
    if len(units) > 1:
        for m, pct in ((months - 5, 12.0), (months - 1, 31.0)):
            if m < 0:
                continue
            vu = visit_units[m * len(units) + 1]
            event = models.RefrigerantEvent.objects.create(
                visit_unit=vu,
                kind="added",
                amount_kg=1.5,
                occurred_on=visits[m].window_start.astimezone(tz).date(),
            )
            LeakRateFactory(
                event=event,
                rolling_average_percent=pct,
                annualizing_percent=pct * 1.2,
                over_threshold=pct > 20.0,
            )
    FlagFactory(unit=units[0], opened_at=visits[-1].window_start - dt.timedelta(days=20))
    return SiteHistory(site, units, visits)
