"""Build the wheel, install it (not editable) into a fresh venv, and request every page.

An editable install reads templates and static files from the source tree, so it cannot
show that they travel in the wheel.  This builds the wheel, installs it with the server
extra into a new virtual environment outside the repository, then, from a directory with no
source in it, runs the production settings on a new SQLite database with the demo loaded
(its invented instrument files read from the checkout's fixtures/, which are test data):
collectstatic (whitenoise serves the result), then signs in and asks for each page, the API
docs and a static file.  Any answer other than 200 fails the check.

    python .ci/check_wheel.py            # exit 0 when every page answers 200
    python .ci/check_wheel.py /tmp/wv    # keep (and reuse) the venv there: only the wheel
                                         # is reinstalled on the next run
"""

from __future__ import annotations

import os
import subprocess
import sys
import tempfile
import venv
from pathlib import Path

REPO = Path(__file__).resolve().parents[1]

# Run inside the installed package's interpreter, from a directory without the sources.
PAGES_SCRIPT = r'''
import django, os, sys
django.setup()
from django.core.management import call_command
call_command("migrate", verbosity=0)
call_command("load_demo", verbosity=0)
call_command("collectstatic", "--noinput", verbosity=0)
from django.contrib.auth import get_user_model
from django.test import Client
from inventory.models import DepositionRun, Substrate
import bench, inventory
assert "site-packages" in bench.__file__, bench.__file__  # the wheel, not the source tree
client = Client(HTTP_HOST="sersledger.example")
client.force_login(get_user_model().objects.get(username="rin.okafor"))
substrate = Substrate.objects.order_by("code").first().code
run = DepositionRun.objects.order_by("code").first().code
pages = ["/", "/check/", f"/check/?code={substrate}", "/stock/", "/review/", "/make/",
         f"/trace/?code={substrate}", f"/trace/{substrate}/report/", f"/r/{substrate}/",
         f"/r/{run}/", f"/r/{substrate}/label/", "/insight/", "/sheets/", "/notifications/",
         "/accounts/login/", "/api/v1/docs/", "/static/admin/css/base.css"]
failed = []
for page in pages:
    response = client.get(page, secure=True)  # as behind the TLS proxy
    print(response.status_code, page)
    if response.status_code != 200:
        failed.append(page)
sys.exit(f"pages that did not answer 200: {failed}" if failed else 0)
'''


def run(*command: str, **kwargs) -> None:
    print("+", " ".join(c if "\n" not in c else "<script>" for c in command), flush=True)
    subprocess.run(command, check=True, **kwargs)


def main() -> int:
    with tempfile.TemporaryDirectory(prefix="sersledger-wheel-") as scratch:
        scratch_path = Path(scratch)
        wheels = scratch_path / "wheels"
        run(sys.executable, "-m", "pip", "wheel", "--quiet", "--no-deps", "--wheel-dir",
            str(wheels), str(REPO))
        wheel = next(wheels.glob("sersledger-*.whl"))
        env_dir = Path(sys.argv[1]) if len(sys.argv) > 1 else scratch_path / "venv"
        python = str(env_dir / "bin" / "python")
        constraints = REPO / "requirements" / "constraints.txt"
        if not (env_dir / "bin" / "python").exists():
            venv.EnvBuilder(with_pip=True).create(env_dir)
        else:  # a kept venv: replace the previous build of the project only
            run(python, "-m", "pip", "uninstall", "--quiet", "--yes", "sersledger")
        run(python, "-m", "pip", "install", "--quiet", "-c", str(constraints),
            f"{wheel}[server]")
        work = scratch_path / "site"
        (work / "data").mkdir(parents=True)
        environment = {
            **os.environ,
            "DJANGO_SETTINGS_MODULE": "sersledger.settings.production",
            "SECRET_KEY": "wheel-check-" + os.urandom(24).hex(),
            "ALLOWED_HOSTS": "sersledger.example",
            "SERSLEDGER_DATA_DIR": str(work / "data"),
            # The demo's invented instrument files are test data, not part of the wheel.
            "SERSLEDGER_DEMO_FILES": str(REPO / "fixtures"),
            "PYTHONPATH": "",
        }
        environment.pop("DATABASE_URL", None)
        run(python, "-c", PAGES_SCRIPT, cwd=work, env=environment)
    return 0


if __name__ == "__main__":
    sys.exit(main())
