"""Housekeeping views only; people work through the product's own pages."""

from django.contrib import admin

from . import models


class ReadOnlyCodeAdmin(admin.ModelAdmin):
    readonly_fields = ("code", "created_at", "created_by", "updated_at", "updated_by", "version")
    search_fields = ("code",)

    def has_delete_permission(self, request, obj=None):
        return False  # nothing is hard-deleted


@admin.register(models.StorageLocation)
class StorageLocationAdmin(ReadOnlyCodeAdmin):
    list_display = ("code", "name", "kind", "room")


@admin.register(models.ReagentLot)
class ReagentLotAdmin(ReadOnlyCodeAdmin):
    list_display = ("code", "name", "kind", "supplier_lot", "status", "expires_on")
    list_filter = ("kind", "status")
    readonly_fields = ReadOnlyCodeAdmin.readonly_fields + ("expires_on", "status")


@admin.register(models.SphereLot, models.TemplateAssembly, models.Substrate,
                models.NanoparticleBatch)
class LifecycleAdmin(ReadOnlyCodeAdmin):
    list_display = ("code", "status", "expires_on")
    list_filter = ("status",)
    readonly_fields = ReadOnlyCodeAdmin.readonly_fields + ("expires_on", "status")


@admin.register(models.DepositionRun, models.LinkerLayer, models.ParticleAttachment,
                models.Dataset, models.Flag)
class StepAdmin(ReadOnlyCodeAdmin):
    list_display = ("code", "created_at")


@admin.register(models.ShelfLifeRule)
class ShelfLifeRuleAdmin(admin.ModelAdmin):
    list_display = ("record_kind", "reagent_kind", "shelf_life_days", "counted_from", "is_example")


@admin.register(models.LineageEdge, models.StatusChange)
class ReadOnlyLogAdmin(admin.ModelAdmin):
    def has_change_permission(self, request, obj=None):
        return False

    def has_delete_permission(self, request, obj=None):
        return False


@admin.register(models.DepositionTolerance)
class DepositionToleranceAdmin(admin.ModelAdmin):
    def has_delete_permission(self, request, obj=None):
        return False
