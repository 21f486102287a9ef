from django.apps import AppConfig


class InterpretationsConfig(AppConfig):
    name = "chronology.interpretations"
    label = "interpretations"
    default_auto_field = "django.db.models.BigAutoField"
