"""What the API says of a judgement: a set with nothing to judge has no score, a defrosting
unit is not judged on its box or cycle, and a flag's numbers come in the units asked for.

Conversions: 1 K = 1.8 F (a difference), 1 psi = 6.894757 kPa, 1 lb = 0.45359237 kg (NIST SP
811, Appendix B); leak-rate arithmetic as 40 CFR 82.152 (checked in the core's tests).
"""

from __future__ import annotations

import datetime as dt

import pytest

from diagnostics import services
from diagnostics.models import Flag
from tests.factories import RefrigerantEventFactory, UnitFactory
from tests.factories import VisitUnitFactory as VisitUnitF

from .conftest import post_reading_set, token_client

pytestmark = pytest.mark.django_db

KG_PER_LB = 0.45359237


@pytest.fixture
def visit_unit(cooler_visit_unit):
    return cooler_visit_unit


_post = post_reading_set


def test_a_set_with_nothing_to_judge_is_stored_without_a_score(technician, visit_unit):
    """Issue seen in the field: a set whose only reading could not be judged scored 100. A
    set holding only a note is stored (nothing accepted is lost) and answers a null score
    that says why."""
    response = _post(token_client(technician), visit_unit, notes="unit locked, no access")
    assert response.status_code == 201, response.json()
    diagnosis = response.json()["diagnosis"]
    assert diagnosis["score"] is None
    assert diagnosis["score_note"] == "not enough readings to judge"


def test_a_defrosting_unit_is_not_judged_on_its_box_or_cycle(technician, visit_unit):
    """Read mid-defrost, a cooler's box runs warm and its evaporator is not cooling: box,
    TD and superheat are not judged (and say why), so no probable cause is raised; the
    supply voltage is still judged."""
    response = _post(
        token_client(technician),
        visit_unit,
        units={"temperature": "F", "pressure": "psig"},
        in_defrost=True,
        compressor_running=False,
        evaporator_fans_running=False,
        box_temp=48.0,
        suction_pressure=90.0,
        head_pressure=120.0,
        supply_volts=[231.0],
    )
    assert response.status_code == 201, response.json()
    diagnosis = response.json()["diagnosis"]
    metrics = {m["name"]: m for m in diagnosis["metrics"]}
    for name in ("box_temp", "evaporator_td", "superheat"):
        assert metrics[name]["status"] == "not_scored"
        assert "defrost" in metrics[name]["reason"]
    assert metrics["supply_voltage"]["status"] == "ok"
    assert diagnosis["findings"] == []


def test_a_leak_flag_entered_in_pounds_speaks_in_pounds(office_user):
    """Issue seen in the field: a leak flag entered in lb spoke in kg. 8 lb added 73 days
    after an earlier addition to a 60 lb unit is a 66.67 % annualized leak rate (docs/references.md
    §3 worked example) over the 20 % threshold: the flag's evidence says "8.00 lb" when the
    client asks for US units and "3.63 kg" for SI."""
    unit = UnitFactory(full_charge_kg=60 * KG_PER_LB)
    today = dt.date(2026, 11, 20)
    for days_ago, pounds in ((73, 5.0), (0, 8.0)):
        RefrigerantEventFactory(
            visit_unit=VisitUnitF(unit=unit, visit__site=unit.site),
            amount_kg=pounds * KG_PER_LB,
            occurred_on=today - dt.timedelta(days=days_ago),
        )
    services.refresh_flags(today=today)
    assert Flag.objects.filter(unit=unit, kind="leak_rate").exists()
    client = token_client(office_user)
    us = client.get(f"/api/v1/units/{unit.pk}/flags/?units=us").json()
    si = client.get(f"/api/v1/units/{unit.pk}/flags/?units=si").json()
    leak_us = next(f for f in _results(us) if f["kind"] == "leak_rate")
    leak_si = next(f for f in _results(si) if f["kind"] == "leak_rate")
    assert leak_us["evidence"][0]["text"].startswith("8.00 lb added")
    assert leak_si["evidence"][0]["text"].startswith("3.63 kg added")
    assert "{" not in leak_us["summary"]


def test_a_head_pressure_flag_carries_its_forecast_as_numbers_in_the_units_asked(office_user):
    """Issue seen in the field: a flag's forecast (slope, design-day head, the cut-out
    date) existed only as prose, in SI even when US units were asked. Now the API returns
    it as numbers: the split's slope in F a year when US units are asked (K a year in SI,
    1 K = 1.8 F), the cut-out in psig (kPa gauge in SI, 1 psi = 6.894757 kPa), and the
    summary's numbers in the same units."""
    unit = UnitFactory(high_pressure_cutout_kpa_gauge=2760.0)
    flag = Flag.objects.create(
        unit=unit,
        kind="head_pressure_drift",
        severity="warning",
        summary="head pressure creeping up: condenser split rising {split_slope} a year",
        evidence=[],
        forecast={
            "quantities": [["split_slope", 5.0, "K/year"], ["cutout", 2760.0, "kPa_gauge"]],
            "dates": {"cutout_reached_on": "2027-07-01"},
        },
        opened_at=dt.datetime(2026, 11, 1, tzinfo=dt.UTC),
        updated_at=dt.datetime(2026, 11, 1, tzinfo=dt.UTC),
    )
    client = token_client(office_user)
    us = next(f for f in _results(client.get(f"/api/v1/units/{unit.pk}/flags/?units=us").json()))
    si = next(f for f in _results(client.get(f"/api/v1/units/{unit.pk}/flags/?units=si").json()))
    assert us["id"] == flag.pk
    assert us["forecast"]["split_slope"] == {"value": 9.0, "unit": "F/year"}
    assert us["forecast"]["cutout"]["unit"] == "psig"
    assert us["forecast"]["cutout"]["value"] == pytest.approx(2760.0 / 6.894757, abs=0.01)
    assert us["forecast"]["cutout_reached_on"] == "2027-07-01"
    assert us["summary"].endswith("rising 9.0 °F a year")
    assert si["forecast"]["split_slope"] == {"value": 5.0, "unit": "K/year"}
    assert si["summary"].endswith("rising 5.0 K a year")


def _results(body):
    return body["results"] if isinstance(body, dict) and "results" in body else body
