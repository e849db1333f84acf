"""Telling people: `notify()` stores a notice per recipient in the caller's transaction and sends e-mail once it
commits; `mentioned()` reads @names out of a comment."""

import logging
import re

from django.conf import settings
from django.contrib.auth import get_user_model
from django.core.mail import send_mail
from django.db import IntegrityError, transaction
from django.db.models import QuerySet
from django.utils import timezone

from projectapp.notices.models import MailSwitch, Notice
from projectapp.teams.models import Membership

log = logging.getLogger(__name__)
MENTION = re.compile(r"(?<![\w@.])@([\w.+-]{1,150})")


def notify(*, recipients, team, kind: str, text: str, url: str, actor=None, event_key: str = "") -> list[Notice]:
    """A notice for each recipient who is a member of `team` (never the actor, who knows). With `event_key`, a
    recipient told of that event already is not told again."""
    ids = {person.pk for person in recipients if person is not None and (actor is None or person.pk != actor.pk)}
    members = set(Membership.objects.filter(team=team, user_id__in=ids).values_list("user_id", flat=True))
    if event_key:  # told already; the unique constraint also stops a concurrent call
        members -= set(Notice.objects.filter(recipient_id__in=members, event_key=event_key[:120])
                       .values_list("recipient_id", flat=True))
    made = []
    for user_id in sorted(members):
        try:
            with transaction.atomic():
                made.append(Notice.objects.create(recipient_id=user_id, team=team, kind=kind, text=text[:300],
                                                  url=url[:300], event_key=event_key[:120]))
        except IntegrityError:  # told of this event by a concurrent call meanwhile
            continue
    if made:
        transaction.on_commit(lambda: _mail([notice.pk for notice in made]))
    return made


def _mail(notice_ids: list[int]) -> None:
    """One message per notice to people with an address and the switch on; a mail failure is logged, never
    raised (the notice is in the inbox either way)."""
    off = set(MailSwitch.objects.filter(email_notices=False).values_list("user_id", flat=True))
    base = getattr(settings, "EARSHOT_BASE_URL", "").rstrip("/")
    for notice in Notice.objects.filter(pk__in=notice_ids).select_related("recipient", "team"):
        person = notice.recipient
        if not person.email or person.pk in off:
            continue
        body = (f"{notice.text}\n\n{base}{notice.url}\n\n"
                f"You get this because you are in {notice.team.name} on Earshot; switch e-mail off on your inbox page.")
        try:
            send_mail(f"[Earshot] {notice.get_kind_display()}: {notice.text[:80]}", body, None, [person.email])
        except Exception:  # noqa: BLE001 - a mail server's trouble must not undo or hide the event
            log.exception("could not e-mail notice %s to %s", notice.pk, person.pk)


def mentioned(*, text: str, team) -> QuerySet:
    """Members of `team` named as @username in `text` (others are plain text)."""
    names = {match.group(1).rstrip(".") for match in MENTION.finditer(text)}
    return get_user_model().objects.filter(username__in=names, memberships__team=team).distinct()


def unread_count(user) -> int:
    return Notice.objects.filter(recipient=user, read_at__isnull=True).count()


def notices_read(*, user, ids: list[int] | None = None) -> int:
    """Marks the person's notices read (all of them without `ids`); another person's ids are ignored."""
    notices = Notice.objects.filter(recipient=user, read_at__isnull=True)
    if ids is not None:
        notices = notices.filter(pk__in=ids)
    return notices.update(read_at=timezone.now())


def mail_switch_set(*, user, on: bool) -> None:
    MailSwitch.objects.update_or_create(user=user, defaults={"email_notices": on})


def mail_is_on(user) -> bool:
    return not MailSwitch.objects.filter(user=user, email_notices=False).exists()
