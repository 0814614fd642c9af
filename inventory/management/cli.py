"""The one base for commands that record something, and the acting user they name.

Every import command records its write under a named person (``--user``, required), prints
either its summary for a person or one JSON object (``--json``: the same object the API
returns), and answers a refusal with the service's message and exit code 1, never a
traceback: ``CommandError`` is Django's way to print a message to stderr and exit non-zero.
The message is ``inventory.errors.refusal_sentences``, the same items the API and pages show.
"""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

from django.contrib.auth import get_user_model
from django.core.exceptions import PermissionDenied, ValidationError
from django.core.management.base import BaseCommand, CommandError

from inventory.codes import RecordNotFound
from inventory.errors import refusal_sentences
from inventory.physics.errors import AnalysisInputError
from inventory.services.toolkit import RawUpload

__all__ = ["RecordingCommand", "user_for_command"]


def user_for_command(username: str):
    """The user named by ``--user``; an unknown name is refused before anything is read."""
    user = get_user_model().objects.filter(username=username).first()
    if user is None:
        raise CommandError(f"No user is called '{username}'.")
    return user


class RecordingCommand(BaseCommand):
    """Base for commands that write: subclasses define ``add_inputs``, ``record`` and ``show``."""

    def add_arguments(self, parser) -> None:
        self.add_inputs(parser)
        parser.add_argument("--user", required=True,
                            help="username the write is recorded under (who did it)")
        parser.add_argument("--json", action="store_true", help="print one JSON object")

    def add_inputs(self, parser) -> None:
        """The command's own arguments."""

    def record(self, *, actor, options: dict[str, Any]) -> dict:
        """Call one service with ``actor``; return the summary object to print."""
        raise NotImplementedError

    def show(self, summary: dict) -> None:
        """Print ``summary`` for a person."""
        raise NotImplementedError

    def handle(self, *args, **options) -> None:
        actor = user_for_command(options["user"])
        try:
            summary = self.record(actor=actor, options=options)
        except ValidationError as error:
            raise CommandError(f"Refused, nothing saved. {refusal_sentences(error)}") from None
        except AnalysisInputError as error:
            # A computed figure the analysis refuses (e.g. an absorbance made infinite by a
            # huge dilution); the service's transaction rolled back.
            raise CommandError(f"Refused, nothing saved. {error}") from None
        except PermissionDenied as error:  # the --user lacks the role (the message names it)
            raise CommandError(f"Refused, nothing saved. {error}") from None
        except RecordNotFound as error:
            raise CommandError(str(error)) from None
        if options["json"]:
            self.stdout.write(json.dumps(summary, indent=2))
        else:
            self.show(summary)

    @staticmethod
    def read_file(path: str) -> tuple[str, bytes]:
        """The file's name and bytes, or a refusal naming it."""
        try:
            return Path(path).name, Path(path).read_bytes()
        except OSError as error:
            raise CommandError(f"Cannot read {path}: {error.strerror or error}.") from None

    @staticmethod
    def read_upload(path: str) -> RawUpload:
        """The file as the services take a big one (on disk, hashed in chunks), or a refusal."""
        try:
            return RawUpload.of_path(Path(path).name, path)
        except OSError as error:
            raise CommandError(f"Cannot read {path}: {error.strerror or error}.") from None

    @staticmethod
    def get_record(model, code: str, what: str):
        """The ``model`` record with ``code`` (any case), or a refusal naming the ID."""
        record = model.objects.filter(code=code.strip().upper()).first()
        if record is None:
            raise CommandError(f"No {what} has the ID '{code}'.")
        return record
