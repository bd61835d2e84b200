"""The office in a real browser: finds a unit by the serial read off its plate, prints its
asset tag, reads the tag's QR code back from the PDF and opens the address it holds (as a
phone's camera would), then keeps a nameplate photo with the unit. Screenshots go to
tests/screenshots/."""

from __future__ import annotations

import io
import re

import pytest

from fleet.models import UnitDocument
from tests.factories import SiteFactory, UnitFactory, UserFactory

from .test_office_day import sign_in

pytestmark = [
    pytest.mark.browser,
    pytest.mark.django_db(transaction=True, serialized_rollback=True),
]


def _photo() -> bytes:
    """A small JPEG standing in for a nameplate photo (synthetic: a grey square)."""
    from PIL import Image

    out = io.BytesIO()
    Image.new("RGB", (64, 48), (150, 150, 150)).save(out, format="JPEG")
    return out.getvalue()


def test_find_by_serial_print_the_tag_and_open_the_unit_by_its_qr_code(
    live_server, browser_context, shot, settings, tmp_path
):
    import pypdfium2
    import zxingcpp

    settings.MEDIA_ROOT = tmp_path
    UserFactory(username="dana", role="office")
    site = SiteFactory(name="Harbour Deli")
    unit = UnitFactory(
        site=site, tag="HD-WIC-1", make="Coldline", model_number="CL-7", serial_number="SN-48213"
    )
    UnitFactory(site=site, tag="HD-RI-1", serial_number="SN-99120")
    base = live_server.url
    page = browser_context.new_page()
    sign_in(page, base, "dana")

    page.get_by_role("link", name="Find", exact=True).click()
    page.get_by_label("Tag, serial or model number").fill("48213")
    page.get_by_role("button", name="Search").click()
    page.get_by_text("1 unit match").wait_for()
    shot(page, "find-by-serial")
    page.get_by_role("link", name="HD-WIC-1").click()
    page.get_by_role("heading", name=re.compile("HD-WIC-1")).wait_for()

    # Print the tag: the PDF the link gives, fetched with the browser's own session.
    tag_link = page.get_by_role("link", name="Print this unit's tag")
    answer = browser_context.request.get(base + tag_link.get_attribute("href"))
    assert answer.status == 200
    assert answer.headers["content-type"] == "application/pdf"
    image = pypdfium2.PdfDocument(answer.body())[0].render(scale=200 / 72).to_pil()
    read = [code.text for code in zxingcpp.read_barcodes(image)]
    assert read == [f"{base}/units/{unit.pk}/"]

    # The address on the tag opens the unit's page.
    page.goto("about:blank")
    page.goto(read[0])
    page.get_by_role("heading", name=re.compile("HD-WIC-1")).wait_for()
    assert "SN-48213" in page.content()

    # Keep the nameplate photo with the unit.
    page.get_by_label("What it is").select_option("nameplate_photo")
    page.get_by_label("Title (optional)").fill("Plate on the condensing unit")
    page.get_by_label("File").set_input_files(
        {"name": "plate.jpg", "mimeType": "image/jpeg", "buffer": _photo()}
    )
    page.get_by_role("button", name="Keep the file").click()
    page.get_by_role("link", name="Plate on the condensing unit").wait_for()
    shot(page, "unit-with-nameplate-photo")
    kept = UnitDocument.objects.get(unit=unit)
    assert kept.kind == "nameplate_photo"
    photo = browser_context.request.get(f"{base}/documents/{kept.pk}/")
    assert photo.status == 200
    assert photo.body() == _photo()
