from django.apps import AppConfig


class ProjectsConfig(AppConfig):
    name = "projects"
    verbose_name = "Projects and the field record"
    default_auto_field = "django.db.models.BigAutoField"
