"""Who may see and do what on the API.

Reach is decided in the queryset (``visible_*``), so a record outside a role's reach is
never fetched and the answer is 404, the same as for a record that does not exist. The
permission classes then decide what a role may *do* with what it can see (403).

- office: everything of the contractor.
- technician: the visits assigned to them, the units and sites of those visits (and their
  customers and components); refrigerants; posts readings and refrigerant events on their
  visits while in progress, starts and submits them.
- manager: read-only; the sites they are granted (``Site.managers``), the units, customers
  and components of those sites, and the units' diagnoses, trends and flags. Visits are the
  office's and the technicians' working records, so managers see none.
"""

from __future__ import annotations

from functools import cache

from django.contrib.auth.models import AnonymousUser, User
from django.db import connection
from django.db.models import QuerySet
from rest_framework.permissions import SAFE_METHODS, BasePermission

from fleet.choices import Role
from fleet.models import Component, Customer, Refrigerant, Site, Unit, Visit, VisitUnit
from fleet.rows import ModelColumns, column, split, table

OFFICE = Role.OFFICE.value
TECHNICIAN = Role.TECHNICIAN.value
MANAGER = Role.MANAGER.value
#: A user in several role groups gets the widest of them.
ROLE_ORDER = (OFFICE, TECHNICIAN, MANAGER)

_ROLE_CACHE = "_rimewatch_role"


def role_of(user: User | AnonymousUser | None) -> str | None:
    """The user's role (one query, remembered on the user object for the request)."""
    if user is None or not user.is_authenticated:
        return None
    if hasattr(user, _ROLE_CACHE):
        return getattr(user, _ROLE_CACHE)
    return remember_role(user, set(user.groups.values_list("name", flat=True)))


def remember_role(user: User, group_names: set[str]) -> str | None:
    """Decide the role of ``user`` from the names of their groups and remember it on the
    user object for the request (for callers that read the groups themselves)."""
    role = OFFICE if user.is_superuser else next((r for r in ROLE_ORDER if r in group_names), None)
    setattr(user, _ROLE_CACHE, role)
    return role


def visible_visits(user, queryset: QuerySet[Visit] | None = None) -> QuerySet[Visit]:
    qs = Visit.objects.all() if queryset is None else queryset
    role = role_of(user)
    if role == OFFICE:
        return qs
    if role == TECHNICIAN:
        return qs.filter(
            pk__in=Visit.technicians.through.objects.filter(user=user).values("visit_id")
        )
    return qs.none()


#: The largest id a 64-bit key holds; a larger one in a URL is simply not found.
_MAX_ID = 2**63 - 1
_VISIT = ModelColumns(Visit, "v")
_VISIT_UNIT = ModelColumns(VisitUnit, "vu")
_UNIT = ModelColumns(Unit, "un")
_SITE = ModelColumns(Site, "s")
_REFRIGERANT = ModelColumns(Refrigerant, "r")


@cache
def _visit_statement(technician: bool) -> str:
    """A visit and its units, each with its unit, site and refrigerant (one row per unit;
    one row with no unit for a visit without units); for a technician, only their own."""
    assigned = Visit.technicians.through
    visit_id = column(Visit, "id", "v")
    unit = column(VisitUnit, "unit", "vu")
    reach = (
        f"AND EXISTS (SELECT 1 FROM {table(assigned, 'a')} "
        f"WHERE {column(assigned, 'visit', 'a')} = {visit_id} "
        f"AND {column(assigned, 'user', 'a')} = %s) "
        if technician
        else ""
    )
    return (
        f"SELECT {_VISIT.sql}, {_VISIT_UNIT.sql}, {_UNIT.sql}, {_SITE.sql}, {_REFRIGERANT.sql} "
        f"FROM {table(Visit, 'v')} "
        f"LEFT JOIN {table(VisitUnit, 'vu')} ON {column(VisitUnit, 'visit', 'vu')} = {visit_id} "
        f"LEFT JOIN {table(Unit, 'un')} ON {column(Unit, 'id', 'un')} = {unit} "
        f"LEFT JOIN {table(Site, 's')} ON {column(Site, 'id', 's')} = {column(Unit, 'site', 'un')} "
        f"LEFT JOIN {table(Refrigerant, 'r')} "
        f"ON {column(Refrigerant, 'id', 'r')} = {column(Unit, 'refrigerant', 'un')} "
        f"WHERE {visit_id} = %s {reach}"
        f"ORDER BY {column(VisitUnit, 'id', 'vu')}"
    )


