"""A default reviewer per topic: set by an approver, assigned at submission, carried assignees kept."""

from django.urls import reverse

from projectapp.audit.models import AuditEvent
from projectapp.reviews.models import ReviewItem, TopicReviewer
from projectapp.reviews.services import review_item_assign, revision_submit
from tests.web.test_comment_carry import raised, submit_again


def post_reviewers(client, user, team, **chosen):
    client.force_login(user)
    return client.post(reverse("team_reviewers", args=[team.pk]), {topic: person.pk for topic, person in chosen.items()})


def test_an_approver_sets_them_and_submitting_assigns_every_item_of_those_topics(client, team, product, author,
                                                                                   reviewer, approver):
    response = post_reviewers(client, approver, team, separation=reviewer, efficiency=approver)
    assert response.status_code == 302
    assert dict(TopicReviewer.objects.values_list("topic", "reviewer__username")) == {
        "separation": reviewer.username, "efficiency": approver.username}
    event = AuditEvent.objects.get(action=AuditEvent.Action.REVIEWERS_SET)
    assert event.team_id == team.pk and event.changes["separation"] == [None, reviewer.username]

    revision_submit(revision=product.draft, user=author)
    items = ReviewItem.objects.filter(revision__product=product, kind=ReviewItem.Kind.RAISED)
    for item in items:
        expected = {"separation": reviewer.pk, "efficiency": approver.pk}.get(item.topic)
        assert item.assignee_id == expected, item.rule_id
    assert items.filter(topic="separation").exists() and items.filter(topic="efficiency").exists()
    opened = AuditEvent.objects.get(action=AuditEvent.Action.REVIEW_OPENED)
    assigned = items.filter(assignee__isnull=False).count()
    assert f"{assigned} assigned" in opened.summary


def test_an_item_keeps_the_assignee_it_had_on_the_previous_revision(team, product, author, reviewer, approver):
    revision_submit(revision=product.draft, user=author)
    first = raised(product, "EFF-001", 1)
    review_item_assign(item=first, user=approver, assignee=approver, expected_version=first.version)
    TopicReviewer.objects.create(team=team, topic="efficiency", reviewer=reviewer)
    submit_again(product, author, lambda d: d["antennas"][1].update(polarization=[0, 1, 0]))
    assert raised(product, "EFF-001", 2).assignee_id == approver.pk


def test_only_an_approver_sets_them_and_only_team_reviewers_can_be_chosen(client, team, author, reviewer,
                                                                            approver, outsider, other_team):
    client.force_login(reviewer)
    page = client.get(reverse("team_reviewers", args=[team.pk]))
    assert page.status_code == 200 and "An approver of the team sets these" in page.content.decode()
    assert post_reviewers(client, reviewer, team, separation=reviewer).status_code == 403
    # an author-only member is not offered and is refused by name
    refused = post_reviewers(client, approver, team, separation=author)
    assert refused.status_code == 400 and "Select a valid choice" in refused.content.decode()
    assert post_reviewers(client, approver, team, separation=outsider).status_code == 400
    assert not TopicReviewer.objects.exists()
    client.force_login(outsider)
    assert client.get(reverse("team_reviewers", args=[team.pk])).status_code == 404
