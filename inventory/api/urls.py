"""The inventory's API routes; sersledger/api_urls.py puts them on the one router at /api/v1/.

``ROUTES`` are the record viewsets (registered on the router beside the qc app's);
``urlpatterns`` are the inventory's fixed paths (token, own tokens, schema, docs, record
reports).
"""

from django.urls import path, re_path
from drf_spectacular.views import SpectacularAPIView, SpectacularSwaggerView

from . import reports, views
from .auth import OwnTokens, TokenView
from .docs import docs_asset

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
]

urlpatterns = [
    path("token/", TokenView.as_view(), name="token"),
    path("tokens/", OwnTokens.as_view({"get": "list"}), name="tokens-list"),
    re_path(r"^tokens/(?P<id>[0-9a-f]{1,25}|current)/$",
            OwnTokens.as_view({"delete": "destroy"}), name="tokens-detail"),
    path("schema/", SpectacularAPIView.as_view(), name="schema"),
    path("docs/", SpectacularSwaggerView.as_view(url_name="api:schema"), name="docs"),
    path("docs/assets/<path:path>", docs_asset, name="docs_asset"),
    path("records/<str:code>/", reports.RecordView.as_view(), name="record"),
    path("records/<str:code>/lineage/", reports.LineageView.as_view(), name="lineage"),
    path("records/<str:code>/history/", reports.HistoryView.as_view(), name="history"),
    path("records/<str:code>/signatures/", reports.SignaturesView.as_view(), name="signatures"),
    path("expiring/", reports.ExpiringView.as_view(), name="expiring"),
]
