"""The library in the admin, read-only: parts change in the app, where every change is versioned and audited."""

from django.contrib import admin

from projectapp.library.models import Entry, EntryFile
from projectapp.read_only_admin import ReadOnlyAdmin


@admin.register(Entry)
class EntryAdmin(ReadOnlyAdmin):
    list_display = ["name", "kind", "team", "version", "retired_at", "updated_at"]
    list_filter = ["kind", "team"]
    search_fields = ["name", "description"]


@admin.register(EntryFile)
class EntryFileAdmin(ReadOnlyAdmin):
    list_display = ["name", "entry", "size_bytes", "sha256", "uploaded_at"]
