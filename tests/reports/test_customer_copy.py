"""The monthly report as the manager reads it: one story per unit, their decisions in their
words, no office-internal notes or provenance marks in the body, money only where a unit is
off its target, and ice machines judged on their own terms."""

from __future__ import annotations

import datetime as dt
from zoneinfo import ZoneInfo

import pytest

from fleet.display import display_for
from reports import words
from reports.figures import unit_figure
from reports.gather import gather_site_month
from reports.months import Month
from reports.render import UnitChart, render_html
from tests.factories import ReadingSetFactory, UnitFactory, VisitUnitFactory, document_for
from tests.reports.factories import DiagnosisFactory, FlagFactory

pytestmark = pytest.mark.django_db

MARCH = Month(2026, 3)
CHICAGO = ZoneInfo("America/Chicago")
NOW = dt.datetime(2026, 4, 1, 7, tzinfo=CHICAGO)
IN_MARCH = dt.datetime(2026, 3, 10, 9, tzinfo=CHICAGO)


def check_on(
    unit, taken: dt.datetime, *, score: float = 92.0, document=None, penalty=None, **reading
):
    """A diagnosed as-found reading of ``unit`` on its own visit at ``taken``."""
    vu = VisitUnitFactory(
        unit=unit,
        visit__site=unit.site,
        visit__window_start=taken,
        visit__window_end=taken + dt.timedelta(hours=1),
    )
    rs = ReadingSetFactory(visit_unit=vu, taken_at=taken, **reading)
    return DiagnosisFactory(
        reading_set=rs, score=score, document=document or document_for(), energy_penalty_pct=penalty
    )


def report(site_id: int) -> tuple[str, str]:
    """The report's HTML split into the customer's body and the methods appendix."""
    display = display_for("us")
    sm = gather_site_month(site_id, MARCH, now=NOW)
    charts = {u.unit.id: UnitChart("", "", unit_figure(u, display).notes) for u in sm.units}
    html = render_html(sm, charts, display, generated_at=NOW, version=1)
    body, appendix = html.split('<section class="notes">')
    return body, appendix


def test_an_urgent_drift_flag_is_not_called_steady():
    """A unit scoring 92 month after month with an urgent head-pressure drift flag open
    reads 'getting worse' (naming the flag), never 'steady'."""
    unit = UnitFactory(tag="WIC-DRIFT")
    for month in (12, 1, 2, 3):
        year = 2025 if month == 12 else 2026
        check_on(unit, dt.datetime(year, month, 10, 9, tzinfo=CHICAGO))
    FlagFactory(unit=unit, severity="urgent", opened_at=IN_MARCH - dt.timedelta(days=30))
    body, _ = report(unit.site_id)
    assert "Trend: getting worse (open flag: head pressure drifting up (urgent))" in body
    assert "steady" not in body.lower()
    assert "Open flags at the end of March 2026" in body


def test_a_capacitor_out_of_its_rating_is_not_no_probable_cause():
    """A check with the run capacitor far below its rating and no stored finding never says
    'no probable cause': it names the capacitor and asks the manager to approve replacing
    it."""
    unit = UnitFactory(tag="RI-CAP")
    capacitor = {"run_capacitor": (38.0, 45.0, 42.3, 47.7, "fault", 15.0)}
    check_on(unit, IN_MARCH, score=85.0, document=document_for(metrics=capacitor))
    body, _ = report(unit.site_id)
    assert "No probable cause" not in body
    assert "run capacitor is far off its aim" in body
    assert words.METRIC_ACTIONS["run_capacitor"].text in body
    assert "far too low" in body


