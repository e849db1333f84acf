"""Rule-set upgrades: a frozen revision's stored checklist beside what the current rules would raise
(designs.upgrades), and `manage.py reevaluate` as a team's CI runs it.

A stored checklist from an older rule set is made the way an upgrade leaves one: the checklist frozen at
submission by the real engine, then (as an older rule set would have written it) stored under another
version with findings edited, through a queryset update that bypasses the model's freeze (only a test may).
"""

import copy
import io

import pytest
from django.core.management import call_command
from django.urls import reverse

from projectapp.designs.models import Revision
from projectapp.designs.upgrades import compare_checklists, comparison_for, finding_key
from projectapp.reviews.services import revision_submit
from rules.registry import RULESET_VERSION
from tests.web.test_signoff import settle, sign_all

OLDER = "1.9.0"


def store_older(revision: Revision, edit) -> Revision:
    evaluation = copy.deepcopy(revision.evaluation)
    evaluation["ruleset"] = OLDER
    edit(evaluation["findings"])
    Revision.objects.filter(pk=revision.pk).update(evaluation=evaluation, ruleset=OLDER)
    return Revision.objects.get(pk=revision.pk)


def reevaluate(*args: str) -> tuple[int, str, str]:
    out, err = io.StringIO(), io.StringIO()
    try:
        call_command("reevaluate", *args, stdout=out, stderr=err)
        code = 0
    except SystemExit as exit_:
        code = int(exit_.code or 0)
    return code, out.getvalue(), err.getvalue()


@pytest.fixture
def submitted(product, author):
    revision_submit(revision=product.draft, user=author)
    return product.revisions.get(number=1)


def finding(rule: str, severity: str, subjects=("a",), **evidence) -> dict:
    return {"id": rule, "severity": severity, "subjects": list(subjects), "evidence": evidence, "title": rule}


def test_it_sorts_findings_into_new_gone_and_changed_by_rule_and_subjects():
    stored = {"ruleset": OLDER, "findings": [finding("A-1", "warning"), finding("B-1", "note"),
                                             finding("C-1", "note", gap_mm=4.0), finding("D-1", "note")]}
    current = {"ruleset": RULESET_VERSION, "findings": [finding("A-1", "blocker"), finding("C-1", "note", gap_mm=5.0),
                                                        finding("D-1", "note"), finding("E-1", "blocker"),
                                                        finding("B-1", "note", subjects=("b",))]}
    comparison = compare_checklists(stored, current)
    assert [finding_key(f) for f in comparison.new] == [("E-1", ("a",)), ("B-1", ("b",))]  # other subjects: new
    assert [finding_key(f) for f in comparison.gone] == [("B-1", ("a",))]
    assert [finding_key(c["after"]) for c in comparison.changed] == [("A-1", ("a",)), ("C-1", ("a",))]
    assert comparison.new_blockers == 2  # E-1 raised as a blocker, A-1 became one; D-1 unchanged is not listed


def test_an_unchanged_revision_under_the_current_rules_shows_nothing(submitted):
    comparison = comparison_for(submitted)
    assert comparison is not None and not comparison.differs and not comparison.shown


def test_a_checklist_from_an_older_rule_set_shows_what_the_current_rules_raise_instead(submitted):
    before = copy.deepcopy(submitted.evaluation)
    older = store_older(submitted, lambda findings: findings.remove(
        next(f for f in findings if f["id"] == "SEP-001")))
    comparison = comparison_for(older)
    assert comparison.shown and comparison.stored_ruleset == OLDER
    assert [f["id"] for f in comparison.new] == ["SEP-001"] and not comparison.gone and not comparison.changed
    # read-only: the stored checklist is the one stored, the engine's own judgement is unchanged
    assert Revision.objects.get(pk=submitted.pk).evaluation == older.evaluation
    assert [f["id"] for f in before["findings"]].count("SEP-001") == 1


def test_the_command_exits_0_when_no_signed_revision_would_now_raise_a_blocker(submitted, team):
    store_older(submitted, lambda findings: findings.remove(next(f for f in findings if f["id"] == "SEP-001")))
    code, out, _ = reevaluate("--team", team.name)
    assert code == 0  # in review, not signed
    assert "1 new, 0 gone, 0 changed" in out and "new SEP-001 [blocker]" in out


def test_the_command_exits_1_when_a_signed_revision_would_now_raise_a_blocker(submitted, author, reviewer, approver):
    settle(submitted, reviewer, approver)
    sign_all(submitted, author, reviewer, approver)
    signed = Revision.objects.get(pk=submitted.pk)
    assert signed.is_signed

    def demote(findings):
        next(f for f in findings if f["id"] == "SEP-001")["severity"] = "warning"

    store_older(signed, demote)
    code, out, _ = reevaluate()
    assert code == 1
    assert "0 new, 0 gone, 1 changed; SIGNED, would now raise 1 blocker(s)" in out


def test_the_command_exits_2_for_an_unknown_team(db):
    code, _, err = reevaluate("--team", "No such team")
    assert code == 2 and "--team" in err and "No such team" in err


def test_a_team_filter_leaves_out_other_teams(submitted, other_team):
    store_older(submitted, lambda findings: findings.clear())
    code, out, _ = reevaluate("--team", other_team.name)
    assert code == 0 and "0 revision(s)" in out


def test_the_revision_page_shows_the_comparison_and_offers_a_draft_under_the_current_rules(client, submitted, author):
    store_older(submitted, lambda findings: findings.remove(next(f for f in findings if f["id"] == "SEP-001")))
    client.force_login(author)
    page = client.get(reverse("revision_detail", args=[submitted.product_id, 1])).content.decode()
    assert f"Under the current rule set {RULESET_VERSION}" in page and "rule set 1.9.0" in page
    assert "1 new, 0 gone, 0 changed" in page and "SEP-001" in page
    assert "Start a draft from it" in page
    response = client.post(reverse("draft_start", args=[submitted.product_id]), {"from": 1})
    assert response.status_code == 302
    draft = submitted.product.draft
    assert draft.based_on_id == submitted.pk and draft.ruleset == RULESET_VERSION
    assert Revision.objects.get(pk=submitted.pk).ruleset == OLDER  # the frozen record is untouched


def test_a_reviewer_sees_the_comparison_but_no_draft_button(client, submitted, reviewer):
    store_older(submitted, lambda findings: findings.clear())
    client.force_login(reviewer)
    page = client.get(reverse("revision_detail", args=[submitted.product_id, 1])).content.decode()
    assert "Under the current rule set" in page and "Start a draft from it" not in page


def test_the_team_page_lists_affected_revisions_signed_blockers_first(client, submitted, product, team, author,
                                                                      reviewer, approver):
    settle(submitted, reviewer, approver)
    sign_all(submitted, author, reviewer, approver)
    store_older(Revision.objects.get(pk=submitted.pk),
                lambda findings: findings.remove(next(f for f in findings if f["id"] == "SEP-001")))
    client.force_login(author)
    page = client.get(reverse("team_upgrades", args=[team.pk])).content.decode()
    assert product.name in page and "Start a draft from it" in page
    assert "<strong>1</strong>" in page


def test_the_team_page_of_another_team_is_404(client, team, outsider):
    client.force_login(outsider)
    assert client.get(reverse("team_upgrades", args=[team.pk])).status_code == 404
