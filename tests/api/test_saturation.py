"""Saturation lookups: GET /api/v1/refrigerants/{r}/saturation/ and manage.py saturation.

The values are CoolProp's (through the core's tables), so each check pairs them with a
published table; the API's own job checked here is the wire (units, elevation, errors).
"""

from __future__ import annotations

import json
from io import StringIO

import pytest
from django.core.management import CommandError, call_command

from .conftest import token_client

pytestmark = pytest.mark.django_db

KPA_PER_PSI = 6.894757293168361  # exact (NIST SP 811, Appendix B.8)


def _get(client, designation: str, query: str):
    return client.get(f"/api/v1/refrigerants/{designation}/saturation/?{query}")


def test_r134a_boils_at_246_79_k_at_100_kpa(technician):
    """R-134a at 100 kPa absolute: 246.79 K, dew = bubble (Tillner-Roth & Baehr, J. Phys.
    Chem. Ref. Data 23 (1994) 657, Table 8; tolerance 0.01 K)."""
    body = _get(token_client(technician), "R-134a", "pressure=100&pressure_unit=kPa_abs&units=si")
    assert body.status_code == 200
    data = body.json()
    assert data["dew_temperature_c"] == pytest.approx(246.79 - 273.15, abs=0.01)
    assert data["bubble_temperature_c"] == pytest.approx(246.79 - 273.15, abs=0.01)
    assert data["dew_temperature"] == pytest.approx(246.79 - 273.15, abs=0.01)
    assert data["units"]["temperature"] == "C"


def test_r404a_dew_and_bubble_pressures_at_300_k(technician):
    """R-404A at 300 K: bubble 1.3169 MPa, dew 1.3034 MPa (Lemmon, Int. J. Thermophys. 24
    (2003) 991, Table V; tolerance 0.02 %)."""
    data = _get(token_client(technician), "R-404A", "temperature=300&temperature_unit=K").json()
    assert data["bubble_pressure_kpa_abs"] == pytest.approx(1316.9, rel=2e-4)
    assert data["dew_pressure_kpa_abs"] == pytest.approx(1303.4, rel=2e-4)
    assert data["units"]["pressure"] == "psig"
    gauge_psig = (1316.9 - 101.325) / KPA_PER_PSI
    assert data["bubble_pressure"] == pytest.approx(gauge_psig, rel=3e-4)


def test_a_gauge_reading_is_made_absolute_at_the_elevation(technician):
    """20.0 psig at 5000 ft (1524 m) is 32.23 psia (ASHRAE Fundamentals 2017 ch. 1 eq. 3,
    docs/references.md §5; tolerance 0.01 psi), and reads the same saturation point."""
    client = token_client(technician)
    high = _get(client, "R-404A", "pressure=20&pressure_unit=psig&elevation_m=1524").json()
    assert high["absolute_pressure_kpa"] / KPA_PER_PSI == pytest.approx(32.23, abs=0.01)
    same = _get(client, "R-404A", "pressure=32.23&pressure_unit=psia").json()
    assert high["dew_temperature_c"] == pytest.approx(same["dew_temperature_c"], abs=0.01)


@pytest.mark.parametrize(
    ("designation", "query", "status", "field", "words"),
    [
        ("R-999", "pressure=50&pressure_unit=psig", 404, "designation", "unknown refrigerant"),
        ("R-404A", "pressure=fifty&pressure_unit=psig", 400, "pressure", "valid number"),
        ("R-404A", "pressure=50&pressure_unit=psx", 400, "pressure_unit", "valid choice"),
        ("R-404A", "pressure=50", 400, "pressure_unit", "unit"),
        (
            "R-404A",
            "pressure=50&pressure_unit=psig&temperature=3&temperature_unit=C",
            400,
            "pressure",
            "either",
        ),
        ("R-404A", "", 400, "pressure", "either"),
        ("R-404A", "pressure=-20&pressure_unit=psig", 400, "pressure", "vacuum"),
        ("R-744", "temperature=35&temperature_unit=C", 400, "temperature", "transcritical"),
        ("R-404A", "pressure=50&pressure_unit=psig&elevation_m=9000", 400, "elevation_m", "5000"),
    ],
)
def test_it_explains_what_it_cannot_answer(technician, designation, query, status, field, words):
    """Unknown refrigerants, non-numbers, unknown units, both or neither input, a vacuum,
    CO2 above its critical point: a 4xx naming the field, with the reason."""
    response = _get(token_client(technician), designation, query)
    assert response.status_code == status
    assert words in " ".join(response.json()[field])


def test_the_command_prints_json_at_a_pressure():
    """--json: refrigerant, absolute_pressure_kpa, dew and bubble temperatures in C; R-134a
    at 100 kPa absolute boils at 246.79 K (Tillner-Roth & Baehr 1994; tolerance 0.01 K)."""
    out = StringIO()
    call_command(
        "saturation",
        "r134a",
        "--pressure",
        "100",
        "--pressure-unit",
        "kPa_abs",
        "--json",
        stdout=out,
    )
    data = json.loads(out.getvalue())
    assert set(data) == {
        "refrigerant",
        "absolute_pressure_kpa",
        "dew_temperature_c",
        "bubble_temperature_c",
    }
    assert data["refrigerant"] == "R-134a"
    assert data["absolute_pressure_kpa"] == pytest.approx(100.0)
    assert data["dew_temperature_c"] == pytest.approx(246.79 - 273.15, abs=0.01)


def test_the_command_prints_json_at_a_temperature():
    """--json with a temperature: dew and bubble pressures in kPa absolute (Lemmon 2003,
    Table V, R-404A at 300 K; tolerance 0.02 %)."""
    out = StringIO()
    call_command(
        "saturation",
        "R-404A",
        "--temperature",
        "300",
        "--temperature-unit",
        "K",
        "--json",
        stdout=out,
    )
    data = json.loads(out.getvalue())
    assert set(data) == {"refrigerant", "dew_pressure_kpa_abs", "bubble_pressure_kpa_abs"}
    assert data["bubble_pressure_kpa_abs"] == pytest.approx(1316.9, rel=2e-4)


def test_the_command_speaks_plainly():
    """Without --json it prints dew, bubble and glide in the family of the unit given."""
    out = StringIO()
    call_command("saturation", "R-404A", "--pressure", "55", "--pressure-unit", "psig", stdout=out)
    text = out.getvalue()
    assert "dew" in text
    assert "bubble" in text
    assert " F" in text


@pytest.mark.parametrize(
    ("args", "words"),
    [
        (["R-999", "--pressure", "50", "--pressure-unit", "psig"], "unknown refrigerant"),
        (["R-404A", "--pressure", "50"], "--pressure-unit"),
        (["R-744", "--temperature", "40", "--temperature-unit", "C"], "transcritical"),
        (["R-404A", "--pressure", "abc", "--pressure-unit", "psig"], "invalid float"),
        (["R-404A"], "required"),
    ],
)
def test_the_command_refuses_with_a_message(args, words):
    """Bad input ends the command with a message saying what is wrong."""
    with pytest.raises(CommandError, match=words):
        call_command("saturation", *args)
