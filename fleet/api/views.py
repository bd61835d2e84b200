"""The fleet's REST endpoints. Thin: scope the queryset, parse, call a service, serialise.

Every queryset is scoped to the caller's reach (``permissions.visible_*``) before anything
is fetched, and prefetches what its serializer reads, so a list costs the same number of
queries for one record as for a page of them.
"""

from __future__ import annotations

import uuid
from collections.abc import Callable
from typing import Any

from django.contrib.auth import authenticate
from django.db import transaction
from django.db.models import QuerySet
from django.http import Http404
from django.shortcuts import get_object_or_404
from django.utils.functional import cached_property
from drf_spectacular.openapi import AutoSchema
from drf_spectacular.types import OpenApiTypes
from drf_spectacular.utils import OpenApiParameter, extend_schema, extend_schema_view
from rest_framework import mixins, serializers, status, viewsets
from rest_framework.authtoken.models import Token
from rest_framework.decorators import action
from rest_framework.exceptions import APIException, NotFound, PermissionDenied, ValidationError
from rest_framework.pagination import PageNumberPagination
from rest_framework.permissions import AllowAny, IsAuthenticated
from rest_framework.request import Request
from rest_framework.response import Response
from rest_framework.views import APIView

from diagnostics.core.refrigerants import UnknownRefrigerant, normalise_designation
from fleet import audit, filtersets, services
from fleet.api.permissions import (
    OFFICE,
    TECHNICIAN,
    HasRole,
    role_of,
    visible_components,
    visible_customers,
    visible_sites,
    visible_units,
    visible_visits,
    visit_in_reach,
)
from fleet.api.serializers import (
    AuditEntrySerializer,
    CancelSerializer,
    ComponentSerializer,
    CustomerSerializer,
    ReadingSetSerializer,
    RefrigerantEventSerializer,
    RefrigerantSerializer,
    ReviewSerializer,
    SiteSerializer,
    SubmitSerializer,
    UnitSerializer,
    VisitSerializer,
)
from fleet.api.throttles import AuthRateThrottle
from fleet.choices import VisitStatus
from fleet.display import SYSTEMS
from fleet.models import (
    AuditEntry,
    Component,
    Customer,
    ReadingSet,
    Refrigerant,
    RefrigerantEvent,
    Site,
    Unit,
    Visit,
    VisitUnit,
)

UNITS_PARAMETER = OpenApiParameter(
    "units",
    OpenApiTypes.STR,
    OpenApiParameter.QUERY,
    enum=sorted(SYSTEMS),
    description="Units of the response: us (F, psig, lb) or si (C, kPa gauge, kg). "
    "Default: the contractor's setting.",
)


class Conflict(APIException):
    status_code = status.HTTP_409_CONFLICT
    default_detail = "conflicts with the record's current state"
    default_code = "conflict"


class UnitsAutoSchema(AutoSchema):
    """Documents ``?units=`` on every endpoint whose records carry measurements."""

    def get_override_parameters(self) -> list:
        params = super().get_override_parameters()
        if getattr(self.view, "states_units", False):
            return [*params, UNITS_PARAMETER]
        return params


class Pagination(PageNumberPagination):
    page_size_query_param = "page_size"
    max_page_size = 200


class UnitSystemMixin:
    """Reads ``?units=si|us`` once per request, for the serializers' context."""

    schema = UnitsAutoSchema()
    #: Whether responses carry measurements (and so ``?units=`` is documented).
    states_units = False
    unit_system: str | None = None

    def initial(self, request: Request, *args: Any, **kwargs: Any) -> None:
        super().initial(request, *args, **kwargs)  # type: ignore[misc]
        system = request.query_params.get("units")
        if system is not None and system not in SYSTEMS:
            raise ValidationError({"units": [f"{system!r} is not a unit system; use si or us"]})
        self.unit_system = system

    def unit_context(self) -> dict[str, Any]:
        return {"request": self.request, "unit_system": self.unit_system}  # type: ignore[attr-defined]


class RimewatchViewSet(UnitSystemMixin, viewsets.GenericViewSet):
    """Shared by every viewset: roles, pagination, and the response units."""

    permission_classes = [HasRole]
    pagination_class = Pagination
    #: Roles that may create, change and delete (detail writes are judged on the object).
    write_roles: tuple[str, ...] = (OFFICE,)
    action_roles: dict[str, tuple[str, ...]] = {}

    def get_serializer_context(self) -> dict[str, Any]:
        return {**super().get_serializer_context(), "unit_system": self.unit_system}


