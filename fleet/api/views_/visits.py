"""Visits and their life cycle, each move recorded in the audit trail."""

from __future__ import annotations

from django.db.models import QuerySet
from drf_spectacular.utils import extend_schema, extend_schema_view
from rest_framework.decorators import action
from rest_framework.exceptions import ValidationError
from rest_framework.request import Request
from rest_framework.response import Response

from fleet import services
from fleet.api import filtersets
from fleet.api.serializers import (
    AuditEntrySerializer,
    CancelSerializer,
    ReviewSerializer,
    SubmitSerializer,
    VisitSerializer,
)
from fleet.choices import VisitStatus
from fleet.models import AuditEntry, Visit
from fleet.reach import OFFICE, TECHNICIAN

from .base import Conflict, RecordViewSet, signed_in


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
        qs = Visit.objects.visible_to(self.request.user).select_related("site")
        return qs.prefetch_related("technicians", "units").order_by("-window_start", "id")

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
        return self._moved(
            services.move_visit(visit, VisitStatus.IN_PROGRESS, by=signed_in(request))
        )

    @action(detail=True, methods=["post"])
    def submit(self, request: Request, pk: str | None = None) -> Response:
        """Hand the visit to the office for review, with a summary of the work and, for
        each unit without readings, why; nothing more can be posted to it."""
        visit = self.get_object()
        body = SubmitSerializer(data=request.data)
        body.is_valid(raise_exception=True)
        try:
            moved = services.submit_visit(
                visit,
                by=signed_in(request),
                work_summary=body.validated_data.get("work_summary"),
                units_not_read=[
                    services.NotRead(entry["unit"], entry["reason"], entry.get("note", ""))
                    for entry in body.validated_data.get("units_not_read", [])
                ],
            )
        except services.IncompleteSubmission as exc:
            raise ValidationError(exc.errors) from exc
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
            visit, target, by=signed_in(request), note=body.validated_data.get("note", "")
        )
        return self._moved(moved)

    @action(detail=True, methods=["post"])
    def cancel(self, request: Request, pk: str | None = None) -> Response:
        """Call the visit off."""
        visit = self.get_object()
        body = CancelSerializer(data=request.data)
        body.is_valid(raise_exception=True)
        moved = services.move_visit(
            visit,
            VisitStatus.CANCELLED,
            by=signed_in(request),
            note=body.validated_data.get("note", ""),
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
