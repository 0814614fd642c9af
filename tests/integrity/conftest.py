"""The API's fixtures (clients per role, the QC lab) for the integrity tests."""

from tests.api.conftest import clients, qc_lab  # noqa: F401  (pytest fixtures)
