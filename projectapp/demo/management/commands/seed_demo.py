"""`manage.py seed_demo`: an invented company with one person per role and products that show the range.

Run by the README's start command. Safe to run again: the demo team and its products are created once;
each run gives the demo people fresh passwords and prints them (demo only, never for real use).
"""

import json
import secrets
from datetime import timedelta
from pathlib import Path

from django.contrib.auth import get_user_model
from django.core.management.base import BaseCommand
from django.db import transaction
from django.http import HttpRequest

from projectapp.designs import library_use, services
from projectapp.designs.models import Product
from projectapp.library import services as library
from projectapp.library.models import Entry
from projectapp.reviews.models import Disposition, ProcessStep, ReviewItem, StepStatus, TopicReviewer
from projectapp.reviews.services import (
    evidence_attach,
    process_step_update,
    review_item_comment,
    review_item_decide,
    revision_submit,
    revision_submit_with_earlier_checklist,
    topic_reviewers_set,
)
from projectapp.signoff.services import revision_sign
from projectapp.teams.models import Membership, Role, Team
from rules.findings import TOPICS

EXAMPLES = Path(__file__).resolve().parents[4] / "rules" / "examples"
TEAM = "Tallow Creek Instruments"
OTHER_TEAM = "Larchmere Metering"  # a second invented company: its people must never see Tallow Creek's data

PEOPLE = [
    # username, first, last, team, roles
    ("maren", "Maren", "Holt", TEAM, [Role.AUTHOR]),
    ("tobias", "Tobias", "Quell", TEAM, [Role.REVIEWER]),
    ("ines", "Ines", "Varga", TEAM, [Role.APPROVER]),
    ("oskar", "Oskar", "Lind", OTHER_TEAM, [Role.AUTHOR, Role.REVIEWER, Role.APPROVER]),
]

# name, description, example design, measurement files, what becomes of the first revision: "draft" (left for the
# author), "review" (submitted, in review), "signed earlier" (signed under an older rule set: EARLIER_CHECKLISTS)
PRODUCTS = [
    ("Orchard soil probe", "Battery probe in orchards: one LTE-M antenna, a clean design.",
     "orchard-probe.json", [], "review"),
    ("Cold-chain tracker", "Cat 1 tracker with a single antenna and no operator approval.",
     None, [], "draft"),
    ("Hive gateway", "Cat 1 gateway whose two antennas sit too close and co-polarized.",
     "hive-gateway.json", [], "review"),
    ("Pump monitor", "NB-IoT monitor with an internal antenna in a metal housing; a pilot signed under rule set 1.1.0.",
     "pump-monitor.json", [], "signed earlier"),
    ("Field router", "Cat 4 router with a measured two-port S-parameter file.",
     "field-router.json", ["field-router-revA.s2p"], "review"),
    ("Trail tracker", "Cat 1 tracker with a GNSS antenna; far-field patterns clear its close pair.",
     "trail-tracker.json", [], "draft"),
]


# The team's parts library: invented parts with demo-only figures (plausible, not from any datasheet).
# name, kind, description, values
PARTS = [
    ("TCI flex antenna F2", "antenna", "Internal flex antenna on the lid, 40 mm, U.FL pigtail",
     {"mounting": "internal", "ranges_mhz": [[698, 960], [1710, 2200]], "peak_gain_dbi": 2.0,
      "efficiency_pct": {"B2": 52, "B4": 50, "B12": 34, "B13": 36, "B66": 50}, "size_mm": [40, 8, 3],
      "polarization": [1, 0, 0]}),
    ("TCI whip antenna W7", "antenna", "External whip on an SMA bulkhead with 0.5 m of cable",
     {"mounting": "external", "ranges_mhz": [[698, 960], [1710, 2700]], "peak_gain_dbi": 3.0,
      "efficiency_pct": {"B3": 62, "B8": 55, "B20": 51}, "size_mm": [110, 12, 12], "polarization": [0, 0, 1],
      "cable_loss_db": 0.5}),
    ("TCI chip antenna C1", "antenna", "Ceramic chip antenna at the board edge, needs 30 mm of clearance",
     {"mounting": "internal", "ranges_mhz": [[824, 960], [1710, 2170]], "peak_gain_dbi": 0.5,
      "efficiency_pct": {"B2": 45, "B5": 35}, "size_mm": [10, 3, 1]}),
    ("TCI Cat 1 module C1", "module", "The team's Cat 1 module for North America",
     {"category": "cat-1", "bands": ["B2", "B4", "B5", "B12", "B13", "B14", "B66", "B71"], "rx_ports": 2,
      "gain_limits_dbi": {"B2": 6.0, "B4": 6.0, "B5": 5.0, "B12": 5.0, "B13": 5.0, "B66": 6.0}, "power_class": 3,
      "conducted_sensitivity_dbm": {"B2": -100.5, "B12": -101.0, "B13": -101.0}}),
    ("TCI LTE-M module M1", "module", "The team's LTE-M / NB-IoT module, half duplex",
     {"category": "cat-m1", "bands": ["B2", "B3", "B4", "B5", "B8", "B12", "B13", "B20", "B28", "B66"],
      "rx_ports": 1, "gain_limits_dbi": {"B2": 6.0, "B4": 6.0, "B12": 4.5, "B13": 4.5}, "power_class": 3}),
]
# The flex antenna's second version (a revised efficiency table) and third (its far-field pattern, measured on the
# cold-chain tracker's lid): the tracker's draft, filled from the first, is offered both.
FLEX_V2_EFFICIENCY = {"B2": 50, "B4": 49, "B12": 31, "B13": 33, "B66": 48}
# Synthetic like the trail tracker's patterns: a short dipole along the part's axis at the tracker's feed, with the
# version-2 efficiency of each band (tests/web/test_library_far_field.py recomputes it).
FLEX_PATTERN = "tci-flex-f2-cold-chain.csv"


