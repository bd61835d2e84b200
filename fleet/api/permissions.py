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

from django.contrib.auth.models import AnonymousUser, User
from django.db.models import Q, QuerySet
from rest_framework.permissions import SAFE_METHODS, BasePermission

from fleet.choices import Role
from fleet.models import Component, Customer, Site, Unit, Visit, VisitUnit

OFFICE = Role.OFFICE.value
TECHNICIAN = Role.TECHNICIAN.value
MANAGER = Role.MANAGER.value
#: A user in several role groups gets the widest of them.
ROLE_ORDER = (OFFICE, TECHNICIAN, MANAGER)

_ROLE_CACHE = "_rimewatch_role"


def role_of(user: User | AnonymousUser | None) -> str | None:
    """The user's role: the widest of their role groups, office for a superuser (one
    query, remembered on the user object for the request)."""
    if user is None or not user.is_authenticated:
        return None
    if not hasattr(user, _ROLE_CACHE):
        groups = set(user.groups.values_list("name", flat=True))
        role = next((r for r in ROLE_ORDER if r in groups), None)
        setattr(user, _ROLE_CACHE, OFFICE if user.is_superuser else role)
    return getattr(user, _ROLE_CACHE)


def _visits_reach(user, visit: str = "") -> Q | None:
    """The condition on a visit (reached through ``visit``, a lookup prefix) for it to be
    within ``user``'s reach; None for a role that reaches no visit."""
    role = role_of(user)
    if role == OFFICE:
        return Q()
    if role == TECHNICIAN:  # the pair is unique: joining the assignments repeats no row
        return Q(**{f"{visit}technicians": user})
    return None


def visible_visits(user, queryset: QuerySet[Visit] | None = None) -> QuerySet[Visit]:
    qs = Visit.objects.all() if queryset is None else queryset
    reach = _visits_reach(user)
    return qs.none() if reach is None else qs.filter(reach)


#: The largest id a 64-bit key holds; a larger one in a URL is simply not found.
_MAX_ID = 2**63 - 1


def visit_in_reach(user, pk: int) -> tuple[Visit, list[VisitUnit]] | None:
    """The visit ``pk`` if ``visible_visits(user)`` holds it, with its units (their unit,
    site and refrigerant attached): every request on a visit's records reads it first, so
    it is one query, from the visit's units with their visit joined. Only a visit without
    units needs a second, for the visit alone. None when out of reach or not there."""
    reach = _visits_reach(user, "visit__")
    if reach is None or pk > _MAX_ID:
        return None
    visit_units = list(
        VisitUnit.objects.filter(reach, visit_id=pk)
        .select_related("visit", "unit__site", "unit__refrigerant")
        .order_by("id")
    )
    if not visit_units:
        visit = visible_visits(user).filter(pk=pk).first()
        return None if visit is None else (visit, [])
    visit = visit_units[0].visit
    for visit_unit in visit_units:
        visit_unit.visit = visit  # one instance of the visit for all its units
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
