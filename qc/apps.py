from django.apps import AppConfig


class QcConfig(AppConfig):
    name = "qc"
    verbose_name = "Quality control"
    default_auto_field = "django.db.models.BigAutoField"

    def ready(self) -> None:
        from . import checks  # noqa: F401  (registers the system checks)
