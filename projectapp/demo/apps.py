from django.apps import AppConfig


class DemoConfig(AppConfig):
    """The invented demo company (`manage.py seed_demo`). It drives every app's services, so it sits on top of
    the layers, above sign-off; nothing imports it."""

    name = "projectapp.demo"
    label = "demo"
    verbose_name = "Demo data"
