"""The office acknowledges a flag: it has seen it and says what it is doing; the flag stays
open until the diagnostics clear it."""

from __future__ import annotations

from django.contrib import messages
from django.http import HttpRequest, HttpResponse
from django.shortcuts import get_object_or_404, redirect, render
from django.urls import reverse
from django.utils import timezone
from django.views.decorators.http import require_POST

from diagnostics.models import Flag
from fleet import forms
from fleet.choices import Role

from .base import is_htmx, safe_next, within_reach


@within_reach(Role.OFFICE)
@require_POST
def flag_acknowledge(request: HttpRequest, pk: int) -> HttpResponse:
    """Record that the office has seen a flag and what it is doing; the flag stays open
    until the diagnostics clear it."""
    flag = get_object_or_404(
        Flag.objects.visible_to(request.user).select_related("unit__site"), pk=pk
    )
    form = forms.AcknowledgeFlagForm(request.POST, instance=flag)
    if form.is_valid():
        flag = form.save(commit=False)
        flag.acknowledged_by = request.user
        flag.acknowledged_at = timezone.now()
        flag.save(update_fields=["acknowledgement_note", "acknowledged_by", "acknowledged_at"])
        if not is_htmx(request):
            messages.success(request, f"Flag on {flag.unit.tag} acknowledged.")
    if is_htmx(request):
        return render(
            request,
            "fleet/_flag.html",
            {
                "flag": flag,
                "can_acknowledge": True,
                "ack_form": form,
            },
        )
    if form.errors:
        # An ErrorList item is its message (Django unpacks the ValidationError on indexing);
        # the stubs type it as the list's stored items, ValidationError included.
        messages.error(request, form.errors["acknowledgement_note"][0])  # type: ignore[arg-type]
    return redirect(safe_next(request, reverse("fleet:unit", args=[flag.unit_id])))
