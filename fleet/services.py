"""Operations on fleet records that touch several rows or have rules of their own."""

from __future__ import annotations

from django.contrib.auth.models import AbstractBaseUser
from django.db import transaction
from django.utils import timezone

from .choices import VISIT_TRANSITIONS, VisitStatus
from .models import Visit


class IllegalTransition(Exception):
    """A visit was asked to move to a status its current status does not lead to."""

    def __init__(self, visit: Visit, current: str, target: str) -> None:
        self.visit = visit
        self.current = current
        self.target = target
        allowed = sorted(VISIT_TRANSITIONS.get(current, ()))
        super().__init__(
            f"visit {visit.reference} is {current}; it can move to "
            f"{', '.join(allowed) or 'nothing'}, not to {target}"
        )


@transaction.atomic
def move_visit(
    visit: Visit,
    target: str,
    *,
    by: AbstractBaseUser | None = None,
    note: str = "",
    now=None,
) -> Visit:
    """Move a visit to ``target`` if its status allows it.

    The UPDATE is conditional on the status read, so two people acting at once cannot
    both succeed: the second sees zero rows changed and gets IllegalTransition.
    """
    now = now or timezone.now()
    current = visit.status
    if target not in VISIT_TRANSITIONS.get(current, ()):
        raise IllegalTransition(visit, current, target)
    changes: dict = {"status": target, "updated_at": now}
    if target == VisitStatus.SUBMITTED:
        changes["submitted_at"] = now
    if target == VisitStatus.REVIEWED:
        changes.update(reviewed_by=by, reviewed_at=now, review_note=note)
    elif current == VisitStatus.SUBMITTED and target == VisitStatus.IN_PROGRESS:
        changes["review_note"] = note
    updated = Visit.objects.filter(pk=visit.pk, status=current).update(**changes)
    if not updated:
        visit.refresh_from_db()
        raise IllegalTransition(visit, visit.status, target)
    for field, value in changes.items():
        setattr(visit, field, value)
    return visit
