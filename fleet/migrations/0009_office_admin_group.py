"""The office administrators' group: office users in it manage people from the office
pages (``fleet.choices.OFFICE_ADMIN_GROUP``)."""

from django.db import migrations

#: As ``fleet.choices.OFFICE_ADMIN_GROUP`` when this migration was written.
OFFICE_ADMIN_GROUP = "office admin"


def seed(apps, schema_editor):
    apps.get_model("auth", "Group").objects.get_or_create(name=OFFICE_ADMIN_GROUP)


def unseed(apps, schema_editor):
    """Leave the group: users may be in it."""


class Migration(migrations.Migration):
    dependencies = [("fleet", "0008_orderings_on_own_columns")]

    operations = [migrations.RunPython(seed, unseed)]
