"""Pages of the insight app, mounted at the site root."""

from django.urls import path

from . import views

urlpatterns = [
    path("insight/", views.insight_page, name="insight"),
    path("insight/export.csv", views.export_csv, name="insight_export_csv"),
    path("insight/export.xlsx", views.export_xlsx, name="insight_export_xlsx"),
    path("insight/drift-flags/", views.raise_drift_flags, name="insight_drift_flags"),
]
