"""Fetching products and revisions for a person: another team's product is a 404, never a leak."""

import hashlib
from dataclasses import dataclass
from datetime import UTC, datetime

from django.contrib.auth import get_user_model
from django.db import connection
from django.http import Http404
from django.shortcuts import get_object_or_404

from projectapp.designs.models import Product, Revision, cache_identity
from projectapp.teams.access import teams_of
from projectapp.teams.models import Membership


def products_for(user):
    return Product.objects.filter(team__in=teams_of(user)).select_related("team")


def get_product_for_user(user, product_id: int) -> Product:
    return get_object_or_404(products_for(user), pk=product_id)


def get_revision_for_user(user, product_id: int, number: int) -> Revision:
    """One query: the revision with its product, team and submitter, or a 404 (also for another team's)."""
    revisions = Revision.objects.filter(product__team__in=teams_of(user)).select_related(
        "product__team", "submitted_by")
    return get_object_or_404(revisions, product_id=product_id, number=number)


def utc_naive(moment: datetime | None) -> datetime | None:
    """A stored time as naive UTC, whichever way the database driver hands it over (for keys)."""
    if moment is not None and moment.tzinfo is not None:
        return moment.astimezone(UTC).replace(tzinfo=None)
    return moment


@dataclass(frozen=True)
class RevisionFacts:
    """What a revision's page needs to know before anything is drawn: whether this person may see it, with
    which roles, and the facts that name its cached copy."""

    revision_id: int
    product_id: int
    number: int
    state: str
    version: int
    created_at: datetime | None  # naive UTC
    product_name: str
    submitter_name: str
    roles: frozenset[str]

    @property
    def is_draft(self) -> bool:
        return self.state == Revision.State.DRAFT

    @property
    def cache_identity(self) -> str:
        """The revision's cache identity (Revision.cache_identity, from the same columns) and its product's name."""
        name = hashlib.sha256(self.product_name.encode()).hexdigest()[:16]
        return cache_identity(revision_id=self.revision_id, created_at=self.created_at, state=self.state,
                              version=self.version) + f"-product-{self.product_id}-{name}"


def _table(model) -> str:
    return connection.ops.quote_name(model._meta.db_table)


def revision_facts(user, product_id: int, number: int) -> RevisionFacts:
    """The facts of a revision in one of the person's teams, or a 404 (also for another team's revision).

    The most visited page starts here, so this is one hand-written query: the ORM would spend more time
    building the query than the database spends answering it. It joins the person's memberships of the
    product's team, so no row (a 404) is the answer for anyone outside it; tests/web/test_security.py walks
    every page as an outsider.
    """
    sql = f"""
        SELECT r.id, r.state, r.version, r.created_at, p.name, s.first_name, s.last_name, s.username, m.role
        FROM {_table(Revision)} r
        JOIN {_table(Product)} p ON p.id = r.product_id
        JOIN {_table(Membership)} m ON m.team_id = p.team_id AND m.user_id = %s
        LEFT JOIN {_table(get_user_model())} s ON s.id = r.submitted_by_id
        WHERE r.product_id = %s AND r.number = %s"""
    if not user.is_authenticated:
        raise Http404("No such revision.")
    with connection.cursor() as cursor:
        cursor.execute(sql, [user.pk, product_id, number])
        rows = cursor.fetchall()
    if not rows:
        raise Http404("No such revision.")
    revision_id, state, version, created_at, product_name, first, last, username, _ = rows[0]
    if isinstance(created_at, str):  # SQLite hands over text where the column type isn't declared
        created_at = datetime.fromisoformat(created_at)
    submitter = f"{first or ''} {last or ''}".strip() or (username or "")
    return RevisionFacts(revision_id=revision_id, product_id=product_id, number=number, state=state,
                         version=version, created_at=utc_naive(created_at), product_name=product_name,
                         submitter_name=submitter, roles=frozenset(row[-1] for row in rows))
