"""The review records in the admin, read-only: decisions are made in the app, and the audit trail is
never edited by anyone."""

from django.contrib import admin

from projectapp.reviews.models import AuditEvent, Comment, ReviewItem


class ReadOnlyAdmin(admin.ModelAdmin):
    def has_add_permission(self, request):
        return False

    def has_change_permission(self, request, obj=None):
        return False

    def has_delete_permission(self, request, obj=None):
        return False


@admin.register(ReviewItem)
class ReviewItemAdmin(ReadOnlyAdmin):
    list_display = ["rule_id", "subjects_key", "severity", "disposition", "assignee", "revision"]
    list_filter = ["severity", "disposition", "topic"]


@admin.register(Comment)
class CommentAdmin(ReadOnlyAdmin):
    list_display = ["item", "author", "created_at"]


@admin.register(AuditEvent)
class AuditEventAdmin(ReadOnlyAdmin):
    list_display = ["created_at", "actor", "action", "summary", "product"]
    list_filter = ["action", "product"]
