"""API routes, mounted at /api/v1/ by config/urls.py."""

urlpatterns: list = []
