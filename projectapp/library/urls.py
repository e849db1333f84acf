from django.urls import path

from projectapp.library import views
from projectapp.library.parts import ANTENNA, MODULE

urlpatterns = [
    path("library/", views.library_index, name="library_index"),
    path("library/<int:team_id>/", views.library_list, name="library_list"),
    path("library/<int:team_id>/antennas/new/", views.entry_create, {"kind": ANTENNA}, name="library_antenna_create"),
    path("library/<int:team_id>/modules/new/", views.entry_create, {"kind": MODULE}, name="library_module_create"),
    path("library/<int:team_id>/library.json", views.library_export, name="library_export"),
    path("library/<int:team_id>/import/", views.library_import, name="library_import"),
    path("library/entries/<int:entry_id>/", views.entry_detail, name="library_entry"),
    path("library/entries/<int:entry_id>/duplicate/", views.entry_duplicate, name="library_entry_duplicate"),
    path("library/entries/<int:entry_id>/retire/", views.entry_retire, name="library_entry_retire"),
    path("library/entries/<int:entry_id>/files/add/", views.entry_file_add, name="library_file_add"),
    path("library/entries/<int:entry_id>/files/remove/", views.entry_file_remove, name="library_file_remove"),
    path("library/entries/<int:entry_id>/files/<int:file_id>/", views.entry_file_download,
         name="library_file_download"),
]
