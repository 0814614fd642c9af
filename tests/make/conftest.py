"""Fixtures for the Make pages: a signed-in maker and a lab ready for Raman QC."""

from __future__ import annotations

import pytest

from .builders import QcLab


@pytest.fixture
def maker_client(client, chain):
    client.force_login(chain.maker)
    return client


@pytest.fixture
def qc_lab(chain, administrator):
    return QcLab(chain, administrator)
