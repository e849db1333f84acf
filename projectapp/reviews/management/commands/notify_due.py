from django.core.management.base import BaseCommand
from django.utils import timezone

from projectapp.reviews.services import steps_due_notify


class Command(BaseCommand):
    help = ("Tell each external step's owner when its planned date is within --days (default 7) or past; "
            "once per step and date, so it can run every day (cron, a scheduler).")

    def add_arguments(self, parser):
        parser.add_argument("--days", type=int, default=7, help="how far ahead a planned date counts as due")

    def handle(self, *args, days: int, **options):
        if days < 0:
            self.stderr.write("--days: expected a whole number of days from 0")
            raise SystemExit(2)
        told = steps_due_notify(today=timezone.localdate(), within_days=days)
        self.stdout.write(f"{told} notice{'s' if told != 1 else ''} of steps due")
