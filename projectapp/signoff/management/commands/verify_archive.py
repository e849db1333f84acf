"""`manage.py verify_archive OUT.zip`: check every PDF against the manifest and the archive; exit 1 on a mismatch."""

import sys
from pathlib import Path

from django.core.management.base import BaseCommand

from projectapp.signoff.archive_files import verify_archive


class Command(BaseCommand):
    help = "Verify an exported archive zip: each PDF's SHA-256 against its manifest entry and the database."

    def add_arguments(self, parser):
        parser.add_argument("archive", help="the zip file written by export_archive")
        parser.add_argument("--offline", action="store_true", help="check the zip against its manifest only")

    def handle(self, *args, **options):
        result = verify_archive(Path(options["archive"]), against_database=not options["offline"])
        for problem in result.problems:
            self.stderr.write(problem)
        if result.problems:
            self.stderr.write(f"{len(result.problems)} problem(s) in {result.checked} record(s) checked.")
            sys.exit(1)
        self.stdout.write(f"All {result.checked} record(s) verify.")
