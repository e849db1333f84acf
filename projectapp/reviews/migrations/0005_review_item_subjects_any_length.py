"""A review item's subjects key may be any length (a finding about 32 antennas names them all, and 300
characters held two long names); the one-item-per-finding constraint compares its SHA-256 instead, since an
index entry can't be long."""

import hashlib

from django.db import migrations, models


def fill_digests(apps, schema_editor):
    ReviewItem = apps.get_model("reviews", "ReviewItem")
    for pk, key in ReviewItem.objects.values_list("pk", "subjects_key").iterator():
        ReviewItem.objects.filter(pk=pk).update(subjects_digest=hashlib.sha256(key.encode()).hexdigest())


class Migration(migrations.Migration):
    dependencies = [
        ("reviews", "0004_reviewitem_decision_provenance"),
    ]

    operations = [
        migrations.RemoveConstraint(model_name="reviewitem", name="one_item_per_finding"),
        migrations.AlterField(model_name="reviewitem", name="subjects_key", field=models.TextField()),
        migrations.AddField(model_name="reviewitem", name="subjects_digest",
                            field=models.CharField(default="", editable=False, max_length=64),
                            preserve_default=False),
        migrations.RunPython(fill_digests, migrations.RunPython.noop),
        migrations.AddConstraint(
            model_name="reviewitem",
            constraint=models.UniqueConstraint(fields=("revision", "kind", "rule_id", "subjects_digest"),
                                               name="one_item_per_finding"),
        ),
    ]
