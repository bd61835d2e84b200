"""People: the office administrators' pages to add, change, disable and re-role technicians
and managers and revoke a lost phone's token. The work, its rules and its audit entries
are in ``fleet.people``."""

from __future__ import annotations

from dataclasses import dataclass

from django.contrib import messages
from django.contrib.auth.models import Group, User
from django.core.exceptions import ValidationError
from django.db.models import Prefetch
from django.http import HttpRequest, HttpResponse
from django.shortcuts import get_object_or_404, redirect
from django.views.decorators.http import require_http_methods, require_POST

from fleet import people
from fleet.models import Site
from fleet.people_forms import AddPersonForm, ChangePersonForm

from .base import office_admin, page, signed_in


@dataclass(frozen=True)
class PersonRow:
    """A person as the list shows them."""

    user: User
    roles: list[str]
    sites: list[Site]


def _name(user: User) -> str:
    return user.get_full_name() or user.get_username()


@office_admin
def people_list(request: HttpRequest) -> HttpResponse:
    """Every technician and manager (and anyone without a role yet), with their roles,
    sites, whether they may sign in and whether a phone holds a token: three queries."""
    found = people.managed_people().prefetch_related(
        Prefetch("groups", queryset=Group.objects.filter(name__in=people.MANAGED_ROLES)),
        Prefetch("managed_sites", queryset=Site.objects.order_by("name")),
    )
    rows = [
        PersonRow(u, sorted(g.name for g in u.groups.all()), list(u.managed_sites.all()))
        for u in found
    ]
    return page(request, "fleet/people.html", {"rows": rows})


@office_admin
@require_http_methods(["GET", "POST"])
def person_create(request: HttpRequest) -> HttpResponse:
    """Add a technician or a manager, who may sign in at once."""
    form = AddPersonForm(request.POST or None)
    if request.method == "POST" and form.is_valid():
        data = form.cleaned_data
        try:
            person = people.add_person(
                username=data["username"],
                password=data["password1"],
                first_name=data["first_name"],
                last_name=data["last_name"],
                email=data["email"],
                roles=data["roles"],
                sites=data["sites"],
                by=signed_in(request),
            )
        except ValidationError as exc:
            form.add_error(None, exc)
        else:
            messages.success(request, f"{_name(person)} added; they may sign in now.")
            return redirect("fleet:people")
    status = 400 if form.errors else 200
    return page(request, "fleet/person_form.html", {"form": form}, status=status)


@office_admin
@require_http_methods(["GET", "POST"])
def person_edit(request: HttpRequest, pk: int) -> HttpResponse:
    """Change a person's name, e-mail, roles and sites, or disable them; with their token
    and what has changed about them."""
    person = get_object_or_404(people.managed_people(), pk=pk)
    form = ChangePersonForm(request.POST or None, instance=person)
    if request.method == "POST" and form.is_valid():
        data = form.cleaned_data
        try:
            entry = people.change_person(
                person,
                first_name=data["first_name"],
                last_name=data["last_name"],
                email=data["email"],
                active=data["is_active"],
                roles=data["roles"],
                sites=data["sites"],
                by=signed_in(request),
            )
        except ValidationError as exc:
            form.add_error(None, exc)
        else:
            said = "saved" if entry else "unchanged"
            messages.success(request, f"{_name(person)}: {said}.")
            return redirect("fleet:person", pk=person.pk)
    status = 400 if form.errors else 200
    return page(
        request,
        "fleet/person_form.html",
        {
            "form": form,
            "person": person,
            "token": people.token_of(person),
            "open_visits": people.open_visits_of(person),
            "trail": list(people.trail_of(person)[:50]),
        },
        status=status,
    )


@office_admin
@require_POST
def person_revoke_token(request: HttpRequest, pk: int) -> HttpResponse:
    """Revoke a person's API token (a lost phone); the phone must sign in again."""
    person = get_object_or_404(people.managed_people(), pk=pk)
    if people.revoke_token(person, by=signed_in(request)):
        messages.success(
            request, f"{_name(person)}'s token revoked: their phone must sign in again."
        )
    else:
        messages.info(request, f"{_name(person)} holds no token.")
    return redirect("fleet:person", pk=person.pk)
