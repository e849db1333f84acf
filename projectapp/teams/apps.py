from django.apps import AppConfig


class TeamsConfig(AppConfig):
    name = "projectapp.teams"
    label = "teams"
    verbose_name = "Teams and roles"
