"""Seed the refrigerant catalogue and the three role groups.

The values come from the diagnostics core's catalogue (ASHRAE 34 compositions and safety
classes; GWP by the 40 CFR 84.64(b) mass-weighted rule over IPCC AR4 constituent values),
so the records and the computations read the same numbers.
"""

from django.db import migrations

GWP_SOURCE = "IPCC AR4 100-year, mass-weighted over constituents (40 CFR 84.64(b))"


def seed(apps, schema_editor):
    from diagnostics.core.refrigerants import CATALOGUE

    Refrigerant = apps.get_model("fleet", "Refrigerant")
    for ref in CATALOGUE.values():
        Refrigerant.objects.update_or_create(
            designation=ref.designation,
            defaults={
                "kind": ref.kind.value,
                "composition": [[c, round(w, 6)] for c, w in ref.composition],
                "safety_class": ref.safety_class,
                "gwp": ref.gwp_ar4,
                "gwp_source": GWP_SOURCE,
            },
        )
    Group = apps.get_model("auth", "Group")
    for name in ("office", "technician", "manager"):
        Group.objects.get_or_create(name=name)


def unseed(apps, schema_editor):
    """Leave the data: refrigerants may already be referenced by units."""


class Migration(migrations.Migration):
    dependencies = [
        ("fleet", "0001_records"),
        ("auth", "0012_alter_user_first_name_max_length"),
    ]

    operations = [migrations.RunPython(seed, unseed)]
