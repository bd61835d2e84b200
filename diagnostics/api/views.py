"""Diagnostic endpoints: saturation points and tables, a unit's latest diagnosis, resolved
targets, trends and flags.

Views read stored results; the only computation reached from here is the saturation
lookup, which the core does.
"""

from __future__ import annotations

from typing import Any

from django.db.models import QuerySet
from django.shortcuts import get_object_or_404
from drf_spectacular.types import OpenApiTypes
from drf_spectacular.utils import OpenApiParameter, extend_schema
from rest_framework import serializers, status
from rest_framework.exceptions import NotFound, ValidationError
from rest_framework.request import Request
from rest_framework.response import Response
from rest_framework.views import APIView

from diagnostics import lookups as sat
from diagnostics import services
from diagnostics.api.serializers import (
    DiagnosisSerializer,
    FlagSerializer,
    SaturationQuerySerializer,
    SaturationSerializer,
    SaturationTableSerializer,
    TrendsSerializer,
    UnitTargetsSerializer,
)
from diagnostics.core.refrigerants import UnknownRefrigerant, normalise_designation
from diagnostics.models import Diagnosis, Flag
from fleet.api.permissions import HasRole
from fleet.api.serializers_.fields import StoredTimeField
from fleet.api.views_.base import UnitSystemMixin
from fleet.api.wire_units import response_units
from fleet.choices import Stage
from fleet.display import Quantity, from_si, to_si
from fleet.models import Unit

#: Diagnosis columns served as trend series: wire name, column, quantity (None: as stored).
TREND_SERIES: tuple[tuple[str, str, Quantity | None, str], ...] = (
    ("score", "score", None, "points"),
    ("evaporating_temp", "evaporating_c", "temperature", ""),
    ("condensing_temp", "condensing_c", "temperature", ""),
    ("superheat", "superheat_k", "temperature_difference", ""),
    ("subcooling", "subcooling_k", "temperature_difference", ""),
    ("evaporator_td", "evaporator_td_k", "temperature_difference", ""),
    ("condenser_split", "condenser_split_k", "temperature_difference", ""),
    ("compression_ratio", "compression_ratio", None, "ratio"),
    ("energy_penalty", "energy_penalty_pct", None, "%"),
)

UNIT_PK = OpenApiParameter("unit_pk", OpenApiTypes.INT, OpenApiParameter.PATH)


class UnitDiagnosisSerializer(serializers.Serializer):
    unit = serializers.IntegerField()
    reading_set = serializers.IntegerField()
    visit = serializers.IntegerField()
    taken_at = StoredTimeField()
    diagnosis = DiagnosisSerializer()


class _UnitView(UnitSystemMixin, APIView):
    permission_classes = [HasRole]
    states_units = True

    def unit(self, unit_pk: int) -> Unit:
        qs: QuerySet[Unit] = Unit.objects.visible_to(self.request.user).select_related(
            "site", "refrigerant"
        )
        return get_object_or_404(qs, pk=unit_pk)


class UnitDiagnosisView(_UnitView):
    """The unit's latest as-found diagnosis (as-left readings show the repair, not the
    state the unit was found in)."""

    @extend_schema(parameters=[UNIT_PK], responses={200: UnitDiagnosisSerializer})
    def get(self, request: Request, unit_pk: int) -> Response:
        unit = self.unit(unit_pk)
        diagnosis = (
            Diagnosis.objects.filter(
                reading_set__visit_unit__unit=unit, reading_set__stage=Stage.AS_FOUND
            )
            .select_related("reading_set__visit_unit")
            .order_by("-reading_set__taken_at", "-id")
            .first()
        )
        if diagnosis is None:
            raise NotFound({"detail": f"no as-found readings diagnosed on {unit.tag} yet"})
        reading_set = diagnosis.reading_set
        context = {**self.unit_context(), "elevation_m": unit.site.elevation_m}
        return Response(
            {
                "unit": unit.pk,
                "reading_set": reading_set.pk,
                "visit": reading_set.visit_unit.visit_id,
                "taken_at": StoredTimeField().to_representation(reading_set.taken_at),
                "diagnosis": DiagnosisSerializer(diagnosis, context=context).data,
            }
        )


class UnitTargetsView(_UnitView):
    """What the core resolved for the unit (targets with their ranges and origins, limits,
    nameplate, how each metric is judged), in SI, for a phone that judges readings as
    they are typed. The same reach as the unit's diagnosis."""

    @extend_schema(parameters=[UNIT_PK], responses={200: UnitTargetsSerializer})
    def get(self, request: Request, unit_pk: int) -> Response:
        data = services.unit_targets(self.unit(unit_pk))
        data["refrigerant"]["glide_k"] = sat.atmospheric_glide_k(data["refrigerant"]["designation"])
        return Response(data)


