from django.urls import include, path

from . import views

urlpatterns = [
    path("", views.home, name="home"),
    path("make/", include("inventory.make.urls")),
    path("check/", views.readiness_check, name="readiness"),
    path("stock/", views.stock, name="stock"),
    path("trace/", views.trace, name="trace"),
    path("trace/<str:code>/graph/", views.trace_graph, name="trace_graph"),
    path("trace/<str:code>/report/", views.trace_report, name="trace_report"),
    path("trace/<str:code>/prov/", views.trace_prov, name="trace_prov"),
    path("labels/", views.label_sheet, name="label_sheet"),
    path("r/<str:code>/", views.record_detail, name="record"),
    path("r/<str:code>/label/", views.record_label, name="record_label"),
]
