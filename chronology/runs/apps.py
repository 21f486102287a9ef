from django.apps import AppConfig


class RunsConfig(AppConfig):
    name = "chronology.runs"
    label = "runs"
    default_auto_field = "django.db.models.BigAutoField"

    def ready(self):
        # Register the run tasks in every process (web, worker, commands), so they can be sent by name.
        from . import tasks  # noqa: F401
