from django.apps import AppConfig


class SignoffConfig(AppConfig):
    name = "projectapp.signoff"
    label = "signoff"
    verbose_name = "Sign-off and archive"
