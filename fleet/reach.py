"""Who may see what: the one role function and the reach of each role.

Pages, API and reports all scope their reads with ``Model.objects.visible_to(user)`` (the
query sets below), so a record outside a user's reach is never fetched and is answered 404,
the same as one that does not exist. What a role may *do* with what it sees (write, review,
book) is for the pages and the API to decide; what it may *see* is decided here only.

- office: everything of the contractor.
- technician: the visits assigned to them; the units on those visits and everything recorded
  on those units (components, readings, diagnoses, leak rates, flags); the sites and
  customers of those visits; the refrigerants.
- manager: the sites they are granted (``Site.managers``), their customers, their units and
  everything recorded on those units, and their monthly reports; the refrigerants. Visits
  are the office's and the technicians' working records, so managers reach none.

A user in several role groups reaches the union of their roles' reaches; a superuser is
office; an inactive or anonymous user has no role. An office user in the office
administrators' group (``OFFICE_ADMIN``, read in the same query) also manages people; that
widens no reach.
"""

from __future__ import annotations

from collections.abc import Callable, Iterable
from dataclasses import dataclass
from typing import Any, TypeVar

from django.apps import apps
from django.db import models
from django.db.models import Q

from .choices import OFFICE_ADMIN_GROUP, Role

OFFICE = Role.OFFICE.value
TECHNICIAN = Role.TECHNICIAN.value
MANAGER = Role.MANAGER.value
OFFICE_ADMIN = OFFICE_ADMIN_GROUP
#: The roles from the widest to the narrowest: a name to show for a user in several.
ROLE_ORDER = (OFFICE, TECHNICIAN, MANAGER)

_CACHE = "_rimewatch_roles"


@dataclass(frozen=True)
class Roles:
    """The role groups a user is in (office alone for a superuser), and whether they are in
    the office administrators' group too (a superuser is)."""

    names: frozenset[str]
    admin: bool = False

    def __bool__(self) -> bool:
        return bool(self.names)

    def __contains__(self, role: object) -> bool:
        return role in self.names

    def any_of(self, roles: Iterable[str]) -> bool:
        """Whether any of ``roles`` (role names) is among these."""
        return not self.names.isdisjoint(roles)

    @property
    def office(self) -> bool:
        return OFFICE in self.names

    @property
    def technician(self) -> bool:
        return TECHNICIAN in self.names

    @property
    def manager(self) -> bool:
        return MANAGER in self.names

    @property
    def manages_people(self) -> bool:
        """Whether they add, disable and re-role technicians and managers (an office
        administrator: the office role and the administrators' group)."""
        return self.office and self.admin

    @property
    def sees_visits(self) -> bool:
        """Whether any visit is within reach (the office's and technicians' records)."""
        return self.office or self.technician

    @property
    def reads_reports(self) -> bool:
        """Whether any monthly report is within reach (the office's and managers')."""
        return self.office or self.manager

    @property
    def widest(self) -> str | None:
        """The widest role, for a label (``ROLE_ORDER``); None without a role."""
        return next((r for r in ROLE_ORDER if r in self.names), None)

    def __str__(self) -> str:
        return ", ".join(r for r in ROLE_ORDER if r in self.names)


NO_ROLES = Roles(frozenset())


def roles_of(user: Any) -> Roles:
    """The user's roles (and whether they are an office administrator): one query for their
    groups, remembered on the user object for the rest of the request."""
    if user is None or not user.is_authenticated or not user.is_active:
        return NO_ROLES
    cached = getattr(user, _CACHE, None)
    if cached is None:
        if user.is_superuser:
            cached = Roles(frozenset({OFFICE}), admin=True)
        else:
            groups = user.groups.filter(name__in=(*ROLE_ORDER, OFFICE_ADMIN))
            names = frozenset(groups.values_list("name", flat=True))
            cached = Roles(names - {OFFICE_ADMIN}, admin=OFFICE_ADMIN in names)
        setattr(user, _CACHE, cached)
    return cached


# --- the reach of each kind of record, as a condition on a lookup path ------------------------
#
# Each rule answers the condition on the record found at ``path`` (a lookup prefix ending in
# "__", or "" for the queried model itself), or None when the user reaches no such record.
# Conditions go through subqueries, never a join over a many-valued relation, so a union of
# roles repeats no row.

Rule = Callable[[Roles, Any, str], Q | None]


