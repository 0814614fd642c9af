"""API routes, mounted at /api/v1/ by config/urls.py (namespace ``api``)."""

from django.urls import include, path
from drf_spectacular.views import SpectacularAPIView, SpectacularSwaggerView
from rest_framework.routers import DefaultRouter

from qc.api.urls import ROUTES as QC_ROUTES

from . import reports, views
from .auth import TokenView
from .docs import docs_asset

app_name = "api"

router = DefaultRouter()
ROUTES = [
    ("storage-locations", views.StorageLocationViewSet),
    ("reagent-lots", views.ReagentLotViewSet),
    ("sphere-lots", views.SphereLotViewSet),
    ("templates", views.TemplateViewSet),
    ("deposition-runs", views.DepositionRunViewSet),
    ("substrates", views.SubstrateViewSet),
    ("linker-layers", views.LinkerLayerViewSet),
    ("nanoparticle-batches", views.NanoparticleBatchViewSet),
    ("particle-attachments", views.ParticleAttachmentViewSet),
    ("datasets", views.DatasetViewSet),
    ("flags", views.FlagViewSet),
    ("shelf-life-rules", views.ShelfLifeRuleViewSet),
    ("deposition-tolerances", views.DepositionToleranceViewSet),
    *QC_ROUTES,
]
for prefix, viewset in ROUTES:
    router.register(prefix, viewset, basename=prefix)
    reports.DETAIL_ROUTES[viewset.queryset.model._meta.model_name] = prefix

urlpatterns = [
    path("token/", TokenView.as_view(), name="token"),
    path("schema/", SpectacularAPIView.as_view(), name="schema"),
    path("docs/", SpectacularSwaggerView.as_view(url_name="api:schema"), name="docs"),
    path("docs/assets/<path:path>", docs_asset, name="docs_asset"),
    path("records/<str:code>/", reports.RecordView.as_view(), name="record"),
    path("records/<str:code>/lineage/", reports.LineageView.as_view(), name="lineage"),
    path("records/<str:code>/history/", reports.HistoryView.as_view(), name="history"),
    path("records/<str:code>/signatures/", reports.SignaturesView.as_view(), name="signatures"),
    path("expiring/", reports.ExpiringView.as_view(), name="expiring"),
    path("", include(router.urls)),
]
