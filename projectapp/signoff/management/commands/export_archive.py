"""`manage.py export_archive OUT.zip`: every signed PDF and a manifest of hashes, signatures and revisions."""

from pathlib import Path

from django.core.management.base import BaseCommand, CommandError

from projectapp.signoff.archive_files import export_archive


class Command(BaseCommand):
    help = "Export the archive of signed records (PDFs + manifest.json) to a zip file."

    def add_arguments(self, parser):
        parser.add_argument("out", help="the zip file to write")

    def handle(self, *args, **options):
        path = Path(options["out"])
        try:
            count = export_archive(path)
        except OSError as error:
            raise CommandError(f"{path}: cannot write: {error.strerror or error}") from error
        self.stdout.write(f"Wrote {count} signed record(s) to {path}")
