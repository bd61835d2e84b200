from typing import Any

from django.apps import AppConfig
from django.core import checks
from django.core.management import call_command
from django.db.models.signals import post_migrate

#: Apps whose records the office keeps in the admin as well as on its own pages.
OFFICE_APPS = ("fleet", "diagnostics", "reports")


def grant_office_permissions(sender: AppConfig, using: str = "default", **kwargs: Any) -> None:
    """Give the office group every model permission of our apps (after each migrate, since
    Django creates permissions only once migrations have run)."""
    from django.contrib.auth.models import Group, Permission

    office = Group.objects.using(using).filter(name="office").first()
    if office is not None:
        office.permissions.add(
            *Permission.objects.using(using).filter(content_type__app_label__in=OFFICE_APPS)
        )


def create_cache_table(sender: AppConfig, using: str = "default", **kwargs: Any) -> None:
    """Create the database cache's table (settings.CACHES without REDIS_URL) with every
    migrate, so a deployment's usual steps make it; a no-op once it exists or for other
    cache backends."""
    call_command("createcachetable", database=using, verbosity=0)


class FleetConfig(AppConfig):
    name = "fleet"
    verbose_name = "Fleet"

    def ready(self) -> None:
        from django.urls import register_converter

        from fleet.validation import RecordIdConverter

        register_converter(RecordIdConverter, "id")
        post_migrate.connect(grant_office_permissions, dispatch_uid="rimewatch-office-permissions")
        post_migrate.connect(create_cache_table, sender=self, dispatch_uid="rimewatch-cache-table")
        from fleet.checks import email_is_delivered

        checks.register(email_is_delivered)
