"""Unit and site pages: design data in display units, the latest diagnosis, flags the
office acknowledges, leak-rate history, and each site's units at a glance."""

from __future__ import annotations

import datetime as dt

import pytest
from django.urls import reverse
from django.utils import timezone

from diagnostics.core.findings import RULES_BY_CODE
from diagnostics.models import Diagnosis
from fleet.views.units import unit_charts
from tests.factories import ComponentFactory, ReadingSetFactory, UnitFactory, VisitUnitFactory

from .conftest import DOCUMENT

pytestmark = pytest.mark.django_db


def test_it_shows_the_nameplate_in_display_units(office, world):
    """Design box 2.0 C shows as 35.6 F and the 10 kg charge as 22.05 lb (US display)."""
    page = office.get(reverse("fleet:unit", args=[world.unit.pk])).content.decode()
    assert "35.6 \u00b0F" in page
    assert "22.05 lb" in page
    assert "R-404A" in page


def test_it_shows_the_design_data_a_technician_needs(office, world):
    """Head-pressure control and its set point (32.2 C shows as 90.0 F), the TD and split
    basis in words, a dual rating as 208-230 V, and the receiver left to the application."""
    unit = world.unit
    unit.head_pressure_control = "fan_cycling"
    unit.head_pressure_setpoint_c = 32.22
    unit.nameplate_volts, unit.nameplate_volts_max = 208, 230
    unit.has_receiver = None
    unit.design_temperature_basis = "mid_point"
    unit.save()
    page = office.get(reverse("fleet:unit", args=[unit.pk])).content.decode()
    assert "Condenser fans switched off and on; holds 90.0 \u00b0F condensing" in page
    assert "208-230 V" in page
    assert "receiver not recorded" in page
    assert "the mid-point between dew and bubble" in page
    assert "(no glide: makes no difference)" not in page  # R-404A is a zeotropic blend


def test_it_says_when_the_design_data_is_left_to_defaults(office, world):
    """No control recorded, the dew point, a single rating and a unit without receiver."""
    unit = world.unit
    unit.has_receiver = False
    unit.save()
    page = office.get(reverse("fleet:unit", args=[unit.pk])).content.decode()
    assert 'not recorded <span class="muted">(default for the application)</span>' in page
    assert "the dew point" in page
    assert "230 V, single-phase" in page
    assert "no receiver" in page


def test_it_shows_the_latest_diagnosis_with_targets(office, world):
    """The unit page carries the latest diagnosis: each reading against its aim, in one line
    (12 K measured, aim 5 K, fine from 3 to 7 K: 21.6, 9.0, 5.4 and 12.6 F differences)."""
    page = office.get(reverse("fleet:unit", args=[world.unit.pk])).content.decode()
    assert "Latest diagnosis" in page
    assert "Evaporator superheat" in page
    assert "21.6 \u00b0F; aim 9.0 \u00b0F, fine from 5.4 \u00b0F to 12.6 \u00b0F" in page
    assert RULES_BY_CODE["undercharge"].title in page


def test_it_lists_components_fitted_and_removed(office, world):
    """Fitted parts and removed ones are listed apart, with ratings as printed: a run
    capacitor's rating with the typical 6 % when none is printed."""
    ComponentFactory(
        unit=world.unit, kind="run_capacitor", rated_uf=35, rating_uf_min=None, rating_uf_max=None
    )
    ComponentFactory(
        unit=world.unit,
        kind="start_capacitor",
        rating_uf_min=88,
        rating_uf_max=108,
        removed_on="2025-06-01",
        reason="bulged",
    )
    page = office.get(reverse("fleet:unit", args=[world.unit.pk])).content.decode()
    assert 'Run capacitor</strong> 35 \u00b5F \u00b16 % <span class="muted">(typical' in page
    assert "Removed" in page
    assert "bulged" in page


def test_it_acknowledges_a_flag_in_place_with_htmx(office, office_user, world):
    """An htmx acknowledgement returns just the flag, now saying who acknowledged it."""
    response = office.post(
        reverse("fleet:flag-acknowledge", args=[world.flag.pk]),
        {"acknowledgement_note": "Coil clean booked for Tuesday"},
        HTTP_HX_REQUEST="true",
    )
    assert response.status_code == 200
    fragment = response.content.decode()
    assert "<html" not in fragment
    assert "Coil clean booked for Tuesday" in fragment
    world.flag.refresh_from_db()
    assert world.flag.acknowledged_by == office_user
    assert world.flag.cleared_at is None


