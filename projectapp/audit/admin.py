"""The audit trail in the admin, read-only: nobody edits it."""

from django.contrib import admin

from projectapp.audit.models import AuditEvent
from projectapp.read_only_admin import ReadOnlyAdmin


@admin.register(AuditEvent)
class AuditEventAdmin(ReadOnlyAdmin):
    list_display = ["created_at", "actor", "action", "summary", "product"]
    list_filter = ["action", "product"]
