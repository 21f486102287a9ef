from django.apps import AppConfig


class RunsConfig(AppConfig):
    name = "chronology.runs"
    label = "runs"
    default_auto_field = "django.db.models.BigAutoField"

    def ready(self):
        # Register the run tasks in every process (web, worker, commands), so they can be sent by name.
        from django.core.signals import request_started

        from . import tasks  # noqa: F401
        from .sweeper import sweep_on_request

        # without a broker there is no beat: the first request of a process, and one now and then, sweeps
        request_started.connect(sweep_on_request, dispatch_uid="runs-sweep-on-request")
