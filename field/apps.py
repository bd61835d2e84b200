from django.apps import AppConfig


class FieldConfig(AppConfig):
    default_auto_field = "django.db.models.BigAutoField"
    name = "field"
    verbose_name = "Technician's field app"
