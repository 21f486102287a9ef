from django.apps import AppConfig


class DemoConfig(AppConfig):
    """Holds the ``demo`` management command; the demo has no models of its own."""

    name = "demo"
    verbose_name = "Demo site"
