"""serve_demo: migrate, load the demo scenario, and serve it on 127.0.0.1:8000 with a worker.

    manage.py serve_demo                          # http://127.0.0.1:8000
    manage.py serve_demo --port 8080              # http://127.0.0.1:8080
    manage.py serve_demo --addrport 0.0.0.0:8000  # reachable from a tablet on the lab network
    manage.py serve_demo --no-serve               # set up the database only

The pages are served with DEBUG off, as on a lab server, so a wrong address or a refused
action shows the project's own 404 and 403 pages rather than Django's debug page.
"""

import os
import subprocess
import sys

from django.conf import settings
from django.core.management import call_command
from django.core.management.base import BaseCommand, CommandError


class Command(BaseCommand):
    help = ("Set up the embedded database, load the invented demo and run the development "
            "server, with one background worker for big QC files (the task database backend).")

    def add_arguments(self, parser):
        where = parser.add_mutually_exclusive_group()
        where.add_argument("--addrport", help="address:port (default 127.0.0.1:8000)")
        where.add_argument("--port", type=int, help="port on 127.0.0.1 (default 8000)")
        parser.add_argument("--no-serve", action="store_true", help="set up only")
        parser.add_argument("--no-worker", action="store_true",
                            help="do not start the background worker")

    def handle(self, *args, addrport, port, no_serve, no_worker, **options):
        if not settings.DEBUG:
            raise CommandError("serve_demo is for the development settings only.")
        call_command("migrate", interactive=False, verbosity=0)
        call_command("load_demo")
        if no_serve:
            return
        addrport = addrport or f"127.0.0.1:{port or 8000}"
        worker = None if no_worker else self._start_worker()
        settings.DEBUG = False  # the project's own error pages; --insecure keeps static files
        try:
            call_command("runserver", addrport, use_reloader=False, insecure_serving=True)
        finally:
            if worker is not None:
                worker.terminate()
                worker.wait(timeout=10)

    def _start_worker(self) -> subprocess.Popen:
        """``db_worker`` in its own process, after handing it any import left half-done."""
        from qc.services import qc_imports_resume

        resumed = qc_imports_resume()
        environment = dict(os.environ, DJANGO_SETTINGS_MODULE=os.environ.get(
            "DJANGO_SETTINGS_MODULE", "sersledger.settings.development"))
        worker = subprocess.Popen([sys.executable, "-m", "django", "db_worker",
                                   "--interval", "0.5"], env=environment)
        self.stdout.write(f"Background worker started (pid {worker.pid}); "
                          f"{resumed} waiting import(s) handed to it.")
        return worker
