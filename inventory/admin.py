"""Housekeeping views only, and read-only: every write goes through inventory.services, so
the role checks, reasons, versions and history apply to it.  People work through the
product's own pages; history is shown there (record_get_history) and is never editable."""

from django.contrib import admin

from . import models


class ReadOnlyAdmin(admin.ModelAdmin):
    """Look, search, never add, change or delete (nothing is hard-deleted; void instead)."""

    def has_add_permission(self, request, obj=None):
        return False

    def has_change_permission(self, request, obj=None):
        return False

    def has_delete_permission(self, request, obj=None):
        return False


class ReadOnlyCodeAdmin(ReadOnlyAdmin):
    search_fields = ("code",)


@admin.register(models.StorageLocation)
class StorageLocationAdmin(ReadOnlyCodeAdmin):
    list_display = ("code", "name", "kind", "room")


@admin.register(models.ReagentLot)
class ReagentLotAdmin(ReadOnlyCodeAdmin):
    list_display = ("code", "name", "kind", "supplier_lot", "status", "expires_on")
    list_filter = ("kind", "status")


@admin.register(models.SphereLot, models.TemplateAssembly, models.Substrate,
                models.NanoparticleBatch)
class LifecycleAdmin(ReadOnlyCodeAdmin):
    list_display = ("code", "status", "expires_on", "voided_at")
    list_filter = ("status",)


@admin.register(models.DepositionRun, models.LinkerLayer, models.ParticleAttachment,
                models.Dataset, models.Flag)
class StepAdmin(ReadOnlyCodeAdmin):
    list_display = ("code", "created_at", "voided_at")


@admin.register(models.ShelfLifeRule)
class ShelfLifeRuleAdmin(ReadOnlyAdmin):
    list_display = ("record_kind", "reagent_kind", "shelf_life_days", "counted_from", "is_example")


@admin.register(models.LineageEdge, models.StatusChange, models.DepositionTolerance)
class ReadOnlyLogAdmin(ReadOnlyAdmin):
    pass


@admin.register(models.Signature)
class SignatureAdmin(ReadOnlyAdmin):
    list_display = ("record_code", "meaning", "signer_name", "signed_at", "content_sha256")
    search_fields = ("record_code", "signer_username")
