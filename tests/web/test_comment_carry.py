"""Comments carry forward with their items, each marked with the revision it was written on."""

import copy

from django.urls import reverse

from projectapp.designs import services as design_services
from projectapp.reviews.models import Comment, ReviewItem
from projectapp.reviews.services import review_item_comment, revision_submit


def raised(product, rule_id: str, number: int) -> ReviewItem:
    return ReviewItem.objects.get(revision__product=product, revision__number=number, rule_id=rule_id,
                                  kind=ReviewItem.Kind.RAISED)


def submit_again(product, author, mutate) -> None:
    draft = design_services.draft_get_or_start(product=product, user=author)
    document = copy.deepcopy(draft.document)
    mutate(document)
    design_services.draft_save_document(revision=draft, document=document, user=author)
    revision_submit(revision=draft, user=author)


def test_a_comment_reaches_the_next_revisions_item_marked_with_its_revision(client, product, author, reviewer):
    revision_submit(revision=product.draft, user=author)
    first = raised(product, "EFF-001", 1)
    review_item_comment(item=first, user=reviewer, text="@maren your call on the efficiency")
    written = Comment.objects.get(item=first)
    assert written.written_on_id == first.revision_id

    # revision 2: a change elsewhere (DIV turned); EFF-001 (same rule, same antenna) is raised again
    submit_again(product, author, lambda d: d["antennas"][1].update(polarization=[0, 1, 0]))
    second = raised(product, "EFF-001", 2)
    carried = Comment.objects.get(item=second)
    assert (carried.text, carried.author_id, carried.created_at) == (written.text, written.author_id,
                                                                       written.created_at)
    assert carried.written_on.number == 1
    assert Comment.objects.get(item=first).text == written.text  # the first revision's discussion stays its own

    client.force_login(author)
    page = client.get(reverse("review_item", args=[second.pk])).content.decode()
    assert "@maren your call on the efficiency" in page and "written on design revision 1" in page
    # the first revision's item shows the comment as its own: no mark
    own = client.get(reverse("review_item", args=[first.pk])).content.decode()
    assert "written on design revision" not in own


def test_a_comment_carried_twice_keeps_the_revision_it_was_written_on(product, author, reviewer):
    revision_submit(revision=product.draft, user=author)
    review_item_comment(item=raised(product, "EFF-001", 1), user=reviewer, text="first look")
    submit_again(product, author, lambda d: d["antennas"][1].update(polarization=[0, 1, 0]))
    review_item_comment(item=raised(product, "EFF-001", 2), user=author, text="second look")
    submit_again(product, author, lambda d: d["antennas"][1].update(polarization=[0, 0, 1]))
    third = raised(product, "EFF-001", 3)
    assert [(c.text, c.written_on.number) for c in third.comments.select_related("written_on")] == [
        ("first look", 1), ("second look", 2)]
