"""Forms of the office pages.

They are ModelForms over the fleet models, so ``full_clean()`` runs the same field
validators (generated from ``fleet/limits.py``) and the same ``clean()`` rules as the API:
validation lives once, in the models.
"""

from __future__ import annotations

import datetime as dt
from typing import Any, cast
from zoneinfo import ZoneInfo

from django import forms
from django.contrib.auth.models import User
from django.core.exceptions import ValidationError
from django.core.files.uploadedfile import UploadedFile
from django.db import transaction
from django.db.models import QuerySet
from django.utils import timezone

from diagnostics.models import Flag

from . import choices
from .choices import Role, VisitStatus
from .limits import SERVICE_ERA
from .models import Site, Unit, Visit, VisitUnit
from .services import save_new_visit
from .validation import MAX_RECORD_ID, booking_problems, document_type

#: Statuses in which the office may still change a visit's time, people or units.
EDITABLE_STATUSES = frozenset({VisitStatus.SCHEDULED, VisitStatus.IN_PROGRESS})


def technician_users() -> QuerySet[User]:
    """Active users of the technician group, in the order the schedule lists them."""
    return (
        User.objects.filter(groups__name=Role.TECHNICIAN, is_active=True)
        .order_by("first_name", "last_name", "username")
        .distinct()
    )


class TechnicianChoiceField(forms.ModelMultipleChoiceField):
    def label_from_instance(self, obj: User) -> str:
        return obj.get_full_name() or obj.get_username()


class UnitChoiceField(forms.ModelMultipleChoiceField):
    def label_from_instance(self, obj: Unit) -> str:
        described = f" - {obj.description}" if obj.description else ""
        return f"{obj.tag}{described} ({obj.refrigerant.designation})"


class LocalDateTimeInput(forms.DateTimeInput):
    """A browser date-and-time picker; the value is the site's wall-clock time."""

    input_type = "datetime-local"

    def __init__(self, attrs: dict[str, Any] | None = None) -> None:
        super().__init__(attrs, format="%Y-%m-%dT%H:%M")


def site_wall_clock(value: dt.datetime | None, site: Site | None) -> dt.datetime | None:
    """An aware datetime shown as the naive wall-clock time at the site (for the picker);
    none for a stored time outside ``SERVICE_ERA``, which the coordinator types anew."""
    if value is None or site is None:
        return value
    if value not in SERVICE_ERA:
        return None
    return timezone.localtime(value, ZoneInfo(site.time_zone)).replace(tzinfo=None)


def _records_field(form: forms.BaseForm, name: str) -> forms.ModelChoiceField:
    """The form's own copy of a field that picks records, whose choices it narrows."""
    field = form.fields[name]
    if not isinstance(field, forms.ModelChoiceField):
        raise TypeError(f"{name!r} does not pick records")
    return field


class ReceiverSelect(forms.NullBooleanSelect):
    """Has a receiver, has none, or not known (the application's default), in words."""

    def __init__(self, attrs: dict | None = None) -> None:
        super().__init__(attrs)
        self.choices = [
            ("unknown", "Not known: the application default"),
            ("true", "Has a receiver"),
            ("false", "No receiver"),
        ]


