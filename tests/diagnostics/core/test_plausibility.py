"""Readings no working system can produce are named before anything is scored.

Saturation values behind the limits: R-404A at 62 psig is about 25 F at sea level and at
100 F condensing about 236 psig (docs/references.md §1.3, common practice: a technician's PT chart);
the saturation tables themselves are checked against the published equations of state in
``test_saturation.py``. The 3 K margin is ours (``PlausibilityRules``).
"""

from __future__ import annotations

import pytest

from diagnostics.core import plausibility
from diagnostics.core.types import Reading, UnitDesign
from diagnostics.core.units import pressure_to_kpa_gauge, temperature_to_c

UNIT = UnitDesign("R-404A", "medium_temp", metering_device="txv")
SUCTION_62_PSIG = pressure_to_kpa_gauge(62.0, "psig")
HEAD_236_PSIG = pressure_to_kpa_gauge(236.0, "psig")


def fields(reading: Reading, unit: UnitDesign = UNIT, elevation_m: float = 0.0) -> set[str]:
    return {p.field for p in plausibility.check(unit, reading, elevation_m)}


def test_it_accepts_an_ordinary_running_set() -> None:
    """A cooler at 62 psig / 236 psig with 10 F superheat, 8 F subcooling and a 180 F
    discharge line is possible: nothing is refused."""
    reading = Reading(
        suction_kpa_gauge=SUCTION_62_PSIG,
        head_kpa_gauge=HEAD_236_PSIG,
        suction_line_temp_c=temperature_to_c(35.0, "F"),
        liquid_line_temp_c=temperature_to_c(92.0, "F"),
        discharge_line_temp_c=temperature_to_c(180.0, "F"),
        compressor_running=True,
    )
    assert plausibility.check(UNIT, reading) == ()


def test_it_refuses_suction_at_or_above_head_while_running() -> None:
    """A running compressor always lifts: suction 236 psig against head 62 psig names both
    fields; the same pressures with the compressor stopped are a standing system."""
    swapped = Reading(
        suction_kpa_gauge=HEAD_236_PSIG, head_kpa_gauge=SUCTION_62_PSIG, compressor_running=True
    )
    assert fields(swapped) == {"suction_kpa_gauge", "head_kpa_gauge"}
    standing = Reading(
        suction_kpa_gauge=SUCTION_62_PSIG, head_kpa_gauge=SUCTION_62_PSIG, compressor_running=False
    )
    assert fields(standing) == set()


def test_it_refuses_pressures_outside_the_saturation_range() -> None:
    """R-404A's tables end at -60 C (about 47 kPa abs dew, 50 kPa abs bubble) and just below
    its critical point (about 3.7 MPa): a deeper suction or a higher head has no saturation
    temperature. R-744 above its critical pressure runs transcritical and is accepted."""
    deep = Reading(suction_kpa_gauge=-80.0, head_kpa_gauge=HEAD_236_PSIG)
    assert fields(deep) == {"suction_kpa_gauge"}
    problem = plausibility.check(UNIT, deep)[0]
    assert problem.quantity == "pressure"
    assert problem.limit == pytest.approx(50.0 - 101.325, abs=3.0)
    over = Reading(suction_kpa_gauge=SUCTION_62_PSIG, head_kpa_gauge=5000.0)
    assert fields(over) == {"head_kpa_gauge"}
    co2 = UnitDesign("R-744", "medium_temp")
    assert fields(Reading(suction_kpa_gauge=2800.0, head_kpa_gauge=9000.0), co2) == set()
    assert fields(Reading(suction_kpa_gauge=9000.0, head_kpa_gauge=9500.0), co2) == {
        "suction_kpa_gauge"
    }


@pytest.mark.parametrize(
    ("field", "value_f", "refused"),
    [
        # dew at 62 psig is about 25 F: 22 F is 1.7 K under (instrument error), 15 F is 5.6 K
        ("suction_line_temp_c", 22.0, False),
        ("suction_line_temp_c", 15.0, True),
        # bubble at 236 psig is about 100 F: 104 F is 2.2 K over, 110 F is 5.6 K over
        ("liquid_line_temp_c", 104.0, False),
        ("liquid_line_temp_c", 110.0, True),
        # discharge gas below the condensing dew point
        ("discharge_line_temp_c", 96.0, False),
        ("discharge_line_temp_c", 80.0, True),
    ],
)
def test_it_refuses_line_temperatures_the_refrigerant_cannot_have(
    field: str, value_f: float, refused: bool
) -> None:
    """Line temperatures are judged against the saturation temperature at their pressure
    with a 3 K margin for instrument error, only while the compressor runs."""
    values = {
        "suction_kpa_gauge": SUCTION_62_PSIG,
        "head_kpa_gauge": HEAD_236_PSIG,
        field: temperature_to_c(value_f, "F"),
    }
    assert (field in fields(Reading(**values, compressor_running=True))) is refused
    assert field not in fields(Reading(**values, compressor_running=False))


def test_it_judges_gauges_at_the_site_elevation() -> None:
    """At 1,610 m the atmosphere is about 83.4 kPa (ASHRAE Fundamentals 2017, ch. 1, eq. 3),
    so -50 kPa gauge is 33 kPa abs there, below R-404A's table, while at sea level it is
    51 kPa abs, inside it."""
    reading = Reading(suction_kpa_gauge=-50.0)
    assert fields(reading, elevation_m=0.0) == set()
    assert fields(reading, elevation_m=1610.0) == {"suction_kpa_gauge"}
