from django.apps import AppConfig


class WeighingConfig(AppConfig):
    name = "chronology.weighing"
    label = "weighing"
    verbose_name = "Weighing by the evidence and sensitivity runs"

    def ready(self):
        # Register the tasks in every process (web, worker, commands), so they can be sent by name.
        from . import tasks  # noqa: F401
