"""Pages of the qc app (QC review, plots), mounted at the site root by config/urls.py."""

from django.urls import path

from . import views

urlpatterns = [
    path("review/", views.review, name="review"),
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
