"""`manage.py export_pack PRODUCT_ID REVISION OUT.zip`: the export pack of a signed revision (signoff.export_pack)."""

import sys
from pathlib import Path

from django.core.management.base import BaseCommand

from projectapp.signoff.export_pack import export_pack_build
from projectapp.signoff.models import SignedRecord


class Command(BaseCommand):
    help = "Write the export pack of a signed revision: signed PDF, design, measurements, evidence, checklist, manifest."

    def add_arguments(self, parser):
        parser.add_argument("product_id", type=int)
        parser.add_argument("revision", type=int, help="the revision number")
        parser.add_argument("out", help="the zip file to write")

    def handle(self, *args, **options):
        record = SignedRecord.objects.filter(revision__product_id=options["product_id"],
                                             revision__number=options["revision"]).first()
        if record is None:
            self.stderr.write(f"product {options['product_id']} revision {options['revision']}: no signed record")
            sys.exit(1)
        content = export_pack_build(record)
        Path(options["out"]).write_bytes(content)
        self.stdout.write(f"Wrote {options['out']} ({len(content)} bytes).")
