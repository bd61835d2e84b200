"""Reading sets and refrigerant events of a visit (``visits/{visit_pk}/...``): the
visit is found within the caller's reach first; a new record is stored once per
client_id, and a retry is answered with the stored one."""

from __future__ import annotations

import uuid
from collections.abc import Callable
from typing import Any, cast

from django.db.models import QuerySet
from django.http import Http404
from django.urls import reverse
from django.utils.functional import cached_property
from drf_spectacular.types import OpenApiTypes
from drf_spectacular.utils import OpenApiParameter, extend_schema, extend_schema_view
from rest_framework import mixins, status
from rest_framework.exceptions import PermissionDenied
from rest_framework.permissions import SAFE_METHODS
from rest_framework.request import Request
from rest_framework.response import Response

from fleet import services
from fleet.api import filtersets
from fleet.api.permissions import visit_in_reach
from fleet.api.serializers import (
    PartFittedSerializer,
    ReadingSetSerializer,
    RefrigerantEventSerializer,
    VisitRecordSerializer,
)
from fleet.choices import VisitStatus
from fleet.models import Component, ReadingSet, RefrigerantEvent, Visit, VisitUnit
from fleet.reach import OFFICE, TECHNICIAN, roles_of

from .base import Conflict, DiagnosedPagination, RimewatchViewSet, signed_in

VISIT_PK = OpenApiParameter("visit_pk", OpenApiTypes.INT, OpenApiParameter.PATH)

#: The statuses in which each role may write readings and refrigerant events: technicians
#: only while the visit is in progress; the office also after submission (recorded). A user
#: in several roles may write in any status one of them may.
WRITABLE = {
    TECHNICIAN: frozenset({VisitStatus.IN_PROGRESS}),
    OFFICE: frozenset({VisitStatus.IN_PROGRESS, VisitStatus.SUBMITTED, VisitStatus.REVIEWED}),
}
#: The answer to a client_id stored on another visit (409).
ON_ANOTHER_VISIT = "already used for a record on another visit"
#: The answer on each field of a retry whose value differs from the stored record's (409).
DIFFERS = "differs from the record stored under this client_id"


