"""Browsable API docs that work offline: Swagger UI from drf-spectacular-sidecar's files.

The sidecar package ships the Swagger UI build; ``docs_asset`` serves those files under
/api/v1/docs/assets/ so neither a CDN nor the staticfiles app is needed (the schema and
these docs hold no records and need no sign-in; every operation they describe does).
"""

from __future__ import annotations

from pathlib import Path

import drf_spectacular_sidecar
from django.core.exceptions import SuspiciousFileOperation
from django.http import Http404
from django.views.static import serve

ASSETS = Path(drf_spectacular_sidecar.__file__).resolve().parent / "static" / \
    "drf_spectacular_sidecar"


def docs_asset(request, path: str):
    """One file of the Swagger UI build; nothing outside ASSETS."""
    try:
        return serve(request, path, document_root=ASSETS)
    except SuspiciousFileOperation:
        raise Http404(path) from None
