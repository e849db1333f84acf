"""`manage.py reevaluate [--team NAME]`: what the current rule set would raise on every frozen revision.

Prints, per submitted or signed revision whose stored checklist came from another rule set (or that the
current rules judge differently), the new, gone and changed findings (designs.upgrades); nothing stored
changes. Exit status, for a team's CI: 1 when a signed revision would now raise a blocker, 0 otherwise,
2 on a usage error (an unknown team).
"""

import sys

from django.core.management.base import BaseCommand

from projectapp.designs.models import Revision
from projectapp.designs.upgrades import affected_revisions
from projectapp.teams.models import Team
from rules.registry import RULESET_VERSION
from rules.terminal_text import printable

EXIT_USAGE = 2


class Command(BaseCommand):
    help = "Compare every frozen revision's stored checklist with what the current rule set would raise."

    def add_arguments(self, parser):
        parser.add_argument("--team", help="only this team's products (the team's name)")

    def handle(self, *args, **options):
        revisions = Revision.objects.all()
        if options["team"] is not None:
            team = Team.objects.filter(name=options["team"]).first()
            if team is None:
                self.stderr.write(f"--team: no team named {printable(options['team'])!r}; expected a team's name.")
                sys.exit(EXIT_USAGE)
            revisions = revisions.filter(product__team=team)
        rows = affected_revisions(revisions)
        self.stdout.write(f"Current rule set {RULESET_VERSION}: {len(rows)} revision(s) would be judged differently.")
        signed_blockers = 0
        for row in rows:
            revision, comparison = row.revision, row.comparison
            would_block = revision.is_signed and comparison.new_blockers > 0
            signed_blockers += would_block
            self.stdout.write(
                f"{printable(revision.product.team.name)} / {printable(revision.product.name)} revision "
                f"{revision.number} ({revision.get_state_display().lower()}, rule set "
                f"{printable(comparison.stored_ruleset) or 'unknown'}): {len(comparison.new)} new, "
                f"{len(comparison.gone)} gone, {len(comparison.changed)} changed"
                + (f"; SIGNED, would now raise {comparison.new_blockers} blocker(s)" if would_block else ""))
            if comparison.error:
                self.stdout.write(f"  {printable(comparison.error)}")
            for label, findings in (("new", comparison.new), ("gone", comparison.gone),
                                    ("changed", [change["after"] for change in comparison.changed])):
                for finding in findings:
                    self.stdout.write(f"  {label} {printable(str(finding.get('id')))} "
                                      f"[{printable(str(finding.get('severity')))}] "
                                      f"{printable(str(finding.get('title')))}")
        if signed_blockers:
            self.stdout.write(f"{signed_blockers} signed revision(s) would now raise a blocker.")
            sys.exit(1)
