"""One FilterSet per resource; the API uses them and the office pages can too.

Foreign keys are filtered by id with number filters, not model-choice filters: a
model-choice filter would answer "not a valid choice" for an id that does not exist but
not for one outside the caller's reach, and so tell them apart.
"""

from __future__ import annotations

import datetime as dt

import django_filters as filters
from django.db.models import QuerySet
from django.utils import timezone

from fleet import choices
from fleet.models import (
    Component,
    Customer,
    ReadingSet,
    Refrigerant,
    RefrigerantEvent,
    Site,
    Unit,
    Visit,
)
from fleet.validation import MAX_RECORD_ID


def id_filter(field_name: str, help_text: str) -> filters.NumberFilter:
    """An id filter: larger numbers than any record's id are refused (400), not sent to SQL."""
    return filters.NumberFilter(
        field_name=field_name, min_value=1, max_value=MAX_RECORD_ID, help_text=help_text
    )


class CustomerFilterSet(filters.FilterSet):
    name = filters.CharFilter(lookup_expr="icontains", help_text="Part of the name.")

    class Meta:
        model = Customer
        fields = ["name"]


class SiteFilterSet(filters.FilterSet):
    customer = id_filter("customer_id", "Customer id.")
    name = filters.CharFilter(lookup_expr="icontains", help_text="Part of the name.")

    class Meta:
        model = Site
        fields = ["customer", "name"]


class UnitFilterSet(filters.FilterSet):
    site = id_filter("site_id", "Site id.")
    customer = id_filter("site__customer_id", "Customer id.")
    tag = filters.CharFilter(lookup_expr="icontains", help_text="Part of the tag.")
    refrigerant = filters.CharFilter(
        field_name="refrigerant__designation", lookup_expr="iexact", help_text="e.g. R-404A."
    )
    application = filters.ChoiceFilter(choices=choices.Application.choices)
    appliance_type = filters.ChoiceFilter(choices=choices.ApplianceType.choices)
    in_service = filters.BooleanFilter(
        field_name="retired_on", lookup_expr="isnull", help_text="true: not retired."
    )
    plate = filters.CharFilter(
        method="on_the_plate",
        help_text="Part of a tag, serial number or model number, the unit's or its "
        "compressor's or one of its parts'.",
    )

    def on_the_plate(self, queryset: QuerySet[Unit], name: str, value: str) -> QuerySet[Unit]:
        return queryset.filter(Unit.plate_matches(value))

    class Meta:
        model = Unit
        fields = ["site", "customer", "tag", "refrigerant", "application", "appliance_type"]


class ComponentFilterSet(filters.FilterSet):
    unit = id_filter("unit_id", "Unit id.")
    kind = filters.ChoiceFilter(choices=choices.ComponentKind.choices)
    in_service = filters.BooleanFilter(
        field_name="removed_on", lookup_expr="isnull", help_text="true: still fitted."
    )

    class Meta:
        model = Component
        fields = ["unit", "kind"]


class RefrigerantFilterSet(filters.FilterSet):
    kind = filters.ChoiceFilter(choices=choices.RefrigerantKind.choices)
    safety_class = filters.CharFilter(lookup_expr="iexact", help_text="e.g. A1, A2L.")

    class Meta:
        model = Refrigerant
        fields = ["kind", "safety_class"]


class VisitFilterSet(filters.FilterSet):
    status = filters.MultipleChoiceFilter(choices=choices.VisitStatus.choices)
    kind = filters.ChoiceFilter(choices=choices.VisitKind.choices)
    site = id_filter("site_id", "Site id.")
    unit = id_filter("visit_units__unit_id", "Unit id.")
    mine = filters.BooleanFilter(
        method="filter_mine", help_text="true: only visits assigned to the caller."
    )
    date = filters.DateFilter(
        method="filter_date",
        help_text="YYYY-MM-DD: visits whose window overlaps that day (contractor's time zone).",
    )

    class Meta:
        model = Visit
        fields = ["status", "kind", "site", "unit", "mine", "date"]

    def filter_mine(
        self, queryset: QuerySet[Visit], name: str, value: bool | None
    ) -> QuerySet[Visit]:
        if value is None:
            return queryset
        mine = Visit.technicians.through.objects.filter(user=self.request.user).values("visit_id")
        return queryset.filter(pk__in=mine) if value else queryset.exclude(pk__in=mine)

    def filter_date(self, queryset: QuerySet[Visit], name: str, value: dt.date) -> QuerySet[Visit]:
        if not 1900 <= value.year <= 9000:
            return queryset.none()  # no visits then; spares the time-zone arithmetic overflow
        # The day in the contractor's zone: a 7 am visit in Chicago is not "tomorrow" in UTC.
        zone = timezone.get_current_timezone()
        start = dt.datetime.combine(value, dt.time.min, tzinfo=zone)
        end = dt.datetime.combine(value + dt.timedelta(days=1), dt.time.min, tzinfo=zone)
        return queryset.filter(window_start__lt=end, window_end__gt=start)


class VisitRecordFilterSet(filters.FilterSet):
    """A record hanging off a unit of a visit (its visit is in the path)."""

    unit = id_filter("visit_unit__unit_id", "Unit id.")


class ReadingSetFilterSet(VisitRecordFilterSet):
    stage = filters.ChoiceFilter(choices=choices.Stage.choices)

    class Meta:
        model = ReadingSet
        fields = ["unit", "stage"]


class RefrigerantEventFilterSet(VisitRecordFilterSet):
    kind = filters.ChoiceFilter(choices=choices.RefrigerantEventKind.choices)

    class Meta:
        model = RefrigerantEvent
        fields = ["unit", "kind"]
