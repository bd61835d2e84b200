"""GET /api/v1/units/{id}/targets/: what the core resolved for a unit, in SI, with the same
reach as the unit's diagnosis.

The values are checked against the core's own resolution and against the stored diagnosis
of a reading (the targets a phone works out from this answer are those the server stores);
that the phone's arithmetic agrees is tests/field/test_live_agreement.py's job.
"""

from __future__ import annotations

import math

import pytest

from diagnostics.core import design
from diagnostics.core import scoring as sc
from diagnostics.services import unit_design
from tests.factories import (
    ComponentFactory,
    SiteFactory,
    UnitFactory,
    VisitFactory,
    VisitUnitFactory,
    refrigerant,
)

from .conftest import post_reading_set, token_client

pytestmark = pytest.mark.django_db


def _url(unit) -> str:
    return f"/api/v1/units/{unit.pk}/targets/"


def test_the_design_values_and_their_origins(world):
    unit = world.own_unit
    body = token_client(world.technician).get(_url(unit)).json()
    resolved = design.resolve_one(unit_design(unit))
    for name, target in resolved.items():
        assert body["targets"][name] == {
            "value": target.value,
            "low": target.low,
            "high": target.high,
            "origin": target.origin,
        }
    # the factory's unit: 5.5 K TD and 11 K split from its design data, +/-2 K and -4/+3 K
    assert body["targets"]["evap_td_k"] == {
        "value": 5.5,
        "low": 3.5,
        "high": 7.5,
        "origin": "design",
    }
    assert body["targets"]["condenser_split_k"]["low"] == pytest.approx(7.0)
    # medium temp with a TXV and no superheat given: 6-10 F, common practice (targets.py)
    assert body["targets"]["superheat_k"]["low"] == pytest.approx(6 / 1.8)
    assert body["targets"]["superheat_k"]["origin"] == "application_default"
    assert body["refrigerant"] == {
        "designation": "R-404A",
        "kind": "zeotrope",
        "safety_class": "A1",
        "flammable": False,
        "glide_k": pytest.approx(0.8, abs=0.4),  # R-404A: under 1 K (from memory: ~0.7 K)
    }
    assert body["site"]["elevation_m"] == unit.site.elevation_m
    assert body["site"]["time_zone"] == unit.site.time_zone
    assert body["design_temperature_basis"] == "dew"
    assert body["metering_device"] == {"value": "txv", "origin": "design"}
    assert body["has_receiver"] == {"value": True, "origin": "design"}
    # the fixture's run capacitor, 42.3-47.7 uF
    assert body["electrical"]["run_capacitor"]["low_uf"] == pytest.approx(42.3)
    assert body["electrical"]["run_capacitor"]["high_uf"] == pytest.approx(47.7)
    assert body["electrical"]["rla_a"] == 10.0


def test_a_glide_blend_on_the_mid_point_with_a_flooding_valve(technician):
    site = SiteFactory(elevation_m=1609.0, time_zone="America/Denver")
    unit = UnitFactory(
        site=site,
        refrigerant=refrigerant("R-448A"),
        design_temperature_basis="mid_point",
        head_pressure_control="flooding",
        head_pressure_setpoint_c=30.0,
        has_receiver=None,
    )
    body = token_client_for(technician, unit).get(_url(unit)).json()
    assert body["design_temperature_basis"] == "mid_point"
    assert body["refrigerant"]["safety_class"] == "A1"
    assert body["refrigerant"]["kind"] == "zeotrope"
    assert body["refrigerant"]["glide_k"] > 3.0  # R-448A glides several K (from memory ~6 K)
    control = body["head_pressure_control"]
    assert control["value"] == "flooding"
    assert control["origin"] == "design"
    # flooding holds 5 F below to 4 F above its set point (targets.py, Rimewatch choice)
    assert control["held_low_c"] == pytest.approx(30.0 - 5 / 1.8)
    assert control["held_high_c"] == pytest.approx(30.0 + 4 / 1.8)
    assert body["targets"]["head_setpoint_c"]["value"] == 30.0
    # no receiver said: the medium-temp default (has one), so subcooling 0-5 F
    assert body["has_receiver"] == {"value": True, "origin": "application_default"}
    assert body["targets"]["subcooling_k"]["high"] == pytest.approx(5 / 1.8)
    assert body["site"] == {
        "id": site.pk,
        "name": site.name,
        "elevation_m": 1609.0,
        "time_zone": "America/Denver",
    }