def visit_in_reach(user, pk: int) -> tuple[Visit, list[VisitUnit]] | None:
    """The visit ``pk`` if ``visible_visits(user)`` holds it, with its units (their unit,
    site and refrigerant attached), in one statement written once (``fleet.rows``): every
    request on a visit's records reads it first. None when out of reach or not there."""
    role = role_of(user)
    if role not in (OFFICE, TECHNICIAN) or pk > _MAX_ID:
        return None
    technician = role == TECHNICIAN
    with connection.cursor() as cursor:
        cursor.execute(_visit_statement(technician), [pk, user.pk] if technician else [pk])
        rows = cursor.fetchall()
    if not rows:
        return None
    visit = split(rows[0], _VISIT)[0]
    visit_units = []
    for row in rows:
        _, visit_unit, unit, site, refrigerant = split(
            row, _VISIT, _VISIT_UNIT, _UNIT, _SITE, _REFRIGERANT
        )
        if visit_unit is None:
            continue
        unit.site, unit.refrigerant = site, refrigerant
        visit_unit.visit, visit_unit.unit = visit, unit
        visit_units.append(visit_unit)
    return visit, visit_units


def visible_units(user, queryset: QuerySet[Unit] | None = None) -> QuerySet[Unit]:
    qs = Unit.objects.all() if queryset is None else queryset
    role = role_of(user)
    if role == OFFICE:
        return qs
    if role == TECHNICIAN:
        return qs.filter(pk__in=VisitUnit.objects.filter(visit__technicians=user).values("unit_id"))
    if role == MANAGER:
        return qs.filter(site__in=Site.managers.through.objects.filter(user=user).values("site_id"))
    return qs.none()


def visible_sites(user, queryset: QuerySet[Site] | None = None) -> QuerySet[Site]:
    qs = Site.objects.all() if queryset is None else queryset
    role = role_of(user)
    if role == OFFICE:
        return qs
    if role == TECHNICIAN:
        return qs.filter(pk__in=Visit.objects.filter(technicians=user).values("site_id"))
    if role == MANAGER:
        return qs.filter(pk__in=Site.managers.through.objects.filter(user=user).values("site_id"))
    return qs.none()


def visible_customers(user, queryset: QuerySet[Customer] | None = None) -> QuerySet[Customer]:
    qs = Customer.objects.all() if queryset is None else queryset
    if role_of(user) == OFFICE:
        return qs
    return qs.filter(pk__in=visible_sites(user).values("customer_id"))


def visible_components(user, queryset: QuerySet[Component] | None = None) -> QuerySet[Component]:
    qs = Component.objects.all() if queryset is None else queryset
    if role_of(user) == OFFICE:
        return qs
    return qs.filter(unit__in=visible_units(user).values("pk"))


class HasRole(BasePermission):
    """Signed in, in one of the role groups, and allowed the action by the view's table.

    A view lists the roles allowed to write in ``write_roles`` and, per extra action, in
    ``action_roles``. Detail writes are judged on the object (after the scoped queryset has
    answered 404 for anything out of reach), so a technician learns nothing about records
    outside their visits.
    """

    message = "your account has no role (office, technician or manager) in Rimewatch"

    def has_permission(self, request, view) -> bool:
        role = role_of(request.user)
        if role is None:
            return False
        if request.method in SAFE_METHODS:
            return True
        if getattr(view, "detail", False):
            return True  # judged on the object, once it is known to be within reach
        allowed = self._allowed(view)
        if role not in allowed:
            self.message = f"the {role} role may not do this"
            return False
        return True

    def has_object_permission(self, request, view, obj) -> bool:
        if request.method in SAFE_METHODS:
            return True
        role = role_of(request.user)
        if role not in self._allowed(view):
            self.message = f"the {role} role may not do this"
            return False
        return True

    @staticmethod
    def _allowed(view) -> frozenset[str]:
        action_roles = getattr(view, "action_roles", {})
        action = getattr(view, "action", None)
        if action in action_roles:
            return frozenset(action_roles[action])
        return frozenset(getattr(view, "write_roles", (OFFICE,)))
