"""Server errors are kept: production settings log each one, with its traceback and the
request's id, to stderr and to a rotating file under the data folder, and mail the ADMINS."""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]

# Runs under the production settings: a page that fails, requested through the whole stack.
SCRIPT = """
import django
django.setup()
from unittest import mock
from django.contrib.auth.views import LoginView
from django.core import mail
from django.test import Client

def broken(self, request, *args, **kwargs):
    raise RuntimeError("boom-for-the-log-test")

with mock.patch.object(LoginView, "get", broken):
    response = Client(raise_request_exception=False).get("/accounts/login/")
outbox = getattr(mail, "outbox", [])  # made by the locmem backend when it first sends
print(response.status_code, response.headers.get("X-Request-ID", "-"), len(outbox))
if outbox:
    print(outbox[0].to, outbox[0].subject)
"""


def _run_production(tmp_path, **env):
    base = {k: v for k, v in os.environ.items() if k not in {"DATABASE_URL", "ADMINS"}}
    env = base | {"DJANGO_SETTINGS_MODULE": "sersledger.settings.production",
                  "SECRET_KEY": "x" * 60, "ALLOWED_HOSTS": "testserver",
                  "SECURE_SSL_REDIRECT": "false", "SERSLEDGER_DATA_DIR": str(tmp_path),
                  "EMAIL_BACKEND": "django.core.mail.backends.locmem.EmailBackend"} | env
    return subprocess.run([sys.executable, "-c", SCRIPT], cwd=ROOT, capture_output=True,
                          text=True, env=env, timeout=120, check=False)


def test_a_server_error_is_logged_with_its_request_id_to_stderr_and_the_file(tmp_path):
    run = _run_production(tmp_path)
    assert run.returncode == 0, run.stderr[-2000:]
    status, request_id, mails = run.stdout.split()[:3]
    assert status == "500" and len(request_id) >= 16 and mails == "0"
    log_file = tmp_path / "logs" / "sersledger.log"
    for text in (run.stderr, log_file.read_text()):
        (line,) = [line for line in text.splitlines() if "Internal Server Error" in line]
        assert request_id in line and "ERROR" in line
        assert "Traceback" in text and "RuntimeError: boom-for-the-log-test" in text


def test_server_errors_are_mailed_to_the_admins_named_in_the_environment(tmp_path):
    run = _run_production(tmp_path, ADMINS="Ada Quality <qa@lab.example>, ops@lab.example")
    assert run.returncode == 0, run.stderr[-2000:]
    first, second = run.stdout.splitlines()[:2]
    assert first.split()[2] == "1"
    assert "qa@lab.example" in second and "ops@lab.example" in second
    assert "boom-for-the-log-test" in second or "Internal Server Error" in second
