"""Production settings refuse to start without their secrets; DATABASE_URL switches databases."""

import os
import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]


def _load_settings(module: str, **env) -> subprocess.CompletedProcess:
    base_env = {k: v for k, v in os.environ.items()
                if k not in {"SECRET_KEY", "ALLOWED_HOSTS", "DATABASE_URL"}}
    script = ("import django; django.setup(); from django.conf import settings; "
              "print(settings.DATABASES['default']['ENGINE'], settings.DEBUG)")
    return subprocess.run([sys.executable, "-c", script], cwd=ROOT, capture_output=True,
                          text=True, env={**base_env, "DJANGO_SETTINGS_MODULE": module, **env})


def test_production_refuses_to_start_without_secret_key():
    result = _load_settings("sersledger.settings.production", ALLOWED_HOSTS="lab.example")
    assert result.returncode != 0 and "SECRET_KEY" in result.stderr


def test_production_refuses_to_start_without_allowed_hosts():
    result = _load_settings("sersledger.settings.production", SECRET_KEY="x" * 60)
    assert result.returncode != 0 and "ALLOWED_HOSTS" in result.stderr


def test_production_starts_with_both_and_debug_off():
    result = _load_settings("sersledger.settings.production", SECRET_KEY="x" * 60,
                            ALLOWED_HOSTS="lab.example")
    assert result.returncode == 0, result.stderr
    assert result.stdout.split() == ["django.db.backends.sqlite3", "False"]


def test_database_url_switches_to_postgresql():
    result = _load_settings("sersledger.settings.development",
                            DATABASE_URL="postgres://lab@db.example:5432/sersledger")
    assert result.returncode == 0, result.stderr
    assert result.stdout.split() == ["django.db.backends.postgresql", "True"]
