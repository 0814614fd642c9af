"""serve_demo: migrate, load the demo scenario, and serve it on 127.0.0.1:8000 with a worker."""

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
        parser.add_argument("--addrport", default="127.0.0.1:8000")
        parser.add_argument("--no-serve", action="store_true", help="set up only")
        parser.add_argument("--no-worker", action="store_true",
                            help="do not start the background worker")

    def handle(self, *args, addrport, no_serve, no_worker, **options):
        if not settings.DEBUG:
            raise CommandError("serve_demo is for the development settings only.")
        call_command("migrate", interactive=False, verbosity=0)
        call_command("load_demo")
        if no_serve:
            return
        worker = None if no_worker else self._start_worker()
        try:
            call_command("runserver", addrport, use_reloader=False)
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
