"""What every office page shares: who may open it, how it renders, and small request
helpers.

Which records a page shows is the reach of ``fleet.reach`` (``visible_to``); which pages a
role opens at all is said here, per page, by ``within_reach``: the office's tools (booking,
review, maintenance, attention) are the office's; the schedule is for those who reach
visits; the records' pages are for every role, scoped by reach.
"""

from __future__ import annotations

from collections.abc import Callable
from functools import wraps
from typing import Any
from zoneinfo import ZoneInfo

from django.contrib.auth.decorators import login_required
from django.contrib.auth.models import User
from django.core.exceptions import PermissionDenied
from django.http import Http404, HttpRequest, HttpResponse
from django.http.response import HttpResponseBase
from django.shortcuts import redirect, render
from django.utils.functional import SimpleLazyObject
from django.utils.http import url_has_allowed_host_and_scheme

from diagnostics.models import Flag
from fleet.choices import Role, VisitStatus
from fleet.models import Site, Visit
from fleet.reach import roles_of

#: Every role: a page of records, scoped by reach alone.
ANY_ROLE = tuple(Role.values)


#: A page: a response, or a file streamed (a stored report's PDF).
View = Callable[..., HttpResponseBase]


def within_reach(*allowed: str) -> Callable[[View], View]:
    """Sign-in required; then a user with none of the ``allowed`` roles gets 404 (the page
    does not exist for them), never a hint that it does."""

    def decorate(view: View) -> View:
        @login_required
        @wraps(view)
        def wrapped(request: HttpRequest, *args: Any, **kwargs: Any) -> HttpResponseBase:
            if not roles_of(request.user).any_of(allowed):
                raise Http404("not within your reach")
            return view(request, *args, **kwargs)

        return wrapped

    return decorate


def office_admin(view: View) -> View:
    """An office administrator's page (``Roles.manages_people``): 404 for anyone else, as
    ``within_reach`` answers."""

    @wraps(view)
    def wrapped(request: HttpRequest, *args: Any, **kwargs: Any) -> HttpResponseBase:
        if not roles_of(request.user).manages_people:
            raise Http404("not within your reach")
        return view(request, *args, **kwargs)

    return within_reach(Role.OFFICE)(wrapped)


def _queue_count(user: Any) -> int:
    return Visit.objects.visible_to(user).filter(status=VisitStatus.SUBMITTED).count()


def _flag_count(user: Any) -> int:
    return Flag.objects.visible_to(user).filter(cleared_at__isnull=True).count()


def navigation(request: HttpRequest) -> dict[str, Any]:
    """Template context processor: what the menu of ``base.html`` needs, on every page
    that extends it (the reports' pages and the htmx fragments too, which render without
    ``page``). Each value is read lazily, so a page that shows no menu (the admin, the
    sign-in page) asks nothing; a value the view passes itself takes precedence."""
    user = request.user
    return {
        "roles": SimpleLazyObject(lambda: roles_of(user)),
        "nav_queue_count": SimpleLazyObject(lambda: _queue_count(user)),
        "nav_flag_count": SimpleLazyObject(lambda: _flag_count(user)),
    }


def page(request: HttpRequest, template: str, context: dict, status: int = 200) -> HttpResponse:
    """Render a page with the user's roles and what the navigation shows for them (two
    counts for the office; a page that has counted one already passes it in)."""
    context = {"roles": roles_of(request.user), **context}
    if context["roles"].office:
        if "nav_queue_count" not in context:
            context["nav_queue_count"] = _queue_count(request.user)
        if "nav_flag_count" not in context:
            context["nav_flag_count"] = _flag_count(request.user)
    return render(request, template, context, status=status)


def signed_in(request: HttpRequest) -> User:
    """The user a page acts for. ``within_reach`` signs every page's user in first, so an
    anonymous one never gets this far; one that did would be refused, never recorded as
    no one."""
    user = request.user
    if not user.is_authenticated:
        raise PermissionDenied
    return user


def is_htmx(request: HttpRequest) -> bool:
    return request.headers.get("HX-Request") == "true"


def safe_next(request: HttpRequest, fallback: str) -> str:
    target = request.POST.get("next") or request.GET.get("next") or ""
    if url_has_allowed_host_and_scheme(target, {request.get_host()}, request.is_secure()):
        return target
    return fallback


def site_zone(site: Site) -> ZoneInfo:
    return ZoneInfo(site.time_zone)


@login_required
def home(request: HttpRequest) -> HttpResponse:
    """Send each user to the page their day starts on: the schedule for those who reach
    visits, the site list for managers."""
    roles = roles_of(request.user)
    if roles.sees_visits:
        return redirect("fleet:schedule")
    if roles:
        return redirect("fleet:sites")
    return page(request, "fleet/no_role.html", {})
