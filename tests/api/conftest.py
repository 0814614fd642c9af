"""API fixtures: clients per role, and a lab built through the services (never the API under test).

The Raman files are the invented demo files in fixtures/raman (fixtures/raman/generate.py
gives their acquisition settings and what each should show); the chronoamperograms are the
invented files in fixtures/chronoamperograms (made for h/D 0.50 and 0.30, Au(I), 600 nm
spheres, 1.00 cm²).
"""

from __future__ import annotations

from pathlib import Path

import pytest
from django.core.files.uploadedfile import SimpleUploadedFile
from knox.models import AuthToken
from rest_framework.test import APIClient

from tests.qc_lab import FIXTURES, MAP_SETTINGS, RAMAN, QcLab  # noqa: F401  (used by the API tests)

CHRONO = FIXTURES / "chronoamperograms"
UVVIS = FIXTURES / "uvvis"


def upload(path: Path) -> SimpleUploadedFile:
    """A fixture file as a multipart upload."""
    return SimpleUploadedFile(path.name, path.read_bytes())


def client_for(user) -> APIClient:
    """A client authenticated the way scripts are: with the user's token."""
    client = APIClient()
    if user is not None:
        _stored, token = AuthToken.objects.create(user=user)
        client.credentials(HTTP_AUTHORIZATION=f"Token {token}")
    return client


@pytest.fixture
def clients(viewer, maker, reviewer, administrator):
    return {"anonymous": APIClient(), "viewer": client_for(viewer), "maker": client_for(maker),
            "reviewer": client_for(reviewer), "administrator": client_for(administrator)}


@pytest.fixture
def qc_lab(chain, administrator):
    return QcLab(chain, administrator)
