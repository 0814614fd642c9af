"""API routes of the insight app (JSON), added to the one API router's URLs (namespace ``api``)
by sersledger/api_urls.py."""

from django.urls import path

from . import api

urlpatterns = [
    path("insight/summary/", api.InsightSummaryView.as_view(), name="insight-summary"),
    path("insight/table/", api.InsightTableView.as_view(), name="insight-table"),
    path("insight/trends/<str:setting>/", api.InsightTrendView.as_view(), name="insight-trend"),
]
