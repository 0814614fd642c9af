"""Fixtures of the exchange tests."""

from __future__ import annotations

import pytest
from django.test import Client

from tests.conftest import PASSWORDS


@pytest.fixture
def client_as(maker):
    """A browser-less client signed in as the maker."""
    client = Client()
    assert client.login(username="maker", password=PASSWORDS["maker"])
    return client
