from django.urls import path

from projectapp.signoff import views

urlpatterns = [
    path("products/<int:product_id>/revisions/<int:number>/signoff/", views.signoff_page, name="signoff_page"),
    path("products/<int:product_id>/revisions/<int:number>/signoff/sign/", views.signoff_sign, name="signoff_sign"),
    path("products/<int:product_id>/revisions/<int:number>/record/", views.revision_record, name="revision_record"),
    path("archive/", views.archive_list, name="archive_list"),
    path("archive/verify/", views.verify, name="archive_verify"),
    path("archive/<int:record_id>/", views.record_detail, name="record_detail"),
    path("archive/<int:record_id>/download/", views.record_download, name="record_download"),
    path("archive/<int:record_id>/pack/", views.record_pack, name="record_pack"),
]
