from django.contrib import admin
from django.contrib.auth import views as auth_views
from django.urls import include, path

urlpatterns = [
    path("admin/", admin.site.urls),
    path("accounts/login/", auth_views.LoginView.as_view(), name="login"),
    path("accounts/logout/", auth_views.LogoutView.as_view(), name="logout"),
    path("api/v1/", include("sersledger.api_urls")),
    path("", include("insight.urls")),
    path("", include("exchange.urls")),
    path("", include("bench.urls")),
]

# Under /api/ these answer the API's JSON error shape; elsewhere the pages' own 400/404/500
# templates (bench/templates), and a 403 page that names the role and who holds it.
handler400 = "inventory.api.errors.bad_request"
handler403 = "bench.views.errors.forbidden"
handler404 = "inventory.api.errors.page_not_found"
handler500 = "inventory.api.errors.server_error"
