from django.apps import AppConfig


class LibraryConfig(AppConfig):
    name = "projectapp.library"
    label = "library"
    verbose_name = "Parts library"
