"""`manage.py seed_demo`: an invented company with one person per role and products that show the range.

Run by the README's start command. Safe to run again: the demo team and its products are created once;
each run gives the demo people fresh passwords and prints them (demo only, never for real use).
"""

import json
import secrets
from pathlib import Path

from django.contrib.auth import get_user_model
from django.core.management.base import BaseCommand
from django.db import transaction

from projectapp.designs import services
from projectapp.designs.models import Product
from projectapp.teams.models import Membership, Role, Team

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

# name, description, example design, measurement files, submit the first revision?
PRODUCTS = [
    ("Orchard soil probe", "Battery probe in orchards: one LTE-M antenna, a clean design.",
     "orchard-probe.json", [], True),
    ("Cold-chain tracker", "Cat 1 tracker with a single antenna and no operator approval.",
     None, [], False),
    ("Hive gateway", "Cat 1 gateway whose two antennas sit too close and co-polarized.",
     "hive-gateway.json", [], True),
    ("Pump monitor", "NB-IoT monitor with an internal antenna in a metal housing.",
     "pump-monitor.json", [], False),
    ("Field router", "Cat 4 router with a measured two-port S-parameter file.",
     "field-router.json", ["field-router-revA.s2p"], True),
]


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
        created = 0
        for name, description, example, measurement_files, submit in PRODUCTS:
            if Product.objects.filter(team=team, name=name).exists():
                continue
            product = services.product_create(team=team, name=name, description=description, user=author)
            draft = product.draft
            for file_name in measurement_files:
                services.measurement_add(revision=draft, name=file_name,
                                         content=(EXAMPLES / file_name).read_bytes(), user=author)
            text = json.dumps(cold_chain_tracker()) if example is None else (EXAMPLES / example).read_text()
            services.design_import(product=product, text=text, source=example or "cold-chain-tracker.json",
                                   user=author)
            if submit:
                services.revision_submit(revision=product.draft, user=author)
            created += 1

        if created == 0:
            self.stdout.write("Demo data was already loaded.")
        else:
            self.stdout.write(f"Loaded {created} demo products for {TEAM}.")
        self.stdout.write("")
        self.stdout.write("Demo accounts (demo only; the passwords change each time this runs):")
        for username, (password, team_name, roles) in passwords.items():
            self.stdout.write(f"  {username:<8} {password:<14} {roles:<28} {team_name}")