def test_a_flammable_refrigerant_says_so(technician):
    unit = UnitFactory(refrigerant=refrigerant("R-290"), application="reach_in")
    body = token_client_for(technician, unit).get(_url(unit)).json()
    assert body["refrigerant"]["safety_class"] == "A3"
    assert body["refrigerant"]["flammable"] is True


def test_the_judgement_is_the_scoring_table(world):
    body = token_client(world.office).get(_url(world.own_unit)).json()
    judgement = body["judgement"]
    assert judgement["instruments"] == {
        "thermometer_k": sc.THERMOMETER_K,
        "gauge_kpa": sc.GAUGE_KPA,
        "slope_step_kpa": 1.0,
    }
    assert set(judgement["metrics"]) == set(sc.SCORING_TABLE)
    superheat = judgement["metrics"]["superheat"]
    assert superheat["ok_low"] == "range"
    assert superheat["margin_from"] == "suction"
    assert superheat["fault_high"] == sc.SCORING_TABLE["superheat"].fault_high
    td = judgement["metrics"]["evaporator_td"]
    assert (td["ok_low"], td["ok_high"], td["fault_low"]) == (-2.0, 2.0, None)
    assert judgement["metrics"]["discharge_line_temp"]["ok_low"] is None
    assert judgement["metrics"]["head_pressure"]["relative"] is True


def test_the_answer_gives_the_targets_the_diagnosis_stores(cooler_visit_unit, technician):
    """A reading posted on the unit: its stored TD and superheat targets and ranges are
    the answer's (the instruments' margin widens the superheat band, as the rule says)."""
    unit = cooler_visit_unit.unit
    client = token_client(technician)
    body = client.get(_url(unit)).json()
    posted = post_reading_set(
        client,
        cooler_visit_unit,
        units={"temperature": "C", "pressure": "kPa"},
        box_temp=2.0,
        suction_pressure=300.0,
        suction_line_temp=-3.0,
        head_pressure=1500.0,
        entering_air_temp=25.0,
        liquid_line_temp=34.0,
        compressor_running=True,
    )
    assert posted.status_code == 201
    stored = client.get(f"/api/v1/units/{unit.pk}/diagnosis/?units=si").json()["diagnosis"]
    metrics = {m["name"]: m for m in stored["metrics"]}
    td = body["targets"]["evap_td_k"]
    assert metrics["evaporator_td"]["target"] == pytest.approx(td["value"], abs=1e-3)
    assert metrics["evaporator_td"]["range"]["low"] == pytest.approx(td["low"], abs=1e-3)
    superheat = body["targets"]["superheat_k"]
    assert metrics["superheat"]["range"]["low"] < superheat["low"]
    assert metrics["superheat"]["range"]["high"] > superheat["high"]
    assert math.isclose(metrics["superheat"]["target"], superheat["value"], abs_tol=1e-3)


def test_outside_reach_it_is_404_as_the_diagnosis(world):
    for role in ("technician", "manager"):
        client = world.client(role)
        assert client.get(_url(world.other_unit)).status_code == 404
        assert client.get(f"/api/v1/units/{world.other_unit.pk}/diagnosis/").status_code == 404
        assert client.get(_url(world.own_unit)).status_code == 200
    assert world.client("office").get(_url(world.other_unit)).status_code == 200
    assert world.client("office").get("/api/v1/units/999999/targets/").status_code == 404


def test_a_fixed_number_of_queries_whatever_the_unit_holds(world, django_assert_num_queries):
    client = world.client("technician")
    client.get(_url(world.own_unit))  # the token and the tables are warm
    with django_assert_num_queries(4):  # token, roles, the unit with its site, components
        assert client.get(_url(world.own_unit)).status_code == 200
    for _ in range(5):
        ComponentFactory(
            unit=world.own_unit, kind="contactor", rating_uf_min=None, rating_uf_max=None
        )
    with django_assert_num_queries(4):
        assert client.get(_url(world.own_unit)).status_code == 200


def test_the_schema_lists_it(world):
    schema = world.client("office").get("/api/schema/?format=json").json()
    assert "/api/v1/units/{unit_pk}/targets/" in schema["paths"]


def token_client_for(technician, unit):
    """A client of ``technician``, with ``unit`` on one of their visits (their reach)."""
    visit = VisitFactory(site=unit.site, status="in_progress", technicians=[technician])
    VisitUnitFactory(visit=visit, unit=unit)
    return token_client(technician)
