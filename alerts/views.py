"""Each office user's own alert choices (which kinds, at once or in the digest) and the
latest alerts."""

from __future__ import annotations

from django import forms
from django.contrib import messages
from django.http import HttpRequest, HttpResponse
from django.shortcuts import redirect
from django.views.decorators.http import require_http_methods

from fleet.choices import Role
from fleet.views.base import page, signed_in, within_reach

from .models import AlertChoice, AlertEvent
from .services import choice_of

#: The latest alerts the page lists.
SHOWN = 30


class AlertChoiceForm(forms.ModelForm):
    class Meta:
        model = AlertChoice
        fields = ["urgent_fault", "flag_opened", "leak_deadline"]
        labels = {
            "urgent_fault": "A visit finds a unit far off its aim",
            "flag_opened": "A flag opens on a unit",
            "leak_deadline": "A leak-repair or verification deadline is near",
        }


@within_reach(Role.OFFICE)
@require_http_methods(["GET", "POST"])
def alert_settings(request: HttpRequest) -> HttpResponse:
    user = signed_in(request)
    form = AlertChoiceForm(request.POST or None, instance=choice_of(user))
    if request.method == "POST":
        if form.is_valid():
            form.save()
            messages.success(request, "Your alert choices are saved.")
            return redirect("alerts:settings")
        status = 400
    else:
        status = 200
    events = AlertEvent.objects.select_related("unit__site")[:SHOWN]
    return page(
        request,
        "alerts/settings.html",
        {"form": form, "events": events, "has_email": bool(user.email)},
        status=status,
    )
