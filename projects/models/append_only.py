"""Guards that make log-like tables append-only at the ORM level.

A row may be created; afterwards only the fields named in
``updatable_fields`` may change (for a temporal table, closing the validity
interval), and only from empty to a value.  Deleting raises.
"""

from __future__ import annotations

from django.db import models


class AppendOnlyViolation(Exception):
    """An attempt to edit or delete a row of an append-only table."""


class AppendOnlyQuerySet(models.QuerySet):
    updatable_fields: frozenset[str] = frozenset()

    def delete(self):
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
        if self.pk is not None and not self._state.adding:
            update_fields = kwargs.get("update_fields")
            if not update_fields or set(update_fields) - set(self.updatable_fields):
                raise AppendOnlyViolation(f"{type(self).__name__} rows are never edited")
        super().save(*args, **kwargs)

    def delete(self, *args, **kwargs):
        raise AppendOnlyViolation(f"{type(self).__name__} rows are never deleted")
