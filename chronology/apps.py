from django.apps import AppConfig


class ChronologyConfig(AppConfig):
    name = "chronology"
    verbose_name = "Chronology: evidence, interpretations, models and runs"
    default_auto_field = "django.db.models.BigAutoField"
