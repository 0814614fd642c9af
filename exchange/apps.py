from django.apps import AppConfig


class ExchangeConfig(AppConfig):
    """Spreadsheets in and out, the daily digest and the calendar feed (page level)."""

    default_auto_field = "django.db.models.BigAutoField"
    name = "exchange"

    def ready(self) -> None:
        # Stamps the spreadsheet source onto history rows written during an import
        # (exchange.provenance); inert outside an import.
        from . import provenance  # noqa: F401
