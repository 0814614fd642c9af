from django.urls import path

from . import views

urlpatterns = [
    path("", views.home, name="home"),
    path("check/", views.readiness_check, name="readiness"),
    path("r/<str:code>/", views.record_detail, name="record"),
]
