"""Notices: assignment, mention, signature awaited, signed, step due; the inbox and its count; e-mail sent to a
real SMTP server the test starts (aiosmtpd) and read back, with the per-person switch."""

import datetime
import email
import socket

import pytest
from aiosmtpd.controller import Controller
from django.core import mail
from django.core.management import call_command
from django.urls import reverse

from projectapp.notices.models import Notice
from projectapp.notices.services import mail_is_on, mail_switch_set, mentioned, unread_count
from projectapp.reviews.models import ProcessStep, ReviewItem, StepStatus, TopicReviewer
from projectapp.reviews.services import (
    review_item_assign,
    review_item_comment,
    revision_submit,
    steps_due_notify,
)
from tests.web.test_signoff import settle, sign_all


class Inbox:
    """Keeps what the SMTP server received."""

    def __init__(self):
        self.messages: list[email.message.Message] = []

    async def handle_DATA(self, server, session, envelope):  # noqa: N802 (aiosmtpd's hook name)
        message = email.message_from_bytes(envelope.content)
        message["X-Envelope-To"] = ", ".join(envelope.rcpt_tos)
        self.messages.append(message)
        return "250 OK"


def free_port() -> int:
    with socket.socket() as probe:
        probe.bind(("127.0.0.1", 0))
        return probe.getsockname()[1]


@pytest.fixture
def smtp(settings):
    handler = Inbox()
    controller = Controller(handler, hostname="127.0.0.1", port=free_port())
    controller.start()
    settings.MAILERS = {"default": {"BACKEND": "django.core.mail.backends.smtp.EmailBackend",
                                    "OPTIONS": {"host": "127.0.0.1", "port": controller.port, "use_tls": False,
                                                "timeout": 10}}}
    yield handler
    controller.stop()


def with_addresses(*people):
    for person in people:
        person.email = f"{person.username}@tallow-creek.example"
        person.save()


def bodies(handler) -> list[str]:
    return [message.get_payload(decode=True).decode() for message in handler.messages]


@pytest.mark.django_db(transaction=True)  # e-mail goes out when the transaction commits
def test_an_assignment_at_submission_is_an_inbox_notice_and_a_real_email(client, smtp, team, product, author,
                                                                         reviewer):
    with_addresses(author, reviewer)
    TopicReviewer.objects.create(team=team, topic="separation", reviewer=reviewer)
    revision_submit(revision=product.draft, user=author)
    count = ReviewItem.objects.filter(revision__product=product, topic="separation", kind="raised").count()
    notice = Notice.objects.get(recipient=reviewer)
    assert notice.kind == Notice.Kind.ASSIGNED and f"{count} item" in notice.text
    assert unread_count(reviewer) == 1 and unread_count(author) == 0  # the actor isn't told
    [message] = smtp.messages
    assert message["X-Envelope-To"] == "reviewer@tallow-creek.example"
    assert "to review" in message["Subject"] and notice.url in bodies(smtp)[0]

    client.force_login(reviewer)
    header = client.get(reverse("product_list")).content.decode()  # a cached page fills the count per reader
    assert 'aria-label="1 unread"' in header
    client.force_login(author)
    assert "unread" not in client.get(reverse("product_list")).content.decode().split("</header>")[0]


@pytest.mark.django_db(transaction=True)
def test_the_switch_off_keeps_the_notice_and_sends_no_email(smtp, team, product, author, reviewer, approver):
    with_addresses(reviewer)
    mail_switch_set(user=reviewer, on=False)
    revision_submit(revision=product.draft, user=author)
    item = ReviewItem.objects.filter(revision__product=product, kind="raised").first()
    review_item_assign(item=item, user=approver, assignee=reviewer, expected_version=item.version)
    assert Notice.objects.filter(recipient=reviewer, kind="assigned").count() == 1
    assert smtp.messages == []


