"""Housekeeping views of the QC records; the product's own pages are the interface."""

from django.contrib import admin

from . import models


@admin.register(models.UvVisRecord)
class UvVisRecordAdmin(admin.ModelAdmin):
    list_display = ("code", "batch", "measured_on", "peak_nm", "diameter_nm")
    search_fields = ("code", "batch__code")

    def has_change_permission(self, request, obj=None):
        return False  # computed from the uploaded file; re-import instead

    def has_delete_permission(self, request, obj=None):
        return False


@admin.register(models.ColloidLimitSet, models.SilverCalibration)
class ColloidSettingsAdmin(admin.ModelAdmin):
    def has_delete_permission(self, request, obj=None):
        return False


@admin.register(models.QcMeasurement, models.ReferenceMeasurement)
class RamanMeasurementAdmin(admin.ModelAdmin):
    list_display = ("code", "measured_on")
    search_fields = ("code",)

    def has_change_permission(self, request, obj=None):
        return False  # computed from the uploaded file; re-import instead

    def has_delete_permission(self, request, obj=None):
        return False


@admin.register(models.QcLimitSet, models.ReferenceAnalyte)
class RamanSettingsAdmin(admin.ModelAdmin):
    def has_delete_permission(self, request, obj=None):
        return False
