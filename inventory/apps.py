from django.apps import AppConfig


class InventoryConfig(AppConfig):
    name = "inventory"
    verbose_name = "Inventory and lineage"
    default_auto_field = "django.db.models.BigAutoField"

    def ready(self):
        from django.conf import settings
        from django.db.models.signals import pre_save

        from .api.authentication import revoke_tokens_on_credential_change

        pre_save.connect(revoke_tokens_on_credential_change, sender=settings.AUTH_USER_MODEL,
                         dispatch_uid="sersledger-revoke-tokens")
