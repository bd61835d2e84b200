"""The pages show stored SI values in the contractor's display units, through the one
conversion module (diagnostics/core/units.py)."""

from __future__ import annotations

from types import SimpleNamespace

import pytest
from django.template.loader import render_to_string

from fleet.templatetags import rimewatch
from reports import data, summary, words


@pytest.fixture
def us(settings):
    settings.RIMEWATCH_DISPLAY_UNITS = "us"


@pytest.fixture
def si(settings):
    settings.RIMEWATCH_DISPLAY_UNITS = "si"


@pytest.mark.usefixtures("us")
def test_it_shows_us_customary_units():
    """NIST SP 811 (2008) Appendix B: t/F = 1.8 t/C + 32 (exact), 1 lb = 0.453 592 37 kg
    (exact), 1 psi = 6.894 757 kPa; so 0 C is 32.0 F, a 10 K difference is 18.0 F, 1 kg is
    2.20 lb and 689.4757 kPa gauge is 100.0 psig (tolerance: the last shown digit)."""
    assert rimewatch.temp(0.0) == "32.0 \u00b0F"
    assert rimewatch.temp(-40.0) == "\u221240.0 \u00b0F"
    assert rimewatch.tempdiff(10.0) == "18.0 \u00b0F"
    assert rimewatch.mass(1.0) == "2.20 lb"
    assert rimewatch.pressure(689.4757, 0.0) == "100.0 psig"


@pytest.mark.usefixtures("si")
def test_it_shows_si_units_when_configured():
    """With RIMEWATCH_DISPLAY_UNITS='si' values are shown as stored: C, K, kPa gauge, kg."""
    assert rimewatch.temp(2.04) == "2.0 \u00b0C"
    assert rimewatch.tempdiff(5.5) == "5.5 K"
    assert rimewatch.pressure(350.0, 1600.0) == "350.0 kPa"
    assert rimewatch.mass(0.15) == "0.15 kg"


@pytest.mark.usefixtures("us")
def test_it_reads_a_metric_by_its_unit():
    """A diagnosis metric in 'C' is a temperature, in 'K' a difference, in 'A' amps as is;
    a missing value is a dash."""
    assert rimewatch.qty(100.0, "C") == "212.0 \u00b0F"
    assert rimewatch.qty(100.0, "C", kind="difference") == "180.0 \u00b0F"
    assert rimewatch.qty(5.0, "K") == "9.0 \u00b0F"
    assert rimewatch.qty(9.64, "A") == "9.6 A"
    assert rimewatch.qty(None, "C") == "\u2014"


def test_it_never_relies_on_colour_alone():
    """Every status badge carries a word and a symbol, not only a colour class."""
    for status in ("ok", "watch", "fault", "not_scored"):
        html = str(rimewatch.verdict({"status": status, "deviation": 1.0}))
        v = words.verdict(status, 1.0)
        assert v.symbol in html
        assert v.word in html
    for score in (40.0, 80.0, 95.0, None):
        html = str(rimewatch.health(score))
        c = words.CONDITIONS[summary.score_condition(score)]
        assert c.symbol in html
        assert c.label in html


def test_a_score_is_named_in_the_words_of_the_monthly_report():
    """A check score reads as the report's conditions (one vocabulary): 95 healthy, 80 keep
    an eye on, 40 needs attention; no score means too few readings to judge; the
    instrument-style grade words are gone."""
    assert "Healthy \u00b7 95" in str(rimewatch.health(95.0))
    assert "Keep an eye on \u00b7 80" in str(rimewatch.health(80.0))
    assert "Needs attention \u00b7 40" in str(rimewatch.health(40.0))
    assert "Not enough readings to judge" in str(rimewatch.health(None))
    for old in ("Good", "Fair", "Poor"):
        assert all(old not in str(rimewatch.health(s)) for s in (40.0, 80.0, 95.0, None))
    assert data.HEALTH_LABELS["sound"] == words.CONDITIONS["sound"].label


@pytest.mark.usefixtures("us")
def test_a_finding_shows_what_it_could_also_be_when_stored():
    """A finding carrying alternatives and a deciding check (as the diagnostics core may
    store them) shows both under its evidence; one without them shows neither; a
    diagnosis with no score says there were too few readings to judge."""
    metric = {
        "name": "condenser_split",
        "measured": 20.0,
        "target": 11.0,
        "low": 7.0,
        "high": 14.0,
        "deviation": 6.0,
        "unit": "K",
        "status": "fault",
        "points_lost": 15.0,
        "reason": "",
    }
    finding = {
        "code": "condenser_heat_rejection",
        "title": "Condenser is not getting rid of its heat",
        "evidence": ["condenser split above its ok band", "discharge line above its limit"],
        "confidence": 0.6,
        "advice": "Clean the coil.",
        "alternatives": ["non_condensables"],
        "deciding_check": "with the unit off, compare the standing pressure with saturation",
    }
    plain = {k: v for k, v in finding.items() if k not in ("alternatives", "deciding_check")}

    def shown(found, score=80.0) -> str:
        diagnosis = SimpleNamespace(
            score=score, metrics=[metric], findings=[found], algorithm_version="t", glide_choice=""
        )
        return render_to_string("fleet/_diagnosis.html", {"diagnosis": diagnosis, "elevation": 0.0})

    page = shown(finding)
    assert "some evidence: 2 signs agree" in page
    assert "Could also be: air or other non-condensables may be in the system." in page
    assert "To tell them apart: with the unit off, compare the standing pressure" in page
    assert "Could also be" not in shown(plain)
    assert "Not enough readings to judge" in shown(plain, score=None)
