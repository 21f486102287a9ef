"""What the record tells the apps built on it, inside the writing transaction.

The record knows nothing of the apps above it; an app that keeps objects
tied to a context connects a receiver here (in its ``AppConfig.ready``)
and changes them in the same ``ChangeSet``, so they go in the same revision
or not at all.
"""

from __future__ import annotations

from django.dispatch import Signal

#: Sent by ``retract_context`` before the context's own retraction is logged,
#: inside the revision's transaction, with ``changes`` (the ``ChangeSet``),
#: ``context`` and ``reason``.  A receiver that raises refuses the retraction.
context_retracting = Signal()