# Checklists an earlier release of Earshot froze, exactly as its engine wrote them, so that the demo shows a signed
# revision the current rule set judges differently (the team's rule-set upgrade page). Made with that release's
# own engine, rule set 1.1.0 (commit 5dd07de, the last before rule set 2.0.0):
#   git worktree add /tmp/rs1 5dd07de && cd /tmp/rs1 && manage.py evaluate rules/examples/pump-monitor.json --format json
EARLIER = Path(__file__).resolve().parents[2] / "earlier"
EARLIER_CHECKLISTS = {"Pump monitor": "pump-monitor-ruleset-1.1.0.json"}
# The pilot's review, as the demo people settled it (invented, like the company).
PILOT_WAIVER = ("Pilot of 20 units on above-ground pumps, read out weekly by the field team; the production lid "
                "gets a polymer window over the antenna (design revision 2). Approved for the pilot only.")
PILOT_NOTE = ("Drop-test report for the window's gasket is attached. @ines the waiver is yours: pilot only, the "
              "window goes into design revision 2.")
PILOT_ATTACHMENT = ("pilot-window-plan.txt", b"Tallow Creek Instruments - pump monitor pilot (invented demo document)\n"
                    b"20 units, above-ground pumps, weekly read-out. Production lid: polymer window over ANT1.\n")


def sign_earlier_pilot(product, evaluation: dict, *, users, passwords) -> None:
    """The pump monitor's first revision as a team settled and signed it under rule set 1.1.0: the metal-housing
    blocker waived by the approver for the pilot, the warnings answered, a comment with an attachment, the steps
    outside the team planned, and the three signatures given (each checked against the person's password)."""
    author, reviewer, approver = users["maren"], users["tobias"], users["ines"]
    revision = revision_submit_with_earlier_checklist(revision=product.draft, evaluation=evaluation, user=author)
    for item in revision.review_items.filter(kind=ReviewItem.Kind.RAISED, process_step__isnull=True).order_by("id"):
        if item.severity == "blocker":
            review_item_comment(item=item, user=reviewer, text=PILOT_NOTE)
            evidence_attach(user=reviewer, name=PILOT_ATTACHMENT[0], content=PILOT_ATTACHMENT[1], item=item)
            review_item_decide(item=item, user=approver, disposition=Disposition.WAIVED, justification=PILOT_WAIVER,
                               expected_version=item.version)
        elif item.severity == "warning":
            review_item_decide(item=item, user=reviewer, disposition=Disposition.CHANGE,
                               justification="The polymer window of revision 2 answers this too.",
                               expected_version=item.version)
    submitted = revision.submitted_at.date()
    for days, step in enumerate(ProcessStep.objects.filter(revision=revision).order_by("id"), start=1):
        process_step_update(step=step, user=approver, owner=approver, planned_on=submitted + timedelta(weeks=4 * days),
                            status=StepStatus.PLANNED, reference="", expected_version=step.version)
    request = HttpRequest()  # a password check outside a view: axes counts it per user name and address
    request.method, request.META["REMOTE_ADDR"] = "POST", "127.0.0.1"
    for person, role in ((author, "author"), (reviewer, "reviewer"), (approver, "approver")):
        revision_sign(revision=revision, user=person, role=role, password=passwords[person.username][0],
                      request=request)


def seed_library(team, *, author, reviewer) -> dict[str, Entry]:
    """The team's parts, once: if the library holds any entry, it is left as it is."""
    if Entry.objects.filter(team=team).exists():
        return {}
    return {name: library.entry_create(team=team, kind=kind, name=name, description=description,
                                       values=values, user=author)
            for name, kind, description, values in PARTS}


