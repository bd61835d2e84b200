from django.apps import AppConfig


class ReportsConfig(AppConfig):
    name = "reports"
    verbose_name = "Reports"

    def ready(self) -> None:
        from django.urls import register_converter

        from reports.months import MonthConverter

        register_converter(MonthConverter, "month")
