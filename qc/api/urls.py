"""QC routes, registered on the one API router by sersledger/api_urls.py."""

from django.urls import path

from . import views

ROUTES = [
    ("uvvis-records", views.UvVisRecordViewSet),
    ("reference-measurements", views.ReferenceMeasurementViewSet),
    ("qc-measurements", views.QcMeasurementViewSet),
    ("qc-limit-sets", views.QcLimitSetViewSet),
    ("colloid-limit-sets", views.ColloidLimitSetViewSet),
    ("reference-analytes", views.ReferenceAnalyteViewSet),
]

urlpatterns = [
    path("qc-imports/<uuid:pk>/", views.QcImportView.as_view(), name="qc-import"),
]