def test_it_wants_a_note_to_acknowledge(office, world):
    """An empty note is refused beside the field and the flag stays unacknowledged."""
    response = office.post(
        reverse("fleet:flag-acknowledge", args=[world.flag.pk]),
        {"acknowledgement_note": ""},
        HTTP_HX_REQUEST="true",
    )
    assert "Say what is being done" in response.content.decode()
    world.flag.refresh_from_db()
    assert world.flag.acknowledged_at is None


def test_it_acknowledges_without_scripts_and_goes_back(office, world):
    """Without htmx the form posts, then returns to the page it came from."""
    back = reverse("fleet:attention")
    response = office.post(
        reverse("fleet:flag-acknowledge", args=[world.flag.pk]),
        {"acknowledgement_note": "Parts ordered", "next": back},
    )
    assert response["Location"] == back
    response = office.post(
        reverse("fleet:flag-acknowledge", args=[world.flag.pk]),
        {"acknowledgement_note": "Parts ordered", "next": "https://elsewhere.invalid/"},
    )
    assert response["Location"] == reverse("fleet:unit", args=[world.flag.unit_id])


def test_it_shows_flags_read_only_to_a_manager(boss, world):
    """A manager sees the open flag with its cautions but no acknowledgement form."""
    page = boss.get(reverse("fleet:unit", args=[world.unit.pk])).content.decode()
    assert "Condenser split rising" in page
    assert "Before acting on this" in page
    assert "acknowledgement_note" not in page


def test_a_manager_sees_no_internal_note_of_the_office(boss, office, world):
    """The office's acknowledgement note, its review note to the technician and the
    technician's reading note are shown to the office and not to a manager, who sees that
    the flag is being followed up."""
    world.flag.acknowledged_at = timezone.now()
    world.flag.acknowledgement_note = "Customer slow to approve, chase Friday"
    world.flag.save()
    reading = world.submitted.visit_units.get().reading_sets.get()
    reading.notes = "Gauges borrowed, numbers rough"
    reading.save()
    world.submitted.review_note = "Redo the amps"
    world.submitted.save()
    unit_url = reverse("fleet:unit", args=[world.unit.pk])
    visit_url = reverse("fleet:visit", args=[world.submitted.pk])
    managers = boss.get(unit_url).content.decode() + boss.get(visit_url).content.decode()
    offices = office.get(unit_url).content.decode() + office.get(visit_url).content.decode()
    for note in ("chase Friday", "numbers rough", "Redo the amps"):
        assert note in offices
        assert note not in managers
    assert "the office is following this up" in managers


def test_it_shows_the_leak_rate_history(office, world):
    """Each addition shows its leak rate against the limit and the repair deadline."""
    page = office.get(reverse("fleet:unit", args=[world.unit.pk])).content.decode()
    assert "40.0 %" in page
    assert "Over the limit" in page
    assert f"Repair by {world.leak.repair_due_on:%-d %b %Y}" in page


def test_it_shows_a_sites_units_at_a_glance(boss, world):
    """The site page lists each unit with its condition (judged from the latest check and
    its open flags, as the report judges it) and open flags, in words."""
    page = boss.get(reverse("fleet:site", args=[world.site.pk])).content.decode()
    assert "HD-WIC-1" in page
    assert "Needs attention \u00b7 72" in page
    assert "Head pressure drifting up" in page
    assert "Monthly health reports" in page


def test_it_lists_only_a_managers_sites(boss, world):
    """The manager's site list holds their site and not the other one."""
    page = boss.get(reverse("fleet:sites")).content.decode()
    assert world.site.name in page
    assert world.other_site.name not in page


def test_it_warns_about_flammable_refrigerant(office, world):
    """A unit on R-290 (safety class A3) is marked flammable on its page."""
    page = office.get(reverse("fleet:unit", args=[world.other_unit.pk])).content.decode()
    assert "Flammable" in page