class RecordViewSet(
    mixins.ListModelMixin,
    mixins.RetrieveModelMixin,
    mixins.CreateModelMixin,
    mixins.UpdateModelMixin,
    mixins.DestroyModelMixin,
    RimewatchViewSet,
):
    """A fleet record: office writes, every role reads what is within its reach."""

    http_method_names = ["get", "post", "put", "patch", "delete", "head", "options"]

    def perform_destroy(self, instance: Any) -> None:
        with transaction.atomic():
            instance.delete()


class CustomerViewSet(RecordViewSet):
    """Customers: the businesses whose refrigeration the contractor looks after."""

    serializer_class = CustomerSerializer
    filterset_class = filtersets.CustomerFilterSet
    queryset = Customer.objects.all()

    def get_queryset(self) -> QuerySet[Customer]:
        return visible_customers(self.request.user, Customer.objects.order_by("name", "id"))


class SiteViewSet(RecordViewSet):
    """Sites: addresses with refrigeration; the elevation corrects gauge readings there."""

    serializer_class = SiteSerializer
    filterset_class = filtersets.SiteFilterSet
    queryset = Site.objects.all()
    states_units = True

    def get_queryset(self) -> QuerySet[Site]:
        qs = Site.objects.prefetch_related("managers").order_by("customer__name", "name", "id")
        return visible_sites(self.request.user, qs)


class RefrigerantViewSet(mixins.ListModelMixin, mixins.RetrieveModelMixin, RimewatchViewSet):
    """Refrigerants as ASHRAE 34 designates them (read-only for everyone)."""

    serializer_class = RefrigerantSerializer
    filterset_class = filtersets.RefrigerantFilterSet
    queryset = Refrigerant.objects.order_by("designation")
    lookup_field = "designation"
    lookup_value_regex = r"[^/]+"
    states_units = True

    def get_object(self) -> Refrigerant:
        """Any common spelling finds it: r404a, R404A, R-404A."""
        raw = self.kwargs[self.lookup_field]
        try:
            designation = normalise_designation(raw)
        except UnknownRefrigerant as exc:
            raise NotFound({"designation": [str(exc)]}) from exc
        obj = get_object_or_404(self.get_queryset(), designation=designation)
        self.check_object_permissions(self.request, obj)
        return obj


class UnitViewSet(RecordViewSet):
    """Units: one refrigeration system each, with its nameplate and design data."""

    serializer_class = UnitSerializer
    filterset_class = filtersets.UnitFilterSet
    queryset = Unit.objects.all()
    states_units = True

    def get_queryset(self) -> QuerySet[Unit]:
        qs = Unit.objects.select_related("site", "refrigerant").order_by("site_id", "tag", "id")
        return visible_units(self.request.user, qs)


class ComponentViewSet(RecordViewSet):
    """Replaceable parts of units (capacitors, relays, motors...) and their history."""

    serializer_class = ComponentSerializer
    filterset_class = filtersets.ComponentFilterSet
    queryset = Component.objects.all()

    def get_queryset(self) -> QuerySet[Component]:
        qs = Component.objects.select_related("changed_on_visit").order_by("unit_id", "kind", "id")
        return visible_components(self.request.user, qs)


# --- visits --------------------------------------------------------------------------------


