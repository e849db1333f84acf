"""The library in the admin, read-only: parts change in the app, where every change is versioned and audited."""

from django.contrib import admin

from projectapp.library.models import Entry, EntryFile


class ReadOnlyAdmin(admin.ModelAdmin):
    def has_add_permission(self, request):
        return False

    def has_change_permission(self, request, obj=None):
        return False

    def has_delete_permission(self, request, obj=None):
        return False


@admin.register(Entry)
class EntryAdmin(ReadOnlyAdmin):
    list_display = ["name", "kind", "team", "version", "retired_at", "updated_at"]
    list_filter = ["kind", "team"]
    search_fields = ["name", "description"]


@admin.register(EntryFile)
class EntryFileAdmin(ReadOnlyAdmin):
    list_display = ["name", "entry", "size_bytes", "sha256", "uploaded_at"]
