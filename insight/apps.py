from django.apps import AppConfig


class InsightConfig(AppConfig):
    """Process insight: which fabrication settings make substrates that pass (a page-level app)."""

    default_auto_field = "django.db.models.BigAutoField"
    name = "insight"
    verbose_name = "Process insight"
