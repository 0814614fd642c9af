from django.apps import AppConfig


class InventoryConfig(AppConfig):
    name = "inventory"
    verbose_name = "Inventory and lineage"
    default_auto_field = "django.db.models.BigAutoField"
