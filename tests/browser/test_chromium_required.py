"""A missing Chromium fails the browser tests in CI and only skips them on a workstation."""

import pytest

from .conftest import require_chromium

MISSING = "/nonexistent/chromium"


def test_missing_chromium_fails_in_ci():
    with pytest.raises(pytest.fail.Exception, match="apt-get install -y chromium"):
        require_chromium(MISSING, ci=True)


def test_missing_chromium_is_skipped_outside_ci():
    with pytest.raises(pytest.skip.Exception, match="No Chromium"):
        require_chromium(MISSING, ci=False)


def test_ci_flag_comes_from_the_environment(monkeypatch):
    monkeypatch.setenv("CI", "true")
    with pytest.raises(pytest.fail.Exception):
        require_chromium(MISSING)