def _union(*conditions: Q | None) -> Q | None:
    held = [c for c in conditions if c is not None]
    if not held:
        return None
    union = held[0]
    for condition in held[1:]:
        union |= condition
    return union


def _rows(name: str) -> models.QuerySet[Any]:
    """Every row of a fleet model (or of a many-to-many table, ``Visit_technicians``), found
    by name in the app registry: the models import this module, so it cannot import them."""
    rows: models.QuerySet[Any] = apps.get_model("fleet", name)._default_manager.all()
    return rows


def _assigned_visits(user: Any) -> models.QuerySet[Any]:
    return _rows("Visit_technicians").filter(user_id=user.pk).values("visit_id")


def _granted_sites(user: Any) -> models.QuerySet[Any]:
    return _rows("Site_managers").filter(user_id=user.pk).values("site_id")


def visits(roles: Roles, user: Any, path: str = "") -> Q | None:
    """Office: every visit; technician: those assigned to them; manager: none."""
    if roles.office:
        return Q()
    if roles.technician:
        return Q(**{f"{path}pk__in": _assigned_visits(user)})
    return None


def units(roles: Roles, user: Any, path: str = "") -> Q | None:
    """Office: every unit; technician: the units on their visits; manager: the units of
    their granted sites."""
    if roles.office:
        return Q()
    on_visits = _rows("VisitUnit").filter(visit_id__in=_assigned_visits(user)).values("unit_id")
    return _union(
        Q(**{f"{path}pk__in": on_visits}) if roles.technician else None,
        Q(**{f"{path}site_id__in": _granted_sites(user)}) if roles.manager else None,
    )


def sites(roles: Roles, user: Any, path: str = "") -> Q | None:
    """Office: every site; technician: the sites of their visits; manager: their granted
    sites."""
    if roles.office:
        return Q()
    of_visits = _rows("Visit").filter(pk__in=_assigned_visits(user)).values("site_id")
    return _union(
        Q(**{f"{path}pk__in": of_visits}) if roles.technician else None,
        Q(**{f"{path}pk__in": _granted_sites(user)}) if roles.manager else None,
    )


def customers(roles: Roles, user: Any, path: str = "") -> Q | None:
    """The customers of the sites within reach."""
    if roles.office:
        return Q()
    site_reach = sites(roles, user)
    if site_reach is None:
        return None
    return Q(**{f"{path}pk__in": _rows("Site").filter(site_reach).values("customer_id")})


def report_sites(roles: Roles, user: Any, path: str = "") -> Q | None:
    """The sites whose monthly reports are within reach: office every site, manager their
    granted sites, technician none."""
    if roles.office:
        return Q()
    if roles.manager:
        return Q(**{f"{path}pk__in": _granted_sites(user)})
    return None


def visit_trail(roles: Roles, user: Any, path: str = "") -> Q | None:
    """The audit trail of the visits within reach (``AuditEntry.visit_id`` is a plain
    column, so the trail outlives a deleted record)."""
    visit_reach = visits(roles, user)
    if not visit_reach:
        return visit_reach
    return Q(**{f"{path}visit_id__in": _rows("Visit").filter(visit_reach).values("pk")})


def reference(roles: Roles, user: Any, path: str = "") -> Q | None:
    """Reference data (the refrigerants): every role."""
    return Q() if roles else None


# --- the query set every model scopes itself with ---------------------------------------------

M = TypeVar("M", bound=models.Model)


@dataclass(frozen=True)
class Through:
    """How a model is reached: the rule of the record that decides (``units``, ``visits``...)
    and the lookup path from the model to that record ("" for the record itself)."""

    rule: Rule
    path: str = ""

    def condition(self, user: Any) -> Q | None:
        return self.rule(roles_of(user), user, self.path)


class VisibleQuerySet(models.QuerySet[M]):
    """A query set that can narrow itself to what a user may see.

    The model names how it is reached in a ``reach`` class attribute (a ``Through``), as
    NetBox's ``RestrictedQuerySet.restrict()`` reads its object permissions.
    """

    def visible_to(self, user: Any) -> VisibleQuerySet[M]:
        condition = self.model.reach.condition(user)  # type: ignore[attr-defined]
        if condition is None:
            return self.none()
        return self.filter(condition) if condition else self


#: The manager of a model scoped by ``visible_to`` and nothing else.
VisibleManager = models.Manager.from_queryset(VisibleQuerySet)
