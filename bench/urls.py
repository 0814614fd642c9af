"""The pages, mounted at the site root by sersledger/urls.py; URL names as templates use them."""

from django.urls import include, path, re_path

from . import views

urlpatterns = [
    path("", views.home, name="home"),
    path("make/", include("bench.make.urls")),
    path("check/", views.readiness_check, name="readiness"),
    path("stock/", views.stock, name="stock"),
    path("trace/", views.trace, name="trace"),
    path("trace/<str:code>/graph/", views.trace_graph, name="trace_graph"),
    path("trace/<str:code>/report/", views.trace_report, name="trace_report"),
    path("trace/<str:code>/report.pdf", views.trace_report_pdf, name="trace_report_pdf"),
    path("trace/<str:code>/prov/", views.trace_prov, name="trace_prov"),
    path("labels/", views.label_sheet, name="label_sheet"),
    path("r/<str:code>/", views.record_detail, name="record"),
    path("r/<str:code>/label/", views.record_label, name="record_label"),
    path("account/api-tokens/", views.api_tokens, name="api_tokens"),
    path("review/", views.review, name="review"),
    path("limits/", views.limits, name="limits"),
    path("limits/qc/<int:analyte_id>/<str:stage>/", views.limit_edit_qc, name="limit_edit_qc"),
    path("limits/colloid/<str:metal>/", views.limit_edit_colloid, name="limit_edit_colloid"),
    # A general rule per kind of record, or (reagent lots) one per kind of reagent.
    re_path(r"^limits/shelf-life/(?P<record_kind>\w+)/(?:(?P<reagent_kind>\w+)/)?$",
            views.limit_edit_shelf_life, name="limit_edit_shelf_life"),
    path("qc/imports/<uuid:pk>/", views.qc_import_page, name="qc_import_page"),
    path("review/<str:code>/", views.review_sign, name="review_sign"),
    path("flags/<str:code>/resolve/", views.flag_resolve, name="flag_resolve"),
    path("plots/raman/<str:code>.svg", views.plot_raman, name="plot_raman"),
    path("plots/heatmap/<str:code>.svg", views.plot_heatmap, name="plot_heatmap"),
    path("plots/uvvis/<str:code>.svg", views.plot_uvvis, name="plot_uvvis"),
    path("plots/deposition/<str:code>.svg", views.plot_chronoamperogram,
         name="plot_chronoamperogram"),
    path("plots/control/<str:product_kind>/<str:metric>.svg", views.plot_control_chart,
         name="plot_control_chart"),
]
