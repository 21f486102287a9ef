"""Models of the chronology app: background jobs and stored order checks.

Evidence, curves, interpretations and runs live in their own apps under
``chronology/`` (``chronology.evidence``, ``chronology.interpretations``,
``chronology.runs``) so each keeps its own migrations.
"""

from .jobs import Job, JobState
from .checks import CheckReport

__all__ = ["CheckReport", "Job", "JobState"]
