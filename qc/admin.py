"""Housekeeping views of the QC records, read-only: limits, analytes and calibrations are set
through qc.services (administrator role, history with reasons); results come from files."""

from django.contrib import admin

from inventory.admin import ReadOnlyAdmin

from . import models


@admin.register(models.UvVisRecord)
class UvVisRecordAdmin(ReadOnlyAdmin):
    list_display = ("code", "batch", "measured_on", "peak_nm", "diameter_nm")
    search_fields = ("code", "batch__code")


@admin.register(models.ColloidLimitSet, models.SilverCalibration)
class ColloidSettingsAdmin(ReadOnlyAdmin):
    pass


@admin.register(models.QcMeasurement, models.ReferenceMeasurement)
class RamanMeasurementAdmin(ReadOnlyAdmin):
    list_display = ("code", "measured_on")
    search_fields = ("code",)


@admin.register(models.QcLimitSet, models.ReferenceAnalyte)
class RamanSettingsAdmin(ReadOnlyAdmin):
    pass
