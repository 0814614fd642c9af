"""Pages of the exchange app, mounted at the site root (namespace ``exchange``)."""

from django.urls import path

from . import views

app_name = "exchange"

urlpatterns = [
    path("sheets/", views.index, name="index"),
    path("sheets/upload/", views.upload, name="upload"),
    path("sheets/<int:upload_id>/map/", views.save_mapping, name="map"),
    path("sheets/<int:upload_id>/confirm/", views.confirm, name="confirm"),
    path("sheets/template/<str:kind>.<str:file_format>", views.template_download,
         name="template"),
    path("sheets/export/<str:kind>.<str:file_format>", views.sheet_download, name="export"),
    path("notifications/", views.notifications, name="notifications"),
    path("calendar/<str:secret>.ics", views.calendar, name="calendar"),
]
