"""`manage.py verify_archive OUT.zip`: check every PDF against the manifest and the archive.

Exit 0: every record verifies; 1: a record doesn't (changed, unknown, missing, or none at all); 2: the file
is not a readable Earshot archive or was refused as unsafe to read (archive_files.py says what is refused).
"""

import sys
from pathlib import Path

from django.core.management.base import BaseCommand

from projectapp.signoff.archive_files import verify_archive
from rules.terminal_text import printable


class Command(BaseCommand):
    help = "Verify an exported archive zip: each PDF's SHA-256 against its manifest entry and the database."

    def add_arguments(self, parser):
        parser.add_argument("archive", help="the zip file written by export_archive")
        parser.add_argument("--offline", action="store_true", help="check the zip against its manifest only")

    def handle(self, *args, **options):
        result = verify_archive(Path(options["archive"]), against_database=not options["offline"])
        for problem in result.problems:
            self.stderr.write(printable(problem))  # names come from the zip: nothing in them may steer the terminal
        if result.refused:
            self.stderr.write("Not verified: the file is not a readable Earshot archive.")
            sys.exit(2)
        if result.problems:
            self.stderr.write(f"{result.problem_count} problem(s) in {result.checked} record(s) checked.")
            sys.exit(1)
        self.stdout.write(f"All {result.checked} record(s) verify.")
