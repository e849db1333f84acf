from django.urls import path

from projectapp.designs import views

urlpatterns = [
    path("", views.product_list, name="product_list"),
    path("products/new/", views.product_create, name="product_create"),
    path("products/<int:product_id>/", views.product_detail, name="product_detail"),
    path("products/<int:product_id>/draft/", views.draft_edit, name="draft_edit"),
    path("products/<int:product_id>/draft/start/", views.draft_start, name="draft_start"),
    path("products/<int:product_id>/draft/submit/", views.draft_submit, name="draft_submit"),
    path("products/<int:product_id>/draft/measurements/upload/", views.measurement_upload,
         name="measurement_upload"),
    path("products/<int:product_id>/draft/measurements/ports/", views.measurement_ports, name="measurement_ports"),
    path("products/<int:product_id>/draft/measurements/remove/", views.measurement_remove,
         name="measurement_remove"),
    path("products/<int:product_id>/draft/measurements/far-field/", views.measurement_pattern_upload,
         name="measurement_pattern_upload"),
    path("products/<int:product_id>/draft/measurements/far-field/change/", views.measurement_pattern_update,
         name="measurement_pattern_update"),
    path("products/<int:product_id>/draft/library-update/", views.draft_library_update, name="draft_library_update"),
    path("products/<int:product_id>/draft/<slug:section>/", views.draft_section_save, name="draft_section_save"),
    path("products/<int:product_id>/import/", views.design_import, name="design_import"),
    path("products/<int:product_id>/revisions/<int:number>/", views.revision_detail, name="revision_detail"),
    path("products/<int:product_id>/revisions/<int:number>/coverage/", views.revision_coverage,
         name="revision_coverage"),
    path("products/<int:product_id>/revisions/<int:number>/design.json", views.revision_export,
         name="revision_export"),
    path("products/<int:product_id>/revisions/<int:number>/placement.svg", views.revision_placement_svg,
         name="revision_placement_svg"),
    path("rules/", views.rule_list, name="rule_list"),
]
