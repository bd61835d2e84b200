"""What a role may do on the API with what it can see.

Reach (what a user may *see*) is decided by ``fleet.reach``: every view reads through
``Model.objects.visible_to(user)``, so a record outside a user's reach is never fetched and
the answer is 404, the same as for a record that does not exist. The permission class here
then decides what the user's roles may *do* with what they see (403).

- office: everything.
- technician: reads what is within reach; posts readings and refrigerant events on their
  visits while in progress, corrects or withdraws the reading sets they recorded then
  (``ReadingSetViewSet``), starts and submits them.
- manager: reads what is within reach.

A user in several role groups may do what any of their roles may.
"""

from __future__ import annotations

from typing import Any

from rest_framework.permissions import SAFE_METHODS, BasePermission
from rest_framework.request import Request
from rest_framework.views import APIView

from fleet.models import Visit, VisitUnit
from fleet.reach import OFFICE, Roles, roles_of
from fleet.validation import MAX_RECORD_ID


def visit_in_reach(user: Any, pk: int) -> tuple[Visit, list[VisitUnit]] | None:
    """The visit ``pk`` if it is within ``user``'s reach, with its units (their unit, site
    and refrigerant attached): every request on a visit's records reads it first, so it is
    one query, from the visit's units with their visit joined. Only a visit without units
    needs a second, for the visit alone. None when out of reach or not there."""
    if pk > MAX_RECORD_ID:  # a larger one in a URL is simply not found
        return None
    visit_units = list(
        VisitUnit.objects.visible_to(user)
        .filter(visit_id=pk)
        .select_related("visit", "unit__site", "unit__refrigerant")
        .order_by("id")
    )
    if not visit_units:
        visit = Visit.objects.visible_to(user).filter(pk=pk).first()
        return None if visit is None else (visit, [])
    visit = visit_units[0].visit
    for visit_unit in visit_units:
        visit_unit.visit = visit  # one instance of the visit for all its units
    return visit, visit_units


class HasRole(BasePermission):
    """Signed in, in one of the role groups, and allowed the action by the view's table.

    A view lists the roles allowed to write in ``write_roles`` and, per extra action, in
    ``action_roles``. Detail writes are judged on the object (after the scoped queryset has
    answered 404 for anything out of reach), so a technician learns nothing about records
    outside their visits.
    """

    message = "your account has no role (office, technician or manager) in Rimewatch"

    def has_permission(self, request: Request, view: APIView) -> bool:
        roles = roles_of(request.user)
        if not roles:
            return False
        if request.method in SAFE_METHODS:
            return True
        if getattr(view, "detail", False):
            return True  # judged on the object, once it is known to be within reach
        return self._may(roles, view)

    def has_object_permission(self, request: Request, view: APIView, obj: object) -> bool:
        if request.method in SAFE_METHODS:
            return True
        return self._may(roles_of(request.user), view)

    def _may(self, roles: Roles, view: APIView) -> bool:
        if roles.any_of(self._allowed(view)):
            return True
        self.message = f"the {roles} role{'s' if len(roles.names) > 1 else ''} may not do this"
        return False

    @staticmethod
    def _allowed(view: APIView) -> frozenset[str]:
        action_roles = getattr(view, "action_roles", {})
        action = getattr(view, "action", None)
        if action in action_roles:
            return frozenset(action_roles[action])
        return frozenset(getattr(view, "write_roles", (OFFICE,)))