def fill_cold_chain_tracker(product, parts: dict[str, Entry], *, author, reviewer) -> None:
    """The tracker's draft takes its antenna and modem from the library; then the antenna's entry gets a new
    version, which the draft shows as a change to review."""
    draft = product.draft
    document = library_use.fill_antenna(draft.document, 0, parts["TCI flex antenna F2"])
    document = library_use.fill_modem(document, parts["TCI Cat 1 module C1"])
    services.draft_save_document(revision=draft, document=document, user=author)
    flex = parts["TCI flex antenna F2"]
    flex = library.entry_update(entry=flex, values={**flex.values, "efficiency_pct": FLEX_V2_EFFICIENCY},
                                description=flex.description, read_version=flex.version, user=reviewer)
    library.entry_file_add(entry=flex, name=FLEX_PATTERN, content=(EXAMPLES / FLEX_PATTERN).read_bytes(),
                           absolute=True, read_version=flex.version, user=reviewer)


def cold_chain_tracker() -> dict:
    """The orchard probe's layout turned into a Cat 1 design with one antenna."""
    document = json.loads((EXAMPLES / "orchard-probe.json").read_text())
    document["product"] = {"name": "Tallow Creek cold-chain tracker", "revision": "P1"}
    document["modem"] = {"category": "cat-1", "bands": ["B2", "B4", "B12", "B13", "B66"], "rx_ports": 2}
    document["deployment"] = {"environment": "vehicle", "required_dl_kbps": 300, "required_ul_kbps": 150,
                              "body_distance_mm": 400}
    document["antennas"][0]["ranges_mhz"] = [[698, 960], [1710, 2200]]
    return document


class Command(BaseCommand):
    help = "Load the invented demo company, its people and products (idempotent); print demo passwords."

    def add_arguments(self, parser):
        parser.add_argument("--password", help="use this password for every demo person instead of random ones")

    @transaction.atomic
    def handle(self, *args, **options):
        users = {}
        passwords = {}
        User = get_user_model()
        for username, first, last, team_name, roles in PEOPLE:
            team, _ = Team.objects.get_or_create(name=team_name)
            user, _ = User.objects.get_or_create(username=username, defaults={"first_name": first, "last_name": last})
            password = options["password"] or secrets.token_urlsafe(9)
            user.set_password(password)
            user.save()
            for role in roles:
                Membership.objects.get_or_create(team=team, user=user, role=role)
            users[username] = user
            passwords[username] = (password, team_name, ", ".join(role.value for role in roles))

        team = Team.objects.get(name=TEAM)
        author = users["maren"]
        parts = seed_library(team, author=author, reviewer=users["tobias"])
        if not TopicReviewer.objects.filter(team=team).exists():  # tobias reviews the RF topics, ines the approvals
            topic_reviewers_set(team=team, user=users["ines"], reviewers={
                topic: users["ines"] if topic in ("certification", "rf-exposure") else users["tobias"]
                for topic in TOPICS})
        created = 0
        for name, description, example, measurement_files, becomes in PRODUCTS:
            if Product.objects.filter(team=team, name=name).exists():
                continue
            product = services.product_create(team=team, name=name, description=description, user=author)
            draft = product.draft
            for file_name in measurement_files:
                services.measurement_add(revision=draft, name=file_name,
                                         content=(EXAMPLES / file_name).read_bytes(), user=author)
            document = cold_chain_tracker() if example is None else json.loads((EXAMPLES / example).read_text())
            # A far-field pattern is kept against the antenna it belongs to: the design goes in first, then each
            # pattern with its entry (services.pattern_add checks both).
            patterns = [entry for entry in document.get("measurements", []) if entry.get("kind") == "far-field"]
            if patterns:
                document["measurements"] = [entry for entry in document["measurements"] if entry not in patterns]
                if not document["measurements"]:
                    del document["measurements"]
            services.design_import(product=product, text=json.dumps(document),
                                   source=example or "cold-chain-tracker.json", user=author)
            for entry in patterns:
                services.pattern_add(revision=product.draft, name=entry["file"], antenna=entry["antenna"],
                                     content=(EXAMPLES / entry["file"]).read_bytes(),
                                     absolute=entry.get("absolute", False), environment=entry.get("environment"),
                                     user=author)
            if becomes == "review":
                revision_submit(revision=product.draft, user=author)
            elif becomes == "signed earlier":
                evaluation = json.loads((EARLIER / EARLIER_CHECKLISTS[name]).read_text())
                sign_earlier_pilot(product, evaluation, users=users, passwords=passwords)
            elif example is None and parts:
                fill_cold_chain_tracker(product, parts, author=author, reviewer=users["tobias"])
            created += 1

        if created == 0:
            self.stdout.write("Demo data was already loaded.")
        else:
            self.stdout.write(f"Loaded {created} demo products for {TEAM}.")
        self.stdout.write("")
        self.stdout.write("Demo accounts (demo only; the passwords change each time this runs):")
        for username, (password, team_name, roles) in passwords.items():
            self.stdout.write(f"  {username:<8} {password:<14} {roles:<28} {team_name}")