class VisitForm(forms.ModelForm):
    """Create a visit, or reschedule, reassign and re-scope one that has not been handed in.

    Times are entered in the site's own time zone (the technician's wall clock there), which
    is what a coordinator reads off a customer's phone call.
    """

    window_start = forms.DateTimeField(
        label="Start (site's local time)", widget=LocalDateTimeInput()
    )
    window_end = forms.DateTimeField(label="End (site's local time)", widget=LocalDateTimeInput())
    units = UnitChoiceField(
        queryset=Unit.objects.none(),
        widget=forms.CheckboxSelectMultiple,
        label="Units to cover",
        error_messages={"required": "Choose at least one unit of the site."},
    )
    technicians = TechnicianChoiceField(
        queryset=technician_users(),
        widget=forms.CheckboxSelectMultiple,
        required=False,
        label="Technicians",
        help_text="Leave empty to book the visit now and assign it later.",
    )

    instance: Visit
    _booked_start: dt.datetime | None
    #: The site picked (bound data, initial data or the visit's), whose units are offered.
    site: Site | None
    #: Units with readings or refrigerant records on this visit: they cannot be dropped.
    _locked_unit_ids: set[int]

    class Meta:
        model = Visit
        fields = ["site", "kind", "window_start", "window_end", "reported_problem"]
        labels = {"reported_problem": "Problem reported (for calls)"}
        widgets = {"reported_problem": forms.Textarea(attrs={"rows": 3})}

    def __init__(self, *args: Any, **kwargs: Any) -> None:
        super().__init__(*args, **kwargs)
        _records_field(self, "site").queryset = Site.objects.select_related("customer").order_by(
            "customer__name", "name"
        )
        _records_field(self, "technicians").queryset = technician_users()
        site = self._chosen_site()
        self.site = site
        #: The start as booked, to tell a moved window from one left alone.
        self._booked_start = self.instance.window_start if self.instance.pk else None
        if site is not None:
            _records_field(self, "units").queryset = (
                Unit.objects.filter(site=site, retired_on__isnull=True)
                .select_related("refrigerant")
                .order_by("tag")
            )
        if self.instance.pk:
            self._locked_unit_ids = set(
                VisitUnit.objects.filter(visit=self.instance)
                .filter(reading_sets__isnull=False)
                .values_list("unit_id", flat=True)
            ) | set(
                VisitUnit.objects.filter(visit=self.instance)
                .filter(refrigerant_events__isnull=False)
                .values_list("unit_id", flat=True)
            )
            self.initial.setdefault("units", list(self.instance.units.values_list("pk", flat=True)))
            self.initial.setdefault(
                "technicians", list(self.instance.technicians.values_list("pk", flat=True))
            )
            for name in ("window_start", "window_end"):
                self.initial[name] = site_wall_clock(getattr(self.instance, name), site)
        else:
            self._locked_unit_ids = set()

    @property
    def end_note(self) -> str:
        """Said beside the window when it ends on another day than it starts, so that an
        end typed a day (or a year) off is seen before it is booked."""
        days = []
        for name in ("window_start", "window_end"):
            value = self[name].value()
            if isinstance(value, str):
                try:
                    value = self.fields[name].to_python(value)
                except ValidationError:
                    return ""
            if not isinstance(value, dt.datetime):
                return ""
            days.append(value.date())
        start, end = days
        if end <= start:
            return ""
        after = (
            "the day after it starts"
            if (end - start).days == 1
            else f"{(end - start).days} days after it starts"
        )
        return f"Ends on {end:%a %-d %b %Y}, {after}."

    @property
    def site_chosen(self) -> bool:
        return self.site is not None

    def _chosen_site(self) -> Site | None:
        raw = None
        if self.is_bound:
            raw = self.data.get(self.add_prefix("site"))
        elif self.initial.get("site"):
            raw = self.initial["site"]
        elif self.instance.pk:
            return self.instance.site
        if isinstance(raw, Site):
            return raw
        try:
            return Site.objects.get(pk=int(raw)) if raw else None
        except (TypeError, ValueError, Site.DoesNotExist):
            return None

    def clean(self) -> dict[str, Any]:
        super().clean()
        data = self.cleaned_data
        site = data.get("site")
        if site is not None:
            zone = ZoneInfo(site.time_zone)
            for name in ("window_start", "window_end"):
                value = data.get(name)
                if value is not None:
                    # The field read the picker in the server's zone; re-read it at the site.
                    wall = timezone.localtime(value).replace(tzinfo=None)
                    data[name] = wall.replace(tzinfo=zone)
                    setattr(self.instance, name, data[name])
        start = data.get("window_start")
        if start is not None and start != self._booked_start:
            for name, problem in booking_problems(start, timezone.localdate()).items():
                self.add_error(name, problem)
        units = data.get("units")
        if units is not None and site is not None:
            strangers = [u.tag for u in units if u.site_id != site.pk]
            if strangers:
                self.add_error("units", f"not at this site: {', '.join(strangers)}")
        if self.instance.pk and self._locked_unit_ids:
            kept = {u.pk for u in units or ()}
            dropped = self._locked_unit_ids - kept
            if dropped:
                tags = Unit.objects.filter(pk__in=dropped).values_list("tag", flat=True)
                self.add_error(
                    "units",
                    "readings or refrigerant records exist for "
                    f"{', '.join(sorted(tags))}; such a unit stays on the visit",
                )
        if (
            self.instance.pk
            and site is not None
            and self.instance.site_id != site.pk
            and self._locked_unit_ids
        ):
            self.add_error("site", "the visit already has readings; its site cannot change")
        return data

    @transaction.atomic
    def save(self, commit: bool = True) -> Visit:
        visit: Visit = super().save(commit=False)
        units = self.cleaned_data["units"]
        people = self.cleaned_data["technicians"]
        if visit.pk is None:
            return save_new_visit(visit, units, people)
        visit.save()
        current = set(VisitUnit.objects.filter(visit=visit).values_list("unit_id", flat=True))
        wanted = {u.pk for u in units}
        VisitUnit.objects.filter(visit=visit, unit_id__in=current - wanted).delete()
        VisitUnit.objects.bulk_create(
            VisitUnit(visit=visit, unit_id=pk) for pk in sorted(wanted - current)
        )
        visit.technicians.set(people)
        return visit


