"""Each revision's open review items, counted once (ReviewTally) for the review dashboard to sum instead of counting
every item on every look, and the assignee no longer indexed on its own (SQLite's planner answered "my queue" by
walking every item ever assigned to the person through it; benchmarks/lists.py). The tallies of the rows already
there are counted here."""

import django.db.models.deletion
from django.conf import settings
from django.db import migrations, models
from django.db.models import Count, Q


def count_open_items(apps, schema_editor):
    ReviewItem = apps.get_model("reviews", "ReviewItem")
    ReviewTally = apps.get_model("reviews", "ReviewTally")
    Revision = apps.get_model("designs", "Revision")
    counted = {pk: [] for pk in Revision.objects.filter(review_items__isnull=False).distinct()
               .values_list("pk", flat=True)}
    open_items = (Q(disposition__in=["open", "discussion"]) | Q(carried_from__isnull=False, carried_confirmed=False))
    for revision_id, severity, topic, assignee_id, n in (
            ReviewItem.objects.filter(kind="raised").filter(open_items).order_by()
            .values_list("revision_id", "severity", "topic", "assignee_id").annotate(n=Count("id"))):
        counted[revision_id].append([severity, topic, assignee_id, n])
    ReviewTally.objects.bulk_create([ReviewTally(revision_id=pk, groups=rows, open_items=sum(row[3] for row in rows))
                                     for pk, rows in counted.items()], batch_size=500)


class Migration(migrations.Migration):

    dependencies = [
        ('designs', '0004_revision_state_and_counts'),
        ('reviews', '0007_auditevent_moves_to_audit_app'),
        migrations.swappable_dependency(settings.AUTH_USER_MODEL),
    ]

    operations = [
        migrations.CreateModel(
            name='ReviewTally',
            fields=[
                ('revision', models.OneToOneField(on_delete=django.db.models.deletion.CASCADE, primary_key=True, related_name='review_tally', serialize=False, to='designs.revision')),
                ('open_items', models.PositiveIntegerField(default=0)),
                ('groups', models.JSONField(default=list)),
            ],
        ),
        migrations.AlterField(
            model_name='reviewitem',
            name='assignee',
            field=models.ForeignKey(blank=True, db_index=False, null=True, on_delete=django.db.models.deletion.SET_NULL, related_name='review_items', to=settings.AUTH_USER_MODEL),
        ),
        migrations.RunPython(count_open_items, migrations.RunPython.noop),
    ]
