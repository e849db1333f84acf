"""Admin pages for products and revisions. Revisions are written only through the app's services, so
the admin shows them read-only: a frozen revision can't be edited or deleted from here either."""

from django.contrib import admin

from projectapp.designs.models import MeasurementFile, Product, Revision


class RevisionInline(admin.TabularInline):
    model = Revision
    fields = ["number", "state", "ruleset", "created_at", "submitted_at"]
    readonly_fields = fields
    extra = 0
    can_delete = False
    show_change_link = True

    def has_add_permission(self, request, obj=None):
        return False


@admin.register(Product)
class ProductAdmin(admin.ModelAdmin):
    list_display = ["name", "team", "created_at"]
    list_filter = ["team"]
    search_fields = ["name"]
    inlines = [RevisionInline]


class MeasurementInline(admin.TabularInline):
    model = MeasurementFile
    fields = ["name", "size_bytes", "sha256", "uploaded_at"]
    readonly_fields = fields
    extra = 0
    can_delete = False

    def has_add_permission(self, request, obj=None):
        return False


@admin.register(Revision)
class RevisionAdmin(admin.ModelAdmin):
    list_display = ["product", "number", "state", "ruleset", "submitted_at"]
    list_filter = ["state", "product__team"]
    readonly_fields = ["product", "number", "state", "state_changed_at", "document", "version", "section_versions", "evaluation",
                       "ruleset", "based_on", "created_by",
                       "created_at", "updated_at", "submitted_by", "submitted_at"]
    inlines = [MeasurementInline]

    def has_add_permission(self, request):
        return False

    def has_change_permission(self, request, obj=None):
        return obj is None or obj.is_draft

    def has_delete_permission(self, request, obj=None):
        return False