class VisitRecordViewSet(
    mixins.ListModelMixin,
    mixins.RetrieveModelMixin,
    mixins.CreateModelMixin,
    mixins.UpdateModelMixin,
    mixins.DestroyModelMixin,
    RimewatchViewSet,
):
    """Records of one visit (``visits/{visit_pk}/...``); the visit is found within the
    caller's reach before anything else, so a visit out of reach is 404 for every method."""

    http_method_names = ["get", "post", "patch", "delete", "head", "options"]
    lookup_value_regex = r"[0-9]+"
    states_units = True
    action_roles = {
        "create": (OFFICE, TECHNICIAN),
        "partial_update": (OFFICE,),
        "destroy": (OFFICE,),
    }
    model: type[ReadingSet] | type[RefrigerantEvent]
    relation: str
    record_noun: str

    @cached_property
    def _reach(self) -> tuple[Visit, list[VisitUnit]]:
        """The visit within the caller's reach and its units, each with its unit, site and
        refrigerant (a new reading set is diagnosed against its unit's); 404 otherwise."""
        found = visit_in_reach(self.request.user, int(self.kwargs["visit_pk"]))
        if found is None:
            # as get_object_or_404 words it for every other record out of reach
            raise Http404("No Visit matches the given query.")
        return found

    @property
    def visit(self) -> Visit:
        return self._reach[0]

    @property
    def visit_units(self) -> list[VisitUnit]:
        return self._reach[1]

    def check_permissions(self, request: Request) -> None:
        if roles_of(request.user):
            self.visit  # noqa: B018 -- reach first: 404 for a visit out of reach, whatever the method
        super().check_permissions(request)

    def get_queryset(self) -> QuerySet:
        if getattr(self, "swagger_fake_view", False):
            return self.model.objects.none()
        return (
            self.model.objects.filter(visit_unit__visit=self.visit)
            .select_related(*services.RECORD_RELATIONS, self.relation)
            .order_by(*(self.model._meta.ordering or ()), "id")
        )

    def get_serializer_context(self) -> dict[str, Any]:
        context = super().get_serializer_context()
        if not getattr(self, "swagger_fake_view", False) and "visit_pk" in self.kwargs:
            context["visit"], context["visit_units"] = self._reach
        return context

    def _check_writable(self) -> None:
        visit = self.visit
        roles = roles_of(self.request.user).names
        allowed = frozenset().union(*(WRITABLE.get(role, ()) for role in roles))
        if visit.status not in allowed:
            states = " or ".join(sorted(allowed)) or "never"
            raise Conflict(
                {
                    "visit": [
                        f"visit {visit.reference} is {visit.status}; your role records "
                        f"{self.record_noun} on a visit that is {states}"
                    ]
                }
            )

    def _repeat(self, data: Any) -> Any:
        """The record already stored under the request's client_id, if any (a retry)."""
        raw = data.get("client_id") if isinstance(data, dict) else None
        try:
            client_id = uuid.UUID(str(raw)) if raw is not None else None
        except ValueError:
            return None
        if client_id is None:
            return None
        # Most posts are new: a bare look-up of the id first (a fraction of the cost of
        # fetching a record with its relations), the record itself only for a retry.
        stored_pk = (
            self.model.objects.filter(client_id=client_id)
            .order_by()
            .values_list("pk", flat=True)
            .first()
        )
        if stored_pk is None:
            return None
        stored = (
            self.model.objects.select_related("created_by", self.relation)
            .filter(pk=stored_pk)
            .first()
        )
        if stored is None:  # deleted since
            return None
        units = {row.pk: row for row in self.visit_units}
        if stored.visit_unit_id not in units:  # a unit-on-visit belongs to one visit only
            raise Conflict({"client_id": [ON_ANOTHER_VISIT]})
        stored.visit_unit = units[stored.visit_unit_id]  # its unit and site are in hand
        return stored

    def _check_same_visit(self, stored: Any) -> None:
        if stored is not None and stored.visit_unit.visit_id != self.visit.pk:
            raise Conflict({"client_id": [ON_ANOTHER_VISIT]})

    def _check_unchanged(self, serializer: VisitRecordSerializer, stored: Any) -> None:
        """A retry must carry the body that was stored: one that differs is a 409 naming
        each differing field and where the stored record is, so the phone can tell the
        technician instead of dropping the new values without a word."""
        differ = serializer.differences(stored)
        if not differ:
            return
        url = self.request.build_absolute_uri(
            reverse(f"{self.basename}-detail", kwargs={"visit_pk": self.visit.pk, "pk": stored.pk})
        )
        raise Conflict(
            {
                "client_id": [
                    f"already used for the record at {url}, which holds other values for "
                    f"{', '.join(differ)}; send a new client_id to store another record"
                ],
                **{wire: [DIFFERS] for wire in differ},
                "stored": url,
            }
        )

    def create(self, request: Request, *args: Any, **kwargs: Any) -> Response:
        stored = self._repeat(request.data)
        if stored is not None:
            context = {**self.get_serializer_context(), "repeat_of": stored}
            retry = cast(
                VisitRecordSerializer, self.get_serializer(data=request.data, context=context)
            )
            retry.is_valid(raise_exception=True)
            self._check_unchanged(retry, stored)
            return Response(self.get_serializer(stored).data, status=status.HTTP_200_OK)
        self._check_writable()
        # serializer_class is a VisitRecordSerializer, which says whether it stored
        serializer = cast(VisitRecordSerializer, self.get_serializer(data=request.data))
        serializer.is_valid(raise_exception=True)
        record = serializer.save(created_by=signed_in(request))
        self._check_same_visit(record)
        if not serializer.created:  # a concurrent request with this client_id stored it
            self._check_unchanged(serializer, record)
        code = status.HTTP_201_CREATED if serializer.created else status.HTTP_200_OK
        return Response(serializer.data, status=code)

    def perform_update(self, serializer: Any) -> None:
        self._check_writable()
        serializer.save()

    def perform_destroy(self, instance: Any) -> None:
        self._check_writable()
        try:
            services.delete_record(instance, by=signed_in(self.request))
        except services.KeptRecord as kept:
            raise Conflict({"non_field_errors": [str(kept)]}) from kept


def visit_record_schema(serializer: type, create_description: str) -> Callable:
    """The schema of a ``visits/{visit_pk}/...`` viewset: the visit in every path, and a
    create that answers 201 for a new record and 200 for a repeat."""
    return extend_schema_view(
        list=extend_schema(parameters=[VISIT_PK]),
        retrieve=extend_schema(parameters=[VISIT_PK]),
        create=extend_schema(
            parameters=[VISIT_PK],
            responses={201: serializer, 200: serializer},
            description=create_description,
        ),
        partial_update=extend_schema(parameters=[VISIT_PK]),
        destroy=extend_schema(parameters=[VISIT_PK]),
    )


