"""The audit trail moves to its own app (projectapp.audit). Only Django's bookkeeping changes: the model leaves
this app's state here and enters the audit app's in audit/0001, which keeps the same table, so no row is
touched and the migration applies on a database that holds events."""

from django.db import migrations


class Migration(migrations.Migration):

    dependencies = [
        ('reviews', '0006_auditevent_team_subject_product_optional'),
    ]

    operations = [
        migrations.SeparateDatabaseAndState(
            state_operations=[migrations.DeleteModel(name='AuditEvent')],
            database_operations=[],
        ),
    ]
