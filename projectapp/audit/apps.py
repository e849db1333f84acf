from django.apps import AppConfig


class AuditConfig(AppConfig):
    name = "projectapp.audit"
    label = "audit"
    verbose_name = "Audit trail"
