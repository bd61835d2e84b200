"""GET /api/v1/refrigerants/{r}/saturation-table/: the server's own nodes, so a phone reads
offline exactly what the server reads.

The check that matters: interpolating the returned nodes as docs/api.md describes (in plain
Python here, in live.js on the phone) gives the saturation table's own answers, to the last
bit or nearly (1e-9 K, 1e-9 relative in pressure), at many points of every curve. That the
tables themselves are right is tests/diagnostics/core/test_saturation.py's job.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from diagnostics.core import saturation

from .conftest import token_client

pytestmark = pytest.mark.django_db


def _url(designation: str) -> str:
    return f"/api/v1/refrigerants/{designation}/saturation-table/"


def _read(grid: dict, x: float) -> float:
    """docs/api.md's reading: the interval by arithmetic, then a straight line."""
    values, first, last = grid["values"], grid["first"], grid["last"]
    top = len(values) - 1
    s = (x - first) * (top / (last - first))
    assert -1e-9 <= s <= top + 1e-9, "probe inside the table"
    i = min(max(int(s), 0), top - 1)
    return values[i] + (values[i + 1] - values[i]) * (s - i)


@pytest.mark.parametrize("designation", ["R-404A", "R-448A", "R-407A", "R-134a", "R-290"])
def test_the_nodes_read_as_the_server_reads(technician, designation):
    response = token_client(technician).get(_url(designation))
    assert response.status_code == 200
    body = response.json()
    table = saturation.table(designation)
    assert body["refrigerant"] == designation
    assert body["critical_pressure_kpa_abs"] == table.critical_pressure_kpa_abs
    rng = np.random.default_rng(16)
    for curve in ("dew", "bubble"):
        by_temp = body["curves"][curve]["ln_p_of_temp"]
        by_lnp = body["curves"][curve]["temp_of_ln_p"]
        assert len(by_temp["values"]) > 100
        assert len(by_lnp["values"]) > 100
        temps = rng.uniform(body["min_temp_c"], body["max_temp_c"], 300)
        lnps = rng.uniform(by_lnp["first"], by_lnp["last"], 300)
        for t in [*temps.tolist(), body["min_temp_c"], body["max_temp_c"]]:
            server = getattr(table, f"{curve}_pressure_kpa_abs")(t)
            assert math.exp(_read(by_temp, t)) == pytest.approx(server, rel=1e-9, abs=0)
        for lnp in lnps.tolist():
            server = getattr(table, f"{curve}_temp_c")(math.exp(lnp))
            assert _read(by_lnp, lnp) == pytest.approx(server, abs=1e-9)


def test_a_glide_blend_has_two_curves(technician):
    """R-407A is a zeotrope (ASHRAE 34): at a suction of 300 kPa absolute its dew point lies
    several kelvin above its bubble point (from memory: about 5-6 K; 3-8 K is asked)."""
    body = token_client(technician).get(_url("r407a")).json()
    assert body["kind"] == "zeotrope"
    dew = _read(body["curves"]["dew"]["temp_of_ln_p"], math.log(300.0))
    bubble = _read(body["curves"]["bubble"]["temp_of_ln_p"], math.log(300.0))
    assert 3.0 < dew - bubble < 8.0


def test_the_version_is_the_etag_and_a_kept_copy_is_not_sent_again(office_user):
    client = token_client(office_user)
    first = client.get(_url("R-404A"))
    version = first.json()["version"]
    assert version.startswith("R-404A.coolprop-")
    assert first["ETag"] == f'"{version}"'
    assert "max-age=" in first["Cache-Control"]
    again = client.get(_url("R-404A"), HTTP_IF_NONE_MATCH=f'"{version}"')
    assert again.status_code == 304
    assert again.content == b""
    stale = client.get(_url("R-404A"), HTTP_IF_NONE_MATCH='"R-404A.older"')
    assert stale.status_code == 200


def test_an_unknown_refrigerant_is_404_naming_it(technician):
    response = token_client(technician).get(_url("R-999Z"))
    assert response.status_code == 404
    assert "designation" in response.json()


def test_without_credentials_it_is_401(client):
    assert client.get(_url("R-404A")).status_code == 401


def test_the_schema_lists_it(office_user):
    schema = token_client(office_user).get("/api/schema/?format=json").json()
    operation = schema["paths"]["/api/v1/refrigerants/{designation}/saturation-table/"]["get"]
    assert "200" in operation["responses"]
    assert "404" in operation["responses"]