def test_the_customers_copy_carries_no_internal_notes_nor_provenance_marks():
    """The office's review note, its acknowledgement note and the technician's reading note
    stay out of the report; a limit's 'from memory' source in a flag's evidence is moved to
    the methods appendix, leaving the evidence itself in the body; the technician's advice
    stays on the office pages."""
    unit = UnitFactory(tag="CASE-LEAK")
    diagnosis = check_on(
        unit,
        IN_MARCH,
        score=60.0,
        document=document_for(findings={"undercharge": 0.8}, signals=("bubbles", "td_high")),
        notes="Customer's compressor is older than they told us",
    )
    visit = diagnosis.reading_set.visit_unit.visit
    visit.review_note = "Redo the amps, the readings look copied"
    visit.save()
    FlagFactory(
        unit=unit,
        kind="leak_rate",
        severity="urgent",
        summary="leak rate 31 % over the 20 % threshold",
        evidence=[
            {
                "text": "1.50 kg added: leak rate 31.0 % (rolling average) over the 20 % "
                "threshold (40 CFR 84.106: 15 lb or more (GWP above 53 from memory))",
                "quantities": [],
                "observed_on": "2026-03-10",
            }
        ],
        opened_at=IN_MARCH,
        acknowledged_at=IN_MARCH + dt.timedelta(days=1),
        acknowledgement_note="Manager slow to approve, chase on Friday",
    )
    body, appendix = report(unit.site_id)
    for internal in (
        "Redo the amps",
        "slow to approve",
        "older than they told us",
        "from memory",
        "common practice",
        "Rimewatch choice",
        "Look for the leak before adding anything",
    ):
        assert internal not in body, internal
    assert "leak rate 31.0 % (rolling average) over the 20 % threshold" in body
    assert "The office is following this up." in body
    assert "40 CFR 84.106: 15 lb or more (GWP above 53 from memory)" in appendix
    assert words.FLAG_ACTIONS["leak_rate"].text in body  # the leak flag's decision
    assert words.FINDING_ACTIONS["undercharge"].text not in body  # the same topic, asked once
    assert "strong evidence: 3 signs agree" in body  # the trigger sign, the TD, the bubbles


def test_energy_money_comes_only_from_units_above_their_condensing_target():
    """Three units store an energy penalty: the one whose split is above its band is
    priced; one inside its band and one with a zero penalty and no amps cost nothing and
    are not listed as 'not priced' either."""
    above = UnitFactory(tag="A-HOT")
    inside = UnitFactory(site=above.site, tag="B-INSIDE")
    zero = UnitFactory(site=above.site, tag="C-ZERO")
    running = {"compressor_amps_1": 7.0, "supply_volts_1": 230.0, "compressor_running": True}
    check_on(
        above, IN_MARCH, document=document_for(split_k=17.0, status="fault"), penalty=6.0, **running
    )
    check_on(inside, IN_MARCH, document=document_for(split_k=12.0), penalty=3.0, **running)
    check_on(zero, IN_MARCH, document=document_for(split_k=12.0), penalty=0.0)
    sm = gather_site_month(above.site_id, MARCH, now=NOW)
    assert [row[0] for row in sm.overview.energy_top] == ["A-HOT"]
    assert sm.overview.energy_units_not_estimated == ()
    body, _ = report(above.site_id)
    assert "not priced" not in body


def test_an_ice_machine_is_judged_without_a_box_temperature():
    """An ice machine's page in the report says what it is judged on, lists no box reading
    and no design box, and its evaporating chart draws no box-air line."""
    unit = UnitFactory(tag="ICE-1", application="ice_machine")
    box = {"box_temp": (9.0, 2.0, 0.0, 4.0, "fault", 15.0)}
    for month in (1, 2, 3):
        check_on(
            unit,
            dt.datetime(2026, month, 10, 9, tzinfo=CHICAGO),
            document=document_for(metrics=box),
        )
    sm = gather_site_month(unit.site_id, MARCH, now=NOW)
    u = sm.units[0]
    assert "box_temp" not in [m.name for m in u.current.metrics]
    evaporating = next(
        p for p in unit_figure(u, display_for("us")).panels if p.title == "Evaporating temperature"
    )
    assert [line.label for line in evaporating.lines] == ["evaporating", "target"]
    body, _ = report(unit.site_id)
    assert words.ICE_MACHINE_BASIS in body
    assert "Design box" not in body
    assert "Box temperature" not in body
    assert "stock in this box" not in body