@visit_record_schema(
    ReadingSetSerializer,
    "Store a reading set and return it with its diagnosis. A repeat of a stored client_id "
    "returns the stored set with 200 and stores nothing.",
)
class ReadingSetViewSet(VisitRecordViewSet):
    """Reading sets of a visit, each with its diagnosis. A technician corrects (PATCH) or
    withdraws (DELETE) the sets they recorded while the visit is in progress; the office
    any set, as for every visit record."""

    serializer_class = ReadingSetSerializer
    pagination_class = DiagnosedPagination
    filterset_class = filtersets.ReadingSetFilterSet
    queryset = ReadingSet.objects.all()
    model = ReadingSet
    relation = "diagnosis"
    record_noun = "readings"
    action_roles = {
        **VisitRecordViewSet.action_roles,
        "partial_update": (OFFICE, TECHNICIAN),
        "destroy": (OFFICE, TECHNICIAN),
    }

    def check_object_permissions(self, request: Request, obj: Any) -> None:
        """Beyond the role: without the office's, only one's own set may be changed."""
        super().check_object_permissions(request, obj)
        if request.method in SAFE_METHODS or roles_of(request.user).office:
            return
        if obj.created_by_id != request.user.pk:
            by = obj.created_by.username if obj.created_by else "the office"
            raise PermissionDenied(
                f"a technician changes or withdraws only the reading sets they recorded; "
                f"this one was recorded by {by}"
            )


@visit_record_schema(
    RefrigerantEventSerializer,
    "Store a refrigerant event; an addition comes back with its leak rate. A repeat of a "
    "stored client_id returns the stored event with 200.",
)
class RefrigerantEventViewSet(VisitRecordViewSet):
    """Refrigerant added or recovered, leaks found or repaired, verification tests."""

    serializer_class = RefrigerantEventSerializer
    filterset_class = filtersets.RefrigerantEventFilterSet
    queryset = RefrigerantEvent.objects.all()
    model = RefrigerantEvent
    relation = "leak_rate"
    record_noun = "refrigerant events"


@extend_schema_view(
    list=extend_schema(parameters=[VISIT_PK]),
    retrieve=extend_schema(parameters=[VISIT_PK]),
    create=extend_schema(
        parameters=[VISIT_PK],
        responses={201: PartFittedSerializer, 200: PartFittedSerializer},
        description="Record a part fitted on a unit of the visit. A repeat of a stored "
        "client_id returns the stored part with 200 and changes nothing.",
    ),
)
class PartFittedViewSet(VisitRecordViewSet):
    """Parts fitted on a visit, each with the part it replaced marked removed. Technicians
    record them while the visit is in progress; corrections are the office's, on the
    components resource, where every part's history is kept."""

    http_method_names = ["get", "post", "head", "options"]
    serializer_class = PartFittedSerializer
    filterset_class = None
    queryset = Component.objects.all()
    record_noun = "parts"
    states_units = False

    def get_queryset(self) -> QuerySet:
        if getattr(self, "swagger_fake_view", False):
            return Component.objects.none()
        return Component.objects.filter(changed_on_visit=self.visit).order_by("id")

    def create(self, request: Request, *args: Any, **kwargs: Any) -> Response:
        stored = self._stored_part(request.data)
        if stored is not None:
            return Response(self.get_serializer(stored).data, status=status.HTTP_200_OK)
        self._check_writable()
        serializer = cast(PartFittedSerializer, self.get_serializer(data=request.data))
        serializer.is_valid(raise_exception=True)
        part = serializer.save()
        if part.changed_on_visit_id != self.visit.pk:  # a concurrent post on another visit
            raise Conflict({"client_id": [ON_ANOTHER_VISIT]})
        code = status.HTTP_201_CREATED if serializer.created else status.HTTP_200_OK
        return Response(serializer.data, status=code)

    def _stored_part(self, data: Any) -> Component | None:
        """The part already stored under the request's client_id (a retry): the same visit,
        unit and kind, else a 409 naming what differs."""
        raw = data.get("client_id") if isinstance(data, dict) else None
        try:
            client_id = uuid.UUID(str(raw)) if raw is not None else None
        except ValueError:
            return None  # the serializer names the field
        if client_id is None:
            return None
        stored = Component.objects.filter(client_id=client_id).first()
        if stored is None:
            return None
        if stored.changed_on_visit_id != self.visit.pk:
            raise Conflict({"client_id": [ON_ANOTHER_VISIT]})
        differ = {
            wire: [DIFFERS]
            for wire, value in (("unit", stored.unit_id), ("kind", stored.kind))
            if wire in data and data[wire] != value
        }
        if differ:
            raise Conflict({"client_id": ["already used for another part on this visit"], **differ})
        return stored
