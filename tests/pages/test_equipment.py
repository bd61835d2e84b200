"""Equipment by its plate: the office finds a unit by tag, serial or model (its own, its
compressor's or a part's), and prints asset tags whose text and QR codes lead to the unit's
page. Makes, models and serials are synthetic test inputs."""

from __future__ import annotations

import datetime as dt
import io

import pytest
from pypdf import PdfReader

from tests.factories import ComponentFactory, SiteFactory, UnitFactory

pytestmark = pytest.mark.django_db


@pytest.fixture
def plates():
    site = SiteFactory(name="Harbour Deli")
    cooler = UnitFactory(
        site=site,
        tag="HD-WIC-1",
        make="Polar Works",
        model_number="PW-450M",
        serial_number="SN-TEST-0001",
        compressor_model="CX-22",
        compressor_serial="CMP-TEST-7788",
    )
    freezer = UnitFactory(site=site, tag="HD-WIF-1", serial_number="SN-TEST-0002")
    ComponentFactory(unit=freezer, serial_number="CAP-TEST-5150", model_number="RC-45")
    retired = UnitFactory(site=site, tag="HD-OLD-1", retired_on=dt.date(2025, 1, 1))
    return site, cooler, freezer, retired


@pytest.mark.parametrize(
    ("text", "tags"),
    [
        ("sn-test-0001", ["HD-WIC-1"]),  # case does not matter
        ("SN-TEST", ["HD-WIC-1", "HD-WIF-1"]),
        ("CMP-TEST-7788", ["HD-WIC-1"]),  # the compressor's serial
        ("CAP-TEST-5150", ["HD-WIF-1"]),  # a part's serial finds its unit
        ("PW-450", ["HD-WIC-1"]),
        ("HD-OLD", ["HD-OLD-1"]),  # a retired unit is still found, with its history
        ("nothing-like-it", []),
    ],
)
def test_the_office_finds_a_unit_by_its_plate(office, plates, text, tags):
    response = office.get("/search/", {"q": text})
    assert response.status_code == 200
    assert [u.tag for u in response.context["found"]] == tags


def test_too_short_a_search_is_400_naming_q(office, plates):
    response = office.get("/search/", {"q": "SN"})
    assert response.status_code == 400
    assert "q=SN" in response.content.decode()


def test_search_is_the_offices(tech, plates):
    assert tech.get("/search/", {"q": "SN-TEST"}).status_code == 404


def test_search_asks_a_fixed_number_of_queries(office, plates, django_assert_num_queries):
    site = plates[0]
    office.get("/search/", {"q": "SN-TEST"})  # sessions and the like, once
    with django_assert_num_queries(7) as first:
        office.get("/search/", {"q": "SN-TEST"})
    for i in range(20):
        UnitFactory(site=site, tag=f"HD-X-{i}", serial_number=f"SN-TEST-1{i:03d}")
    with django_assert_num_queries(len(first)):
        response = office.get("/search/", {"q": "SN-TEST"})
    assert response.context["found"].paginator.count == 22


def test_the_api_filters_units_by_their_plate(office_user, plates):
    from tests.api.conftest import token_client

    body = token_client(office_user).get("/api/v1/units/", {"plate": "CAP-TEST-5150"}).json()
    assert [u["tag"] for u in body["results"]] == ["HD-WIF-1"]
    assert body["results"][0]["serial_number"] == "SN-TEST-0002"


def _pdf_text(response) -> str:
    assert response["Content-Type"] == "application/pdf"
    reader = PdfReader(io.BytesIO(response.content))
    return "\n".join(page.extract_text() for page in reader.pages)


def test_the_tag_sheet_holds_each_unit_in_service_and_its_address(office, plates):
    site, cooler, freezer, retired = plates
    text = _pdf_text(office.get(f"/sites/{site.pk}/tags.pdf"))
    assert "HD-WIC-1" in text
    assert "HD-WIF-1" in text
    assert "HD-OLD-1" not in text
    assert "S/N SN-TEST-0001" in text
    for unit in (cooler, freezer):
        # the address the QR code carries is printed under it, whole
        assert f"http://testserver/units/{unit.pk}/" in text.replace("\n", "")


def test_one_units_tag(office, plates):
    site, cooler, _freezer, _retired = plates
    text = _pdf_text(office.get(f"/sites/{site.pk}/tags.pdf", {"unit": cooler.pk}))
    assert "HD-WIC-1" in text
    assert "HD-WIF-1" not in text
    assert office.get(f"/sites/{site.pk}/tags.pdf", {"unit": "x"}).status_code == 400


def test_the_unit_page_shows_the_plate(office, plates):
    _site, cooler, _freezer, _retired = plates
    page = office.get(f"/units/{cooler.pk}/").content.decode()
    assert "Polar Works PW-450M" in page
    assert "SN-TEST-0001" in page
    assert "CX-22, serial CMP-TEST-7788" in page


def test_each_tags_qr_code_reads_back_as_its_units_address(office, plates):
    """The sheet drawn to pixels at 200 dpi (PDFium) and its codes decoded by ZXing: an
    independent reader, so a code that only our encoder could read would fail here."""
    import pypdfium2
    import zxingcpp

    site, cooler, freezer, _retired = plates
    pdf = pypdfium2.PdfDocument(office.get(f"/sites/{site.pk}/tags.pdf").content)
    image = pdf[0].render(scale=200 / 72).to_pil()
    read = sorted(code.text for code in zxingcpp.read_barcodes(image))
    assert read == sorted(f"http://testserver/units/{u.pk}/" for u in (cooler, freezer))
    # and the address opens the unit's page
    assert office.get(read[0].removeprefix("http://testserver")).status_code == 200
