"""What every fleet viewset shares: roles, pagination, the response units (``?units=``,
documented on every endpoint whose records carry measurements) and the 409 answer."""

from __future__ import annotations

from typing import Any

from django.contrib.auth.models import User
from drf_spectacular.types import OpenApiTypes
from drf_spectacular.utils import OpenApiParameter
from rest_framework import mixins, status, viewsets
from rest_framework.exceptions import APIException, NotAuthenticated, ValidationError
from rest_framework.pagination import PageNumberPagination
from rest_framework.request import Request
from rest_framework.serializers import BaseSerializer
from rest_framework.views import APIView

from fleet import services
from fleet.api.permissions import HasRole
from fleet.api.schema import ErrorsAutoSchema
from fleet.display import SYSTEMS
from fleet.reach import OFFICE

UNITS_PARAMETER = OpenApiParameter(
    "units",
    OpenApiTypes.STR,
    OpenApiParameter.QUERY,
    enum=sorted(SYSTEMS),
    description="Units of the response: us (F, psig, lb) or si (C, kPa gauge, kg). "
    "Default: the contractor's setting.",
)


def signed_in(request: Request) -> User:
    """The user behind ``request``. Every endpoint that acts for a user lets only a signed-in
    one this far (``HasRole``, ``IsAuthenticated``); one that slipped through would be
    answered 401, never recorded as anonymous."""
    user = request.user
    if not user.is_authenticated:
        raise NotAuthenticated
    return user


class Conflict(APIException):
    status_code = status.HTTP_409_CONFLICT
    default_detail = "conflicts with the record's current state"
    default_code = "conflict"


class UnitsAutoSchema(ErrorsAutoSchema):
    """Documents ``?units=`` on every endpoint whose records carry measurements."""

    def get_override_parameters(self) -> list:
        params = super().get_override_parameters()
        if getattr(self.view, "states_units", False):
            return [*params, UNITS_PARAMETER]
        return params


class Pagination(PageNumberPagination):
    page_size_query_param = "page_size"
    max_page_size = 200


class DiagnosedPagination(Pagination):
    """Records that each carry their whole diagnosis (a few kilobytes each): a smaller page
    by default, so a default page stays small on a phone's link; ``page_size`` still goes
    to 200."""

    page_size = 20


class UnitSystemMixin(APIView):
    """Reads ``?units=si|us`` once per request, for the serializers' context."""

    schema = UnitsAutoSchema()
    #: Whether responses carry measurements (and so ``?units=`` is documented).
    states_units = False
    unit_system: str | None = None

    def initial(self, request: Request, *args: Any, **kwargs: Any) -> None:
        super().initial(request, *args, **kwargs)
        system = request.query_params.get("units")
        if system is not None and system not in SYSTEMS:
            raise ValidationError({"units": [f"{system!r} is not a unit system; use si or us"]})
        self.unit_system = system

    def unit_context(self) -> dict[str, Any]:
        return {"request": self.request, "unit_system": self.unit_system}


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
    """A fleet record: office writes, every role reads what is within its reach. Writes go
    through ``fleet.services``, which records them and computes again what rests on them."""

    http_method_names = ["get", "post", "put", "patch", "delete", "head", "options"]

    def perform_create(self, serializer: BaseSerializer[Any]) -> None:
        services.save_with_trail(None, serializer.save, by=signed_in(self.request))

    def perform_update(self, serializer: BaseSerializer[Any]) -> None:
        services.save_with_trail(serializer.instance, serializer.save, by=signed_in(self.request))

    def perform_destroy(self, instance: Any) -> None:
        services.delete_record(instance, by=signed_in(self.request))
