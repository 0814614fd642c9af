"""QC routes, registered on the one API router by sersledger/api_urls.py."""

from . import views

ROUTES = [
    ("uvvis-records", views.UvVisRecordViewSet),
    ("reference-measurements", views.ReferenceMeasurementViewSet),
    ("qc-measurements", views.QcMeasurementViewSet),
    ("qc-limit-sets", views.QcLimitSetViewSet),
    ("colloid-limit-sets", views.ColloidLimitSetViewSet),
    ("reference-analytes", views.ReferenceAnalyteViewSet),
]
