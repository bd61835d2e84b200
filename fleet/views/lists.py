"""What the office's long lists share: filters read from the query string with
django-filter, and pages cut with Django's Paginator, so that a list renders the same
number of rows (and asks the same number of queries) whatever the fleet's size.

A filter or page number the list cannot use is a ``BadParameter`` (a 400 naming it), never
silently dropped or replaced by another page.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any, TypeVar

import django_filters as filters
from django.core.paginator import InvalidPage, Page, Paginator
from django.db.models import QuerySet
from django.http import HttpRequest

from fleet.forms import technician_users
from fleet.models import Customer, Unit, Visit
from fleet.validation import MAX_RECORD_ID

from .base import BadParameter

F = TypeVar("F", bound=filters.FilterSet)


def id_filter(field_name: str, label: str) -> filters.NumberFilter:
    """A record's id: numbers no record can have are refused, not sent to SQL."""
    return filters.NumberFilter(
        field_name=field_name, label=label, min_value=1, max_value=MAX_RECORD_ID
    )


def _customers(request: HttpRequest | None) -> QuerySet[Customer]:
    """The customers a list may be narrowed to: those within the user's reach."""
    user = request.user if request is not None else None
    return Customer.objects.visible_to(user).order_by("name")


def _technicians(request: HttpRequest | None) -> QuerySet[Any]:
    """The technicians a list may be narrowed to: the schedule's, in its order."""
    return technician_users()


def customer_filter(field_name: str) -> filters.ModelChoiceFilter:
    """A customer chosen from a list of those within reach (any other is refused)."""
    return filters.ModelChoiceFilter(
        field_name=field_name, label="Customer", queryset=_customers, empty_label="Every customer"
    )


class ListFilter(filters.FilterSet):
    """A list's filter: the query set's filters, and choices the list applies itself."""

    def chosen(self, queryset: QuerySet[Any], name: str, value: str) -> QuerySet[Any]:
        return queryset

    def choice(self, name: str) -> str:
        """What a ``choice_only`` filter was given ("" for none)."""
        return str(self.form.cleaned_data.get(name) or "")


class UnitPlaceFilter(ListFilter):
    """Units by their customer or site: the attention list and maintenance narrow their
    units with it, and every record they show follows its unit."""

    customer = customer_filter("site__customer")
    site = id_filter("site_id", "Site")

    class Meta:
        model = Unit
        fields = ["customer", "site"]


class VisitPlaceFilter(ListFilter):
    """Visits by customer, site or technician (the review queue)."""

    customer = customer_filter("site__customer")
    site = id_filter("site_id", "Site")
    technician = filters.ModelChoiceFilter(
        field_name="technicians",
        label="Technician",
        queryset=_technicians,
        empty_label="Every technician",
    )

    class Meta:
        model = Visit
        fields = ["customer", "site", "technician"]


def choice_only(
    label: str, choices: list[tuple[str, str]], empty_label: str
) -> filters.ChoiceFilter:
    """A choice the list applies itself after reading its rows (an urgency, a kind of
    item), checked by the filter like any other: the query set is left as it is."""
    return filters.ChoiceFilter(
        label=label, choices=choices, empty_label=empty_label, method="chosen"
    )


def filtered(filterset: type[F], request: HttpRequest, queryset: QuerySet[Any]) -> F:
    """The list's filter, bound to the query string; the first filter it cannot use is a
    ``BadParameter`` naming it."""
    bound: F = filterset(request.GET, queryset=queryset, request=request)
    if not bound.is_valid():
        name, errors = next(iter(bound.errors.items()))
        raise BadParameter(name, request.GET.get(name, ""), "; ".join(errors))
    return bound


def page_of(request: HttpRequest, rows: Sequence[Any] | QuerySet[Any], per_page: int) -> Page:
    """The page of ``rows`` the query string asks for (``page``, the first by default)."""
    paginator = Paginator(rows, per_page)
    raw = request.GET.get("page", "1")
    try:
        return paginator.page(raw)
    except InvalidPage:
        raise BadParameter(
            "page", raw, f"is not a page of this list (pages 1 to {paginator.num_pages})"
        ) from None


def kept_query(request: HttpRequest) -> str:
    """The query string without its page number: what the pager's links carry on, so the
    filters stay as they were from page to page."""
    query = request.GET.copy()
    query.pop("page", None)
    return query.urlencode()