class UnitTrendsView(_UnitView):
    """One series per metric over the unit's as-found visits: taken_at and value."""

    @extend_schema(parameters=[UNIT_PK], responses={200: TrendsSerializer})
    def get(self, request: Request, unit_pk: int) -> Response:
        unit = self.unit(unit_pk)
        columns = [column for _, column, _, _ in TREND_SERIES]
        rows = list(
            Diagnosis.objects.filter(
                reading_set__visit_unit__unit=unit, reading_set__stage=Stage.AS_FOUND
            )
            .order_by("reading_set__taken_at", "id")
            .values_list("reading_set__taken_at", *columns)
        )
        units = response_units(self.unit_context())
        when = StoredTimeField()
        series: list[dict[str, Any]] = []
        for index, (name, _column, quantity, label) in enumerate(TREND_SERIES, start=1):
            unit_label = units[quantity] if quantity else label
            points = [
                {
                    "taken_at": when.to_representation(row[0]),
                    "value": round(
                        from_si(row[index], quantity, unit_label, unit.site.elevation_m)
                        if quantity
                        else row[index],
                        3,
                    ),
                }
                for row in rows
                if row[index] is not None
            ]
            series.append({"metric": name, "unit": unit_label, "points": points})
        return Response(
            {"unit": unit.pk, "stage": Stage.AS_FOUND.value, "series": series, "units": units}
        )


class UnitFlagsView(_UnitView):
    """The unit's open flags, newest first; their sentences and forecast numbers in the
    response's units (``?units=``)."""

    @extend_schema(parameters=[UNIT_PK], responses={200: FlagSerializer(many=True)})
    def get(self, request: Request, unit_pk: int) -> Response:
        unit = self.unit(unit_pk)
        flags = Flag.objects.filter(unit=unit, cleared_at__isnull=True).order_by("-opened_at")
        return Response(FlagSerializer(flags, many=True, context=self.unit_context()).data)


class SaturationView(UnitSystemMixin, APIView):
    """Dew and bubble temperatures at a pressure, or dew and bubble pressures at a
    temperature. Gauge pressures are made absolute with the standard atmosphere at
    ``elevation_m``."""

    permission_classes = [HasRole]
    states_units = True

    @extend_schema(
        parameters=[
            OpenApiParameter("designation", OpenApiTypes.STR, OpenApiParameter.PATH),
            SaturationQuerySerializer,
        ],
        responses={200: SaturationSerializer},
    )
    def get(self, request: Request, designation: str) -> Response:
        query = SaturationQuerySerializer(data=request.query_params)
        query.is_valid(raise_exception=True)
        q = query.validated_data
        units = response_units(self.unit_context())
        elevation_m = q["elevation_m"]
        try:
            if "pressure" in q:
                point = sat.at_pressure(designation, q["pressure"], q["pressure_unit"], elevation_m)
                data: dict[str, Any] = {
                    "refrigerant": point.refrigerant,
                    "elevation_m": elevation_m,
                    "absolute_pressure_kpa": round(point.absolute_pressure_kpa, 3),
                    "dew_temperature_c": round(point.dew_temperature_c, 3),
                    "bubble_temperature_c": round(point.bubble_temperature_c, 3),
                    "dew_temperature": _shown(point.dew_temperature_c, "temperature", units),
                    "bubble_temperature": _shown(point.bubble_temperature_c, "temperature", units),
                    "glide": _shown(point.glide_k, "temperature_difference", units),
                }
            else:
                at_t = sat.at_temperature(designation, q["temperature"], q["temperature_unit"])
                data = {
                    "refrigerant": at_t.refrigerant,
                    "elevation_m": elevation_m,
                    "temperature_c": round(at_t.temperature_c, 3),
                    "dew_pressure_kpa_abs": round(at_t.dew_pressure_kpa_abs, 3),
                    "bubble_pressure_kpa_abs": round(at_t.bubble_pressure_kpa_abs, 3),
                    "dew_pressure": _gauge(at_t.dew_pressure_kpa_abs, units, elevation_m),
                    "bubble_pressure": _gauge(at_t.bubble_pressure_kpa_abs, units, elevation_m),
                }
        except UnknownRefrigerant as exc:
            raise NotFound({"designation": [str(exc)]}) from exc
        except sat.SaturationInputError as exc:
            raise ValidationError({exc.field: [str(exc)]}) from exc
        data["units"] = units
        return Response(data)


class SaturationTableView(APIView):
    """The refrigerant's saturation table, node for node, so a phone reads offline exactly
    what the server reads. The answer only changes with the table's ``version``, which is
    its ETag: a phone that sends it back in ``If-None-Match`` is answered 304."""

    permission_classes = [HasRole]
    #: How long a phone may use its copy without asking again (it revalidates after).
    max_age_s = 86_400

    @extend_schema(
        parameters=[OpenApiParameter("designation", OpenApiTypes.STR, OpenApiParameter.PATH)],
        responses={200: SaturationTableSerializer, 304: None},
    )
    def get(self, request: Request, designation: str) -> Response:
        try:
            data = sat.saturation_table(normalise_designation(designation))
        except UnknownRefrigerant as exc:
            raise NotFound({"designation": [str(exc)]}) from exc
        etag = f'"{data["version"]}"'
        headers = {"ETag": etag, "Cache-Control": f"private, max-age={self.max_age_s}"}
        asked = request.headers.get("If-None-Match", "")
        if etag in (tag.strip() for tag in asked.split(",")) or asked.strip() == "*":
            return Response(status=status.HTTP_304_NOT_MODIFIED, headers=headers)
        return Response(data, headers=headers)


def _shown(value: float, quantity: Quantity, units: dict[str, str]) -> float:
    return round(from_si(value, quantity, units[quantity]), 3)


def _gauge(kpa_abs: float, units: dict[str, str], elevation_m: float) -> float:
    """An absolute pressure as the gauge at ``elevation_m`` reads it, in the response unit."""
    kpa_gauge = to_si(kpa_abs, "pressure", "kPa_abs", elevation_m)
    return round(from_si(kpa_gauge, "pressure", units["pressure"], elevation_m), 3)
