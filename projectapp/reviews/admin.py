"""The review records in the admin, read-only: decisions are made in the app."""

from django.contrib import admin

from projectapp.read_only_admin import ReadOnlyAdmin
from projectapp.reviews.models import Comment, ReviewItem


@admin.register(ReviewItem)
class ReviewItemAdmin(ReadOnlyAdmin):
    list_display = ["rule_id", "subjects_key", "severity", "disposition", "assignee", "revision"]
    list_filter = ["severity", "disposition", "topic"]


@admin.register(Comment)
class CommentAdmin(ReadOnlyAdmin):
    list_display = ["item", "author", "created_at"]
