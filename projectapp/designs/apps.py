from django.apps import AppConfig


class DesignsConfig(AppConfig):
    name = "projectapp.designs"
    label = "designs"
    verbose_name = "Designs"
