"""The one API router, mounted at /api/v1/ by sersledger/urls.py (namespace ``api``).

Assembled here, above the apps, so inventory, qc and insight each list only their own
routes and none knows another's.
"""

from django.urls import include, path
from rest_framework.routers import DefaultRouter

from exchange import api as exchange_api
from insight import api_urls as insight_api
from inventory.api import reports
from inventory.api import urls as inventory_api
from qc.api import urls as qc_api

app_name = "api"

ROUTES = [*inventory_api.ROUTES, *qc_api.ROUTES]

router = DefaultRouter()
for prefix, viewset in ROUTES:
    router.register(prefix, viewset, basename=prefix)
    reports.DETAIL_ROUTES[viewset.queryset.model._meta.model_name] = prefix

urlpatterns = [*inventory_api.urlpatterns, *insight_api.urlpatterns, *qc_api.urlpatterns,
               *exchange_api.urlpatterns,
               path("", include(router.urls))]
