"""Tenancy (organisations, roles, projects), device tokens and the field record."""

from .log import ChangeLogEntry, Revision
from .people_log import PeopleLogEntry
from .record import Context, RecordState, Relationship
from .tenancy import Membership, Organisation, Project, ProjectRole, Role
from .tokens import ApiToken
from .idempotency import IdempotencyRecord
from .sync import SyncBatch

__all__ = [
    "ApiToken",
    "ChangeLogEntry",
    "Context",
    "IdempotencyRecord",
    "Membership",
    "Organisation",
    "PeopleLogEntry",
    "Project",
    "ProjectRole",
    "RecordState",
    "Relationship",
    "Revision",
    "Role",
    "SyncBatch",
]