@extend_schema_view(
    start=extend_schema(request=None, responses={200: VisitSerializer}),
    submit=extend_schema(request=SubmitSerializer, responses={200: VisitSerializer}),
    review=extend_schema(request=ReviewSerializer, responses={200: VisitSerializer}),
    cancel=extend_schema(request=CancelSerializer, responses={200: VisitSerializer}),
    history=extend_schema(responses={200: AuditEntrySerializer(many=True)}),
)
class VisitViewSet(RecordViewSet):
    """Visits: planned maintenance, service calls and follow-ups, and their life cycle:
    scheduled -> in_progress -> submitted -> reviewed (or returned to in_progress), or
    cancelled. An illegal move is answered 409."""

    serializer_class = VisitSerializer
    filterset_class = filtersets.VisitFilterSet
    queryset = Visit.objects.all()
    action_roles = {
        "start": (OFFICE, TECHNICIAN),
        "submit": (OFFICE, TECHNICIAN),
        "review": (OFFICE,),
        "cancel": (OFFICE,),
    }

    def get_queryset(self) -> QuerySet[Visit]:
        qs = Visit.objects.select_related("site").prefetch_related("technicians", "units")
        return visible_visits(self.request.user, qs.order_by("-window_start", "id"))

    def perform_create(self, serializer: VisitSerializer) -> None:
        with transaction.atomic():
            visit = serializer.save()
            audit.record_created(visit, by=self.request.user)

    def perform_update(self, serializer: VisitSerializer) -> None:
        visit = serializer.instance
        before = {
            **audit.snapshot(visit),
            "units": sorted(u.pk for u in visit.units.all()),
            "technicians": sorted(u.pk for u in visit.technicians.all()),
        }
        with transaction.atomic():
            visit = serializer.save()
            after = {
                **audit.snapshot(visit),
                "units": sorted(u.pk for u in visit.units.all()),
                "technicians": sorted(u.pk for u in visit.technicians.all()),
            }
            changes = audit.diff(before, after)
            if changes:
                audit.record(
                    visit, audit.AuditAction.CHANGED, by=self.request.user, changes=changes
                )

    def perform_destroy(self, instance: Visit) -> None:
        services.delete_record(instance, by=self.request.user)

    def _moved(self, visit: Visit) -> Response:
        return Response(self.get_serializer(visit).data)

    @action(detail=True, methods=["post"])
    def start(self, request: Request, pk: str | None = None) -> Response:
        """Begin work on a scheduled visit."""
        visit = self.get_object()
        if visit.status != VisitStatus.SCHEDULED:
            # submitted -> in_progress is legal, but it is the office returning the visit.
            raise Conflict(
                {
                    "status": [
                        f"visit {visit.reference} is {visit.status}; only a scheduled "
                        "visit can be started"
                    ]
                }
            )
        return self._moved(services.move_visit(visit, VisitStatus.IN_PROGRESS, by=request.user))

    @action(detail=True, methods=["post"])
    def submit(self, request: Request, pk: str | None = None) -> Response:
        """Hand the visit to the office for review; nothing more can be posted to it."""
        visit = self.get_object()
        body = SubmitSerializer(data=request.data)
        body.is_valid(raise_exception=True)
        moved = services.move_visit(
            visit,
            VisitStatus.SUBMITTED,
            by=request.user,
            work_summary=body.validated_data.get("work_summary"),
        )
        return self._moved(moved)

    @action(detail=True, methods=["post"])
    def review(self, request: Request, pk: str | None = None) -> Response:
        """Accept a submitted visit, or return it to the technician with a note."""
        visit = self.get_object()
        body = ReviewSerializer(data=request.data)
        body.is_valid(raise_exception=True)
        target = (
            VisitStatus.REVIEWED
            if body.validated_data["decision"] == "accept"
            else VisitStatus.IN_PROGRESS
        )
        if target == VisitStatus.IN_PROGRESS and visit.status != VisitStatus.SUBMITTED:
            raise Conflict(
                {
                    "status": [
                        f"visit {visit.reference} is {visit.status}; only a "
                        "submitted visit can be returned"
                    ]
                }
            )
        moved = services.move_visit(
            visit, target, by=request.user, note=body.validated_data.get("note", "")
        )
        return self._moved(moved)

    @action(detail=True, methods=["post"])
    def cancel(self, request: Request, pk: str | None = None) -> Response:
        """Call the visit off."""
        visit = self.get_object()
        body = CancelSerializer(data=request.data)
        body.is_valid(raise_exception=True)
        moved = services.move_visit(
            visit, VisitStatus.CANCELLED, by=request.user, note=body.validated_data.get("note", "")
        )
        return self._moved(moved)

    @action(detail=True, methods=["get"], filterset_class=None)
    def history(self, request: Request, pk: str | None = None) -> Response:
        """The audit trail of the visit, its reading sets and refrigerant events."""
        visit = self.get_object()
        entries = AuditEntry.objects.filter(visit_id=visit.pk).select_related(
            "actor", "record_type"
        )
        page = self.paginate_queryset(entries)
        data = AuditEntrySerializer(page, many=True).data
        return self.get_paginated_response(data)


