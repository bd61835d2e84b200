"""People: the office administrators add, disable and re-role technicians and managers,
grant managers their sites, and revoke a phone's API token; each change leaves an audit
entry on the person (``fleet.audit``), never with a password.

Only technicians and managers (and people with no role yet) are managed here: an office
user, an office administrator or a superuser is managed by a superuser through the admin,
so no one here can widen their own powers or another office user's.
"""

from __future__ import annotations

from collections.abc import Iterable
from typing import Any

from django.contrib.auth.models import Group, User
from django.contrib.contenttypes.models import ContentType
from django.core.exceptions import ValidationError
from django.db import transaction
from django.db.models import Exists, OuterRef, QuerySet
from rest_framework.authtoken.models import Token

from fleet import audit
from fleet.choices import VisitStatus
from fleet.models import AuditAction, AuditEntry, Site, Visit
from fleet.reach import MANAGER, OFFICE, OFFICE_ADMIN, TECHNICIAN

#: The roles the office administrators give and take.
MANAGED_ROLES = (TECHNICIAN, MANAGER)
#: A technician's visits still to be done: the role is not taken while any is assigned.
OPEN_STATUSES = (VisitStatus.SCHEDULED, VisitStatus.IN_PROGRESS)


def managed_people() -> QuerySet[User]:
    """Everyone the people pages manage (neither a superuser nor in the office's groups),
    each with ``has_token`` annotated, by name."""
    return (
        User.objects.filter(is_superuser=False)
        .exclude(groups__name__in=(OFFICE, OFFICE_ADMIN))
        .annotate(has_token=Exists(Token.objects.filter(user=OuterRef("pk"))))
        .order_by("first_name", "last_name", "username")
    )


def state_of(user: User) -> dict[str, Any]:
    """What the trail keeps of a person: who they are, whether they may sign in, their
    roles, the sites they manage and whether a phone holds a token (never a password)."""
    return {
        "username": user.username,
        "first_name": user.first_name,
        "last_name": user.last_name,
        "email": user.email,
        "is_active": user.is_active,
        "roles": sorted(user.groups.filter(name__in=MANAGED_ROLES).values_list("name", flat=True)),
        "managed_sites": sorted(user.managed_sites.values_list("pk", flat=True)),
        "api_token": Token.objects.filter(user=user).exists(),
    }


def trail_of(user: User) -> QuerySet[AuditEntry]:
    """The person's audit entries, newest first, with who made each."""
    return (
        AuditEntry.objects.filter(
            record_type=ContentType.objects.get_for_model(User), record_id=user.pk
        )
        .select_related("actor")
        .order_by("-at", "-id")
    )


def token_of(user: User) -> Token | None:
    """The person's API token, if a phone holds one."""
    return Token.objects.filter(user=user).first()


def open_visits_of(user: User) -> list[str]:
    """The references of the visits still to be done that the person is assigned to."""
    return list(
        Visit.objects.filter(technicians=user, status__in=OPEN_STATUSES)
        .order_by("window_start")
        .values_list("reference", flat=True)
    )


def _check(roles: Iterable[str], sites: Iterable[Site]) -> None:
    roles = set(roles)
    if not roles or not roles <= set(MANAGED_ROLES):
        raise ValidationError({"roles": "choose technician, manager or both"})
    if MANAGER not in roles and list(sites):
        raise ValidationError(
            {"sites": "only a manager manages sites: tick the manager role or clear the sites"}
        )


def _set_roles(user: User, roles: Iterable[str], sites: Iterable[Site]) -> None:
    user.groups.remove(*Group.objects.filter(name__in=MANAGED_ROLES))
    user.groups.add(*Group.objects.filter(name__in=set(roles)))
    user.managed_sites.set(sites)


@transaction.atomic
def add_person(
    *,
    username: str,
    password: str,
    first_name: str,
    last_name: str,
    email: str,
    roles: Iterable[str],
    sites: Iterable[Site],
    by: User,
) -> User:
    """A new technician or manager (or both) who may sign in at once."""
    roles, sites = list(roles), list(sites)
    _check(roles, sites)
    user = User.objects.create_user(
        username, email=email, password=password, first_name=first_name, last_name=last_name
    )
    _set_roles(user, roles, sites)
    state = state_of(user)
    audit.record(user, AuditAction.CREATED, by=by, changes={k: [None, v] for k, v in state.items()})
    return user


@transaction.atomic
def change_person(
    user: User,
    *,
    first_name: str,
    last_name: str,
    email: str,
    active: bool,
    roles: Iterable[str],
    sites: Iterable[Site],
    by: User,
) -> AuditEntry | None:
    """Change a person's name, e-mail, roles and sites, or disable them (which revokes their
    token too, so a phone left signed in stops at once). A technician keeps the role while
    assigned to a visit still to be done: that visit is reassigned first. None when nothing
    changed."""
    roles, sites = list(roles), list(sites)
    _check(roles, sites)
    if TECHNICIAN not in roles and user.groups.filter(name=TECHNICIAN).exists():
        still = open_visits_of(user)
        if still:
            raise ValidationError(
                {
                    "roles": f"still assigned to {', '.join(still)}: reassign "
                    f"{'it' if len(still) == 1 else 'them'} before taking the technician role"
                }
            )
    # As stored, not as a bound form may have left the object it was given.
    stored = User.objects.select_for_update().get(pk=user.pk)
    before = state_of(stored)
    stored.first_name, stored.last_name, stored.email = first_name, last_name, email
    stored.is_active = active
    stored.save(update_fields=["first_name", "last_name", "email", "is_active"])
    _set_roles(stored, roles, sites)
    if not active:
        Token.objects.filter(user=stored).delete()
    changes = audit.diff(before, state_of(stored))
    if not changes:
        return None
    return audit.record(stored, AuditAction.CHANGED, by=by, changes=changes)


@transaction.atomic
def revoke_token(user: User, *, by: User) -> bool:
    """Revoke the person's API token (a lost phone): the phone must sign in again. False
    when there was none."""
    revoked, _ = Token.objects.filter(user=user).delete()
    if not revoked:
        return False
    audit.record(
        user,
        AuditAction.CHANGED,
        by=by,
        changes={"api_token": [True, False]},
        note="API token revoked",
    )
    return True
