"""`manage.py recount`: store every draft's counts again (designs.checklists.count_revision).

Lists read each revision's stored counts and never evaluate a design. A draft's counts are stored at each
save; run this after a rule-set upgrade (drafts follow the current rules; a submitted revision keeps the
checklist it was frozen with) or once an error that left a draft "not checked" is fixed.
"""

from django.core.management.base import BaseCommand

from projectapp.designs.checklists import count_revision
from projectapp.designs.models import Revision


class Command(BaseCommand):
    help = "Store every draft's finding counts again, from its checklist under the current rules."

    def handle(self, *args, **options):
        counted = failed = 0
        for revision in Revision.objects.filter(state=Revision.State.DRAFT).order_by("pk").iterator(chunk_size=100):
            count_revision(revision)
            counted += 1
            failed += revision.check_failed
        self.stdout.write(f"Counted {counted} draft(s)" + (f"; {failed} could not be checked (see the log)"
                                                             if failed else "") + ".")