# --- records hanging off a visit -----------------------------------------------------------

VISIT_PK = OpenApiParameter("visit_pk", OpenApiTypes.INT, OpenApiParameter.PATH)

#: The statuses in which each role may write readings and refrigerant events: technicians
#: only while the visit is in progress; the office also after submission (recorded).
WRITABLE = {
    TECHNICIAN: frozenset({VisitStatus.IN_PROGRESS}),
    OFFICE: frozenset({VisitStatus.IN_PROGRESS, VisitStatus.SUBMITTED, VisitStatus.REVIEWED}),
}
#: The answer to a client_id stored on another visit (409).
ON_ANOTHER_VISIT = "already used for a record on another visit"


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
        if role_of(request.user) is not None:
            self.visit  # noqa: B018 -- reach first: 404 for a visit out of reach, whatever the method
        super().check_permissions(request)

    def get_queryset(self) -> QuerySet:
        if getattr(self, "swagger_fake_view", False):
            return self.model.objects.none()
        return (
            self.model.objects.filter(visit_unit__visit=self.visit)
            .select_related(*services.RECORD_RELATIONS, self.relation)
            .order_by(*self.model._meta.ordering, "id")
        )

    def get_serializer_context(self) -> dict[str, Any]:
        context = super().get_serializer_context()
        if not getattr(self, "swagger_fake_view", False) and "visit_pk" in self.kwargs:
            context["visit"], context["visit_units"] = self._reach
        return context

    def _check_writable(self) -> None:
        visit = self.visit
        allowed = WRITABLE.get(role_of(self.request.user), frozenset())
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

    def create(self, request: Request, *args: Any, **kwargs: Any) -> Response:
        stored = self._repeat(request.data)
        if stored is not None:
            return Response(self.get_serializer(stored).data, status=status.HTTP_200_OK)
        self._check_writable()
        serializer = self.get_serializer(data=request.data)
        serializer.is_valid(raise_exception=True)
        record = serializer.save(created_by=request.user)
        self._check_same_visit(record)
        code = status.HTTP_201_CREATED if serializer.created else status.HTTP_200_OK
        return Response(serializer.data, status=code)

    def perform_update(self, serializer: Any) -> None:
        self._check_writable()
        serializer.save()

    def perform_destroy(self, instance: Any) -> None:
        self._check_writable()
        services.delete_record(instance, by=self.request.user)


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
    """Reading sets of a visit, each with its diagnosis."""

    serializer_class = ReadingSetSerializer
    filterset_class = filtersets.ReadingSetFilterSet
    queryset = ReadingSet.objects.all()
    model = ReadingSet
    relation = "diagnosis"
    record_noun = "readings"


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


# --- tokens --------------------------------------------------------------------------------


class TokenRequestSerializer(serializers.Serializer):
    username = serializers.CharField(max_length=150)
    password = serializers.CharField(max_length=128, style={"input_type": "password"})


class TokenSerializer(serializers.Serializer):
    token = serializers.CharField()
    username = serializers.CharField()
    role = serializers.CharField()


class TokenView(APIView):
    """A phone signs in once for a token (``Authorization: Token <key>``), and may revoke
    it. Attempts are rate-limited per address. The office can also issue and revoke tokens
    with ``manage.py api_token``."""

    throttle_classes = [AuthRateThrottle]

    def get_permissions(self) -> list:
        return [AllowAny()] if self.request.method == "POST" else [IsAuthenticated()]

    @extend_schema(request=TokenRequestSerializer, responses={200: TokenSerializer})
    def post(self, request: Request) -> Response:
        body = TokenRequestSerializer(data=request.data)
        body.is_valid(raise_exception=True)
        user = authenticate(
            request,
            username=body.validated_data["username"],
            password=body.validated_data["password"],
        )
        if user is None:
            raise ValidationError({"password": ["the username or the password is wrong"]})
        role = role_of(user)
        if role is None:
            raise PermissionDenied("your account has no role in Rimewatch")
        token, _ = Token.objects.get_or_create(user=user)
        return Response({"token": token.key, "username": user.get_username(), "role": role})

    @extend_schema(request=None, responses={204: None})
    def delete(self, request: Request) -> Response:
        Token.objects.filter(user=request.user).delete()
        return Response(status=status.HTTP_204_NO_CONTENT)
