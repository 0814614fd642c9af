"""Pages of the qc app (QC review, uploads), mounted at the site root by config/urls.py."""

urlpatterns: list = []
