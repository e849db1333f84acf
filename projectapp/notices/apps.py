from django.apps import AppConfig


class NoticesConfig(AppConfig):
    name = "projectapp.notices"
    default_auto_field = "django.db.models.BigAutoField"
    verbose_name = "Notifications"
