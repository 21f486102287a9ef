from django.apps import AppConfig


class ExchangeConfig(AppConfig):
    name = "exchange"
    label = "exchange"
    verbose_name = "Archive and exchange"
    default_auto_field = "django.db.models.BigAutoField"
