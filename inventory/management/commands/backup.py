"""backup FOLDER / backup --restore FOLDER: consistent snapshot of the database and files."""

from pathlib import Path

from django.core.management.base import BaseCommand, CommandError

from inventory.backup import BackupError, backup_restore, backup_write


class Command(BaseCommand):
    help = "Write a consistent backup (SQLite online backup + uploaded files), or restore one."

    def add_arguments(self, parser):
        parser.add_argument("folder", type=Path)
        parser.add_argument("--restore", action="store_true",
                            help="verify and restore the backup in FOLDER (replaces current data)")

    def handle(self, *args, folder, restore, **options):
        try:
            summary = backup_restore(folder) if restore else backup_write(folder)
        except BackupError as error:
            raise CommandError(str(error)) from None
        verb = "Restored" if restore else "Wrote"
        self.stdout.write(f"{verb} {summary.folder}: database {summary.database_bytes} bytes, "
                          f"{summary.files} uploaded files (digests verified).")
        if summary.left_out:
            self.stdout.write(f"Left out {len(summary.left_out)} backed-up files that no "
                              f"record refers to: {', '.join(summary.left_out)}.")
