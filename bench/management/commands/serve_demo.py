"""serve_demo: migrate, load the demo scenario, and serve it on 127.0.0.1:8000."""

from django.conf import settings
from django.core.management import call_command
from django.core.management.base import BaseCommand, CommandError


class Command(BaseCommand):
    help = "Set up the embedded database, load the invented demo and run the development server."

    def add_arguments(self, parser):
        parser.add_argument("--addrport", default="127.0.0.1:8000")
        parser.add_argument("--no-serve", action="store_true", help="set up only")

    def handle(self, *args, addrport, no_serve, **options):
        if not settings.DEBUG:
            raise CommandError("serve_demo is for the development settings only.")
        call_command("migrate", interactive=False, verbosity=0)
        call_command("load_demo")
        if not no_serve:
            call_command("runserver", addrport, use_reloader=False)
