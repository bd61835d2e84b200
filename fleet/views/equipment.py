"""Equipment by what is on its plate: the office's search by tag, serial or model across the
fleet, and the sheet of asset tags whose QR codes open each unit's page."""

from __future__ import annotations

import io

import segno
from django.core.paginator import Paginator
from django.http import HttpRequest, HttpResponse
from django.shortcuts import get_object_or_404
from django.template.loader import render_to_string
from django.urls import reverse
from django.utils import timezone
from django.views.decorators.http import require_GET

from fleet.choices import Role
from fleet.models import Site, Unit

from .base import BadParameter, bad_parameter, page, within_reach

#: Rows on one page of search results.
SEARCH_PAGE_SIZE = 50
#: The shortest text searched for: one or two characters match most of a fleet.
SEARCH_MIN_LENGTH = 3


@within_reach(Role.OFFICE)
@require_GET
def plate_search(request: HttpRequest) -> HttpResponse:
    """Units whose tag, serial or model (or a part's) holds the text, a page at a time."""
    text = request.GET.get("q", "").strip()
    found = None
    if text:
        if len(text) < SEARCH_MIN_LENGTH:
            problem = f"give at least {SEARCH_MIN_LENGTH} characters"
            return bad_parameter(request, BadParameter("q", text, problem))
        units = (
            Unit.objects.visible_to(request.user)
            .filter(Unit.plate_matches(text))
            .select_related("site__customer", "refrigerant")
            .order_by("site__customer__name", "site__name", "tag", "id")
        )
        found = Paginator(units, SEARCH_PAGE_SIZE).get_page(request.GET.get("page"))
    return page(request, "fleet/plate_search.html", {"q": text, "found": found})


def qr_svg(url: str) -> str:
    """The QR code of ``url`` as an SVG element (error correction M: a label scuffed on a
    roof still reads), drawn by segno."""
    out = io.BytesIO()
    segno.make(url, error="m").save(out, kind="svg", scale=4, border=2, xmldecl=False)
    return out.getvalue().decode()


@within_reach(Role.OFFICE)
@require_GET
def site_tags(request: HttpRequest, pk: int) -> HttpResponse:
    """A PDF sheet of asset tags for the site's units in service (or ``?unit=`` one of
    them): each with its QR code to the unit's page, its tag, refrigerant and plate data."""
    from reports.render import render_pdf

    site = get_object_or_404(Site.objects.visible_to(request.user), pk=pk)
    units = site.units.filter(retired_on__isnull=True).select_related("refrigerant")
    only = request.GET.get("unit", "")
    if only:
        if not only.isdigit():
            problem = "must be a unit id, a whole number"
            return bad_parameter(request, BadParameter("unit", only, problem))
        units = units.filter(pk=int(only))
    labels = []
    for unit in units.order_by("tag"):
        url = request.build_absolute_uri(reverse("fleet:unit", args=[unit.pk]))
        labels.append({"unit": unit, "url": url, "qr": qr_svg(url)})
    html = render_to_string(
        "fleet/tag_sheet.html",
        {"site": site, "labels": labels, "printed_on": timezone.localdate()},
    )
    pdf, _pages = render_pdf(html)
    response = HttpResponse(pdf, content_type="application/pdf")
    response["Content-Disposition"] = f'inline; filename="tags-site-{site.pk}.pdf"'
    return response
