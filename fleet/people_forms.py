"""The people pages' forms: a new technician or manager, and a change to one. Roles and
sites are checked again by the service (``fleet.people``), which the forms only feed."""

from __future__ import annotations

from typing import Any

from django import forms
from django.contrib.auth.forms import UserCreationForm, UsernameField
from django.contrib.auth.models import User

from .models import Site
from .people import MANAGED_ROLES
from .reach import MANAGER

ROLE_CHOICES = [(role, role.capitalize()) for role in MANAGED_ROLES]


class SiteChoiceField(forms.ModelMultipleChoiceField):
    def label_from_instance(self, obj: Site) -> str:
        return f"{obj.customer.name}: {obj.name}"


def _roles_field() -> forms.MultipleChoiceField:
    return forms.MultipleChoiceField(
        choices=ROLE_CHOICES,
        widget=forms.CheckboxSelectMultiple,
        error_messages={"required": "Choose technician, manager or both."},
        help_text="A technician sees the visits assigned to them; a manager the sites "
        "ticked below and their monthly reports.",
    )


def _sites_field() -> SiteChoiceField:
    return SiteChoiceField(
        queryset=Site.objects.select_related("customer").order_by("customer__name", "name"),
        required=False,
        widget=forms.CheckboxSelectMultiple,
        help_text="The sites a manager sees, with their reports.",
    )


def _sites_for_managers(form: forms.BaseForm) -> None:
    """Sites are for managers only: said beside the sites."""
    if form.cleaned_data.get("sites") and MANAGER not in (form.cleaned_data.get("roles") or []):
        form.add_error(
            "sites", "Only a manager manages sites: tick the manager role or clear the sites."
        )


class AddPersonForm(UserCreationForm):
    """A new person: sign-in name, a first password (checked by the password validators,
    typed twice), name, e-mail, roles and sites."""

    roles = _roles_field()
    sites = _sites_field()

    class Meta:
        model = User
        fields = ("username", "first_name", "last_name", "email")
        field_classes = {"username": UsernameField}

    def __init__(self, *args: Any, **kwargs: Any) -> None:
        super().__init__(*args, **kwargs)
        self.fields["email"].required = True
        self.fields["email"].help_text = "Where password resets and alerts go."

    def clean(self) -> dict[str, Any] | None:
        cleaned = super().clean()
        _sites_for_managers(self)
        return cleaned


class ChangePersonForm(forms.ModelForm):
    """A person's name, e-mail, whether they may sign in, roles and sites."""

    roles = _roles_field()
    sites = _sites_field()

    class Meta:
        model = User
        fields = ("first_name", "last_name", "email", "is_active")
        labels = {"is_active": "May sign in"}
        help_texts = {
            "is_active": "Untick to disable: they are signed out and their phone's token "
            "stops working at once; their records stay."
        }

    def __init__(self, *args: Any, **kwargs: Any) -> None:
        super().__init__(*args, **kwargs)
        self.fields["email"].required = True
        if self.instance.pk and not self.is_bound:
            self.initial["roles"] = list(
                self.instance.groups.filter(name__in=MANAGED_ROLES).values_list("name", flat=True)
            )
            self.initial["sites"] = list(self.instance.managed_sites.values_list("pk", flat=True))

    def clean(self) -> dict[str, Any] | None:
        cleaned = super().clean()
        _sites_for_managers(self)
        return cleaned
