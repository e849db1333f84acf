"""The audit trail's model, taken over from the reviews app (reviews/0007) with its table as it is: the state
is declared here, the database is left alone. Permissions follow the model (its content type is renamed)."""

import django.db.models.deletion
from django.conf import settings
from django.db import migrations, models


def move_content_type(apps, schema_editor):
    ContentType = apps.get_model("contenttypes", "ContentType")
    if not ContentType.objects.filter(app_label="audit", model="auditevent").exists():
        ContentType.objects.filter(app_label="reviews", model="auditevent").update(app_label="audit")


def return_content_type(apps, schema_editor):
    ContentType = apps.get_model("contenttypes", "ContentType")
    if not ContentType.objects.filter(app_label="reviews", model="auditevent").exists():
        ContentType.objects.filter(app_label="audit", model="auditevent").update(app_label="reviews")


class Migration(migrations.Migration):

    initial = True

    dependencies = [
        ('contenttypes', '0002_remove_content_type_name'),
        ('designs', '0002_revision_version'),
        ('reviews', '0007_auditevent_moves_to_audit_app'),
        ('teams', '0002_team_allow_dual_signing_team_signoff_roles'),
        migrations.swappable_dependency(settings.AUTH_USER_MODEL),
    ]

    operations = [
        migrations.SeparateDatabaseAndState(
            state_operations=[
                migrations.CreateModel(
                    name='AuditEvent',
                    fields=[
                        ('id', models.BigAutoField(auto_created=True, primary_key=True, serialize=False, verbose_name='ID')),
                        ('subject', models.CharField(blank=True, db_index=True, max_length=80)),
                        ('action', models.CharField(choices=[('submitted', 'Submitted a revision'), ('signed', 'Signed'), ('archived', 'Archived the signed record'), ('disposition', 'Recorded a disposition'), ('waiver', 'Granted a waiver'), ('confirmed', 'Confirmed a carried disposition'), ('comment', 'Commented'), ('assigned', 'Assigned'), ('draft-started', 'Started a draft'), ('section-saved', 'Saved a questionnaire section'), ('imported', 'Imported a design file'), ('file-added', 'Added a measurement file'), ('file-mapped', "Mapped a measurement's ports"), ('file-removed', 'Removed a measurement file'), ('library-filled', 'Filled a part from the library'), ('library-applied', 'Applied a library change'), ('part-created', 'Added a library part'), ('part-changed', 'Changed a library part'), ('part-retired', 'Retired a library part'), ('part-restored', 'Restored a library part'), ('part-file-added', 'Added a file to a library part'), ('part-file-removed', 'Removed a file from a library part')], max_length=24)),
                        ('summary', models.CharField(max_length=300)),
                        ('changes', models.JSONField(default=dict)),
                        ('draft_version', models.PositiveIntegerField(blank=True, null=True)),
                        ('created_at', models.DateTimeField(auto_now_add=True)),
                        ('actor', models.ForeignKey(on_delete=django.db.models.deletion.PROTECT, related_name='+', to=settings.AUTH_USER_MODEL)),
                        ('item', models.ForeignKey(blank=True, null=True, on_delete=django.db.models.deletion.PROTECT, related_name='audit_events', to='reviews.reviewitem')),
                        ('product', models.ForeignKey(blank=True, null=True, on_delete=django.db.models.deletion.PROTECT, related_name='audit_events', to='designs.product')),
                        ('revision', models.ForeignKey(blank=True, null=True, on_delete=django.db.models.deletion.PROTECT, related_name='+', to='designs.revision')),
                        ('team', models.ForeignKey(blank=True, null=True, on_delete=django.db.models.deletion.PROTECT, related_name='+', to='teams.team')),
                    ],
                    options={
                        'db_table': 'reviews_auditevent',
                        'ordering': ['-created_at', '-id'],
                    },
                ),
            ],
            database_operations=[],
        ),
        migrations.RunPython(move_content_type, return_content_type),
    ]
