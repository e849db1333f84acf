"""Counts every revision's open items again now that an item tracked as a step outside the team is never open
(reviews.models.OPEN_ITEMS): the stored tallies the dashboard sums were counted with those items in them."""

from django.db import migrations
from django.db.models import Count, Q

OPEN = ("open", "discussion")


def recount(apps, schema_editor):
    ReviewItem = apps.get_model("reviews", "ReviewItem")
    ReviewTally = apps.get_model("reviews", "ReviewTally")
    counted: dict[int, list] = {pk: [] for pk in ReviewTally.objects.values_list("revision_id", flat=True)}
    open_items = ((Q(disposition__in=OPEN) | Q(carried_from__isnull=False, carried_confirmed=False))
                  & Q(process_step__isnull=True))
    groups = (ReviewItem.objects.filter(revision_id__in=list(counted), kind="raised").filter(open_items).order_by()
              .values_list("revision_id", "severity", "topic", "assignee_id").annotate(n=Count("id")))
    for revision_id, severity, topic, assignee_id, n in groups:
        counted[revision_id].append([severity, topic, assignee_id, n])
    ReviewTally.objects.bulk_update([ReviewTally(revision_id=pk, groups=rows, open_items=sum(row[3] for row in rows))
                                     for pk, rows in counted.items()], ["groups", "open_items"], batch_size=500)


class Migration(migrations.Migration):
    dependencies = [("reviews", "0012_topic_reviewer")]
    operations = [migrations.RunPython(recount, migrations.RunPython.noop)]
