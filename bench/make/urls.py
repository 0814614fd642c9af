"""/make/: one URL per logged step (url name = step slug), plus the result page."""

from django.urls import path

from . import views
from .steps import STEPS

app_name = "make"

urlpatterns = [
    path("", views.index, name="index"),
    path("done/<str:code>/", views.result, name="result"),
    *[path(f"{step.slug}/", views.step, {"slug": step.slug}, name=step.slug) for step in STEPS],
]