class ReviewForm(forms.Form):
    """Accept a submitted visit, or hand it back to the technician saying what to change."""

    ACCEPT = "accept"
    RETURN = "return"

    decision = forms.ChoiceField(
        choices=[(ACCEPT, "Accept the visit"), (RETURN, "Return it to the technician")],
        widget=forms.RadioSelect,
        label="Your decision",
    )
    note = forms.CharField(
        widget=forms.Textarea(attrs={"rows": 3}),
        required=False,
        label="Note to the technician",
        help_text="Required when returning: say what to measure again or explain.",
    )

    def clean(self) -> dict[str, Any]:
        super().clean()
        data = self.cleaned_data
        if data.get("decision") == self.RETURN and not (data.get("note") or "").strip():
            self.add_error("note", "Say what the technician should change before returning it.")
        return data


class AcknowledgeFlagForm(forms.ModelForm):
    """The office has seen a flag and says what it is doing about it."""

    class Meta:
        model = Flag
        fields = ["acknowledgement_note"]
        labels = {"acknowledgement_note": "What is being done"}
        widgets = {"acknowledgement_note": forms.Textarea(attrs={"rows": 2})}

    def __init__(self, *args: Any, **kwargs: Any) -> None:
        super().__init__(*args, **kwargs)
        field = self.fields["acknowledgement_note"]
        field.required = True
        field.error_messages["required"] = "Say what is being done (a visit booked, parts ordered)."


class FlagsField(forms.ModelMultipleChoiceField):
    """Flags by id; an id no record could have is refused like one that is not offered,
    before it reaches SQL."""

    def clean(self, value: Any) -> Any:
        for pk in value or ():
            if not str(pk).isdigit() or not 1 <= int(pk) <= MAX_RECORD_ID:
                raise ValidationError(
                    self.error_messages["invalid_pk_value"],
                    code="invalid_pk_value",
                    params={"pk": pk},
                )
        return super().clean(value)


class AcknowledgeFlagsForm(forms.Form):
    """The attention list's one acknowledgement: the flags ticked, and what is being done
    about them. Only flags within the user's reach are offered; any other is refused by
    name (``flags``)."""

    flags = FlagsField(
        queryset=Flag.objects.none(),
        error_messages={
            "required": "Tick at least one flag to acknowledge.",
            "invalid_choice": "Flag %(value)s is not one you can acknowledge.",
            "invalid_pk_value": "“%(pk)s” is not a flag's number.",
        },
    )
    note = forms.CharField(
        label="What is being done",
        widget=forms.Textarea(attrs={"rows": 2}),
        error_messages={"required": "Say what is being done (a visit booked, parts ordered)."},
    )

    def __init__(self, *args: Any, user: User, **kwargs: Any) -> None:
        super().__init__(*args, **kwargs)
        cast(FlagsField, self.fields["flags"]).queryset = Flag.objects.visible_to(user)

    def ticked(self) -> set[int]:
        """The flags the form was sent with, to tick them again beside an error."""
        return {int(v) for v in self["flags"].value() or () if str(v).isdigit()}


class CancelVisitForm(forms.Form):
    confirm = forms.BooleanField(
        label="Yes, cancel this visit",
        error_messages={"required": "Tick the box to confirm the cancellation."},
    )


class DocumentForm(forms.Form):
    """A file to keep with a unit: what it is, a title, the file (a photo or a PDF)."""

    kind = forms.ChoiceField(choices=choices.DocumentKind.choices, label="What it is")
    title = forms.CharField(max_length=200, required=False, label="Title (optional)")
    file = forms.FileField(label="File", help_text="A photo (JPEG or PNG) or a PDF, up to 20 MB.")

    def clean_file(self) -> UploadedFile:
        upload: UploadedFile = self.cleaned_data["file"]
        head = upload.read(16)
        upload.seek(0)
        content_type, problem = document_type(head, upload.size or 0)
        if problem:
            raise forms.ValidationError(problem)
        upload.content_type = content_type
        return upload