def test_a_mention_tells_team_members_only_and_keeps_text_plain(client, team, product, author, reviewer, outsider):
    revision_submit(revision=product.draft, user=author)
    item = ReviewItem.objects.filter(revision__product=product, kind="raised").first()
    review_item_comment(item=item, user=author, text="@reviewer <b>your call</b>, cc @outsider and @nobody")
    assert list(Notice.objects.values_list("recipient__username", "kind")) == [("reviewer", "mention")]
    assert [person.username for person in mentioned(text="mail me at x@reviewer.example", team=team)] == []
    client.force_login(reviewer)
    page = client.get(reverse("inbox")).content.decode()
    assert "&lt;b&gt;your call&lt;/b&gt;" in page and "<b>your call</b>" not in page


def test_signatures_awaited_then_signed_tell_the_right_people(product, author, reviewer, approver):
    revision_submit(revision=product.draft, user=author)
    revision = product.revisions.get(number=1)
    settle(revision, reviewer, approver)
    mail.outbox.clear()
    sign_all(revision, author, reviewer, approver)
    awaited = Notice.objects.filter(kind="signature")
    # after the author: reviewer and approver are awaited; after the reviewer: the approver again
    assert sorted(awaited.values_list("recipient__username", flat=True)) == ["approver", "approver", "reviewer"]
    signed = set(Notice.objects.filter(kind="signed").values_list("recipient__username", flat=True))
    assert signed == {"author", "reviewer"}  # the approver signed last and knows


def test_a_step_due_is_told_once_to_its_owner(product, author, reviewer):
    revision_submit(revision=product.draft, user=author)
    step = ProcessStep.objects.filter(revision__product=product).first()
    assert step is not None, "the hive gateway has certification / RF-exposure steps"
    ProcessStep.objects.filter(pk=step.pk).update(owner=reviewer, planned_on=datetime.date(2026, 12, 8),
                                                  status=StepStatus.PLANNED)
    assert steps_due_notify(today=datetime.date(2026, 11, 1)) == 0  # five weeks ahead: not yet
    assert steps_due_notify(today=datetime.date(2026, 12, 3)) == 1
    assert steps_due_notify(today=datetime.date(2026, 12, 4)) == 0  # told once per step and date
    assert "is due on 2026-12-08" in Notice.objects.get(kind="step-due").text
    call_command("notify_due", "--days", "30")  # runs, tells nobody twice


def test_the_inbox_pages_filters_marks_read_and_is_the_readers_own(client, team, product, author, reviewer,
                                                                   approver):
    revision_submit(revision=product.draft, user=author)
    items = list(ReviewItem.objects.filter(revision__product=product, kind="raised")[:3])
    for item in items:
        review_item_assign(item=item, user=approver, assignee=reviewer, expected_version=item.version)
    client.force_login(reviewer)
    page = client.get(reverse("inbox") + "?show=unread")
    assert page.status_code == 200 and page.content.decode().count("(new)") == 3
    first = Notice.objects.filter(recipient=reviewer).order_by("id").first()
    opened = client.post(reverse("inbox_read"), {"notice": first.pk})
    assert opened.status_code == 302 and opened["Location"] == first.url and unread_count(reviewer) == 2
    assert client.post(reverse("inbox_read")).status_code == 302 and unread_count(reviewer) == 0
    assert client.get(reverse("inbox") + "?show=bogus").status_code == 400
    assert client.get(reverse("inbox") + "?page=0").status_code == 400
    # another person's notice can't be read through the form: it stays unread, and they land on their inbox
    client.force_login(author)
    Notice.objects.filter(pk=first.pk).update(read_at=None)
    assert client.post(reverse("inbox_read"), {"notice": first.pk})["Location"] == reverse("inbox")
    assert unread_count(reviewer) == 1
    assert client.post(reverse("inbox_read"), {"notice": "x"}).status_code == 400
    client.post(reverse("inbox_mail"), {})  # the box unticked
    assert not mail_is_on(author) and mail_is_on(reviewer)
    client.post(reverse("inbox_mail"), {"email_notices": "on"})
    assert mail_is_on(author)
