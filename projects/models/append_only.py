"""Guards that make log-like tables append-only at the ORM level.

A row may be created; afterwards only the fields named in
``updatable_fields`` may change (for a temporal table, closing the validity
interval), and only from empty to a value.  Deleting raises.  Each model
also names this queryset's manager as its base manager, so Django's
internal ``_base_manager`` is guarded too.  What the ORM cannot see (a bare
``QuerySet(Model)``, raw SQL) PostgreSQL refuses with triggers (migration
``0004_history_protected``).
"""

from __future__ import annotations

from django.db import models


class AppendOnlyViolation(Exception):
    """An attempt to edit or delete a row of an append-only table."""


class AppendOnlyQuerySet(models.QuerySet):
    updatable_fields: frozenset[str] = frozenset()

    def delete(self):
        raise AppendOnlyViolation(f"{self.model.__name__} rows are never deleted")

    def _raw_delete(self, using):
        raise AppendOnlyViolation(f"{self.model.__name__} rows are never deleted")

    def update(self, **kwargs):
        forbidden = set(kwargs) - set(self.updatable_fields)
        if forbidden:
            raise AppendOnlyViolation(f"{self.model.__name__} fields {sorted(forbidden)} are immutable")
        # Closing is allowed only where still open, so a closed row stays as it was.
        open_rows = self.filter(**{f"{name}__isnull": True for name in kwargs})
        return models.QuerySet.update(open_rows, **kwargs)


class AppendOnlyModel(models.Model):
    updatable_fields: frozenset[str] = frozenset()

    class Meta:
        abstract = True

    def save(self, *args, **kwargs):
        if self.pk is None or self._state.adding:
            return super().save(*args, **kwargs)
        update_fields = kwargs.get("update_fields")
        if not update_fields or set(update_fields) - set(self.updatable_fields):
            raise AppendOnlyViolation(f"{type(self).__name__} rows are never edited")
        # Through the guarded queryset, so only a still-open field is filled in.
        values = {name: getattr(self, name) for name in update_fields}
        if not type(self).objects.filter(pk=self.pk).update(**values):
            raise AppendOnlyViolation(f"{type(self).__name__} {self.pk} is closed and cannot change")

    def delete(self, *args, **kwargs):
        raise AppendOnlyViolation(f"{type(self).__name__} rows are never deleted")