def _stored_report(site):
    from datetime import date

    from django.core.files.base import ContentFile
    from django.utils import timezone

    from reports.models import MonthlyReport

    report = MonthlyReport(
        site=site,
        month=date(2026, 10, 1),
        version=1,
        generated_at=timezone.now(),
        layout_version="test",
        display_units="us",
        checksum_sha256="0" * 64,
        html="<html><body><h1>October health report</h1></body></html>",
        page_count=1,
        unit_count=1,
    )
    report.pdf.save("report.pdf", ContentFile(b"%PDF-1.4 synthetic"), save=False)
    report.save()
    return report


def test_it_links_a_sites_reports_for_its_manager(boss, office, world, settings, tmp_path):
    """The site page lists the stored report; its manager and the office open the HTML and
    the PDF; the other site's report is out of reach (404)."""
    settings.MEDIA_ROOT = tmp_path
    _stored_report(world.site)
    _stored_report(world.other_site)
    page = boss.get(reverse("fleet:site", args=[world.site.pk])).content.decode()
    assert "October 2026" in page
    url = reverse("fleet:site-report", args=[world.site.pk, "2026-10"])
    assert "October health report" in boss.get(url).content.decode()
    pdf = office.get(url, {"format": "pdf"})
    assert pdf["Content-Type"] == "application/pdf"
    other = reverse("fleet:site-report", args=[world.other_site.pk, "2026-10"])
    assert boss.get(other).status_code == 404
    assert (
        boss.get(reverse("fleet:site-report", args=[world.site.pk, "2026-13"])).status_code == 404
    )


def _diagnosed_reading(unit, days_ago: int, stage: str, superheat_k: float) -> None:
    taken = timezone.now() - dt.timedelta(days=days_ago)
    vu = VisitUnitFactory(unit=unit, visit__site=unit.site, visit__window_start=taken)
    Diagnosis.objects.create(
        reading_set=ReadingSetFactory(visit_unit=vu, taken_at=taken, stage=stage),
        algorithm_version="test-1",
        score=80.0,
        document=DOCUMENT,
        superheat_k=superheat_k,
        computed_at=timezone.now(),
    )


def test_the_unit_page_charts_the_reports_trend_panels():
    """The unit page draws the monthly report's trend panels from the unit's as-found
    diagnosed readings of the last twelve months: a panel needs three of them (as-left
    readings do not count), and is described in the report's words."""
    unit = UnitFactory()
    _diagnosed_reading(unit, 100, "as_found", 9.0)
    _diagnosed_reading(unit, 60, "as_found", 10.0)
    _diagnosed_reading(unit, 59, "as_left", 6.0)
    _diagnosed_reading(unit, 500, "as_found", 11.0)  # older than the twelve months
    assert unit_charts(unit, timezone.localdate())["svg"] == ""

    _diagnosed_reading(unit, 20, "as_found", 12.0)
    charts = unit_charts(unit, timezone.localdate())
    assert "<svg" in charts["svg"]
    assert charts["described"] == ["Superheat: evaporator superheat against its ok range"]


def test_an_acknowledged_card_on_the_attention_list_keeps_its_unit_and_site(
    office, world, django_assert_max_num_queries
):
    """Acknowledged with the list's one form, the card still names its unit (linked) and
    its site, as it did before; the acknowledgement costs five queries (session, user,
    roles, the flags offered, the update)."""
    before = office.get(reverse("fleet:attention")).content.decode()
    assert f'name="flags" value="{world.flag.pk}" form="acknowledge"' in before
    with django_assert_max_num_queries(5):
        response = office.post(
            reverse("fleet:attention-acknowledge"),
            {"flags": [world.flag.pk], "note": "Coil clean booked"},
        )
    assert response.status_code == 302
    after = office.get(response["Location"]).content.decode()
    assert "Coil clean booked" in after
    assert reverse("fleet:unit", args=[world.unit.pk]) in after
    assert world.unit.tag in after
    assert world.site.name in after


def test_an_acknowledged_card_on_the_unit_page_names_no_unit(office, world):
    """On the unit's own page the card leaves the unit out, before and after."""
    response = office.post(
        reverse("fleet:flag-acknowledge", args=[world.flag.pk]),
        {"acknowledgement_note": "Coil clean booked"},
        HTTP_HX_REQUEST="true",
    )
    fragment = response.content.decode()
    assert "Coil clean booked" in fragment
    assert world.site.name not in fragment
