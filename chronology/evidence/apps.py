from django.apps import AppConfig


class EvidenceConfig(AppConfig):
    name = "chronology.evidence"
    label = "evidence"
    default_auto_field = "django.db.models.BigAutoField"

    def ready(self):
        from projects.record.hooks import context_retracting

        # The record offers the hook; evidence hangs on contexts, so it answers it.
        context_retracting.connect(_retract_evidence, dispatch_uid="evidence-retract-with-context")


def _retract_evidence(sender, *, changes, context, reason, **kwargs):
    from .writes import retract_for_context

    retract_for_context(changes, context, reason)
