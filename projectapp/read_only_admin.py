"""An admin page that shows records and changes none: for records changed only through the app's services
(versioned and audited there) or never changed at all."""

from django.contrib import admin


class ReadOnlyAdmin(admin.ModelAdmin):
    def has_add_permission(self, request):
        return False

    def has_change_permission(self, request, obj=None):
        return False

    def has_delete_permission(self, request, obj=None):
        return False
