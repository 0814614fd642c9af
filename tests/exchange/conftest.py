"""Fixtures of the exchange tests."""

from __future__ import annotations

import pytest
from django.test import Client


@pytest.fixture
def client_as(maker):
    """A browser-less client signed in as the maker (sign-in itself is tested elsewhere)."""
    client = Client()
    client.force_login(maker)
    return client
