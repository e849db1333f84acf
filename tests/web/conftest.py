"""Three people for every view test: a team member with the role, a member without it, an outsider
(author and reviewer are in tests/conftest.py, shared with the browser tests)."""

import json
from pathlib import Path

import pytest
from django.contrib.auth import get_user_model

from projectapp.designs import services
from projectapp.reviews.services import revision_submit
from projectapp.teams.models import Membership, Role, Team
from tests.django_isolation import empty_cache, fast_password_hashing, media_in_tmp  # noqa: F401 (autouse)

EXAMPLES = Path(__file__).parents[2] / "rules" / "examples"
PASSWORD = "test-pass-7Qx!"


def make_user(username: str, team: Team, *roles: str):
    user = get_user_model().objects.create_user(username=username, password=PASSWORD)
    for role in roles:
        Membership.objects.create(team=team, user=user, role=role)
    return user


def signing_request():
    """A request for a password check made outside a view (the throttle counts per user name and address)."""
    from django.test import RequestFactory

    return RequestFactory().post("/", REMOTE_ADDR="127.0.0.1")


@pytest.fixture
def team(db):
    return Team.objects.create(name="Tallow Creek Instruments")


@pytest.fixture
def other_team(db):
    return Team.objects.create(name="Larchmere Metering")


@pytest.fixture
def outsider(other_team):
    return make_user("outsider", other_team, Role.AUTHOR, Role.REVIEWER, Role.APPROVER)


@pytest.fixture
def people(author, reviewer, outsider):
    """(member with the author role, member without it, outsider from another team)."""
    return author, reviewer, outsider


def example_document(name: str) -> dict:
    return json.loads((EXAMPLES / name).read_text())


@pytest.fixture
def product(team, author):
    product = services.product_create(team=team, name="Hive gateway", user=author)
    services.design_import(product=product, text=(EXAMPLES / "hive-gateway.json").read_text(),
                           source="hive-gateway.json", user=author)
    return product


@pytest.fixture
def submitted_product(team, author):
    product = services.product_create(team=team, name="Orchard soil probe", user=author)
    services.design_import(product=product, text=(EXAMPLES / "orchard-probe.json").read_text(),
                           source="orchard-probe.json", user=author)
    revision_submit(revision=product.draft, user=author)
    return product


@pytest.fixture
def approver(team):
    return make_user("approver", team, Role.APPROVER)
