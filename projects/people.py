"""People and devices of an organisation: memberships, roles and device tokens.

The one path for these changes, used by the API and the web pages alike.
Each action checks the actor may take it, writes, and logs a
``PeopleLogEntry`` (actor, request id, before/after) in one transaction.

Rules (the API's roles): anyone issues and revokes their own tokens; a
manager of an organisation revokes any token of its members (a lost
tablet) and adds people, sets their roles and removes them.
"""

from __future__ import annotations

from django.contrib.auth import get_user_model
from django.db import transaction
from django.utils import timezone

from projects.models import ApiToken, Membership, Organisation, PeopleLogEntry, Role
from projects.record.errors import RecordConflict, RecordInvalid, RecordNotFound

__all__ = [
    "NotPermitted",
    "is_manager",
    "issue_token",
    "revoke_token",
    "tokens_visible_to",
    "add_member",
    "set_role",
    "remove_member",
]


class NotPermitted(RecordInvalid):
    status = 403
    code = "permission-denied"


def _role(user, organisation) -> str | None:
    return Membership.objects.filter(user=user, organisation=organisation).values_list("role", flat=True).first()


def is_manager(user, organisation) -> bool:
    return bool(getattr(user, "is_superuser", False)) or Role.rank(_role(user, organisation)) >= Role.rank(Role.MANAGER)


def _log(organisation, actor, action: str, subject, repr_: str, *, before=None, after=None, request_id: str = ""):
    return PeopleLogEntry.objects.create(
        organisation=organisation, created_at=timezone.now(), user=actor, user_name=actor.get_username(),
        request_id=request_id, action=action, subject=subject, subject_name=subject.get_username() if subject else "",
        object_repr=repr_[:200], before=before, after=after,
    )


def _token_repr(token: ApiToken) -> dict:
    return {"id": token.pk, "name": token.name, "prefix": token.prefix, "user": token.user.get_username(),
            "revoked_at": token.revoked_at.isoformat() if token.revoked_at else None}


def _owner_organisations(user):
    return list(Organisation.objects.filter(memberships__user=user).order_by("slug"))


def issue_token(user, name: str, *, request_id: str = "") -> tuple[ApiToken, str]:
    """A new named device token of ``user`` and its key (the only time the key is known)."""
    name = (name or "").strip()
    if not name:
        raise RecordInvalid("a token needs a name, e.g. 'trench tablet 2'", field="name", code="required")
    if len(name) > 100:
        raise RecordInvalid("a token name has at most 100 characters", field="name", code="max-length")
    with transaction.atomic():
        token, key = ApiToken.issue(user, name)
        for org in _owner_organisations(user):
            _log(org, user, "people.token.created", user, f"token {token}", after=_token_repr(token),
                 request_id=request_id)
    return token, key


def tokens_visible_to(user, organisation=None):
    """The caller's own tokens, plus every member's when the caller manages ``organisation``."""
    own = ApiToken.objects.filter(user=user)
    if organisation is None or not is_manager(user, organisation):
        return own.select_related("user").order_by("id")
    members = Membership.objects.filter(organisation=organisation).values("user_id")
    return ApiToken.objects.filter(user_id__in=members).select_related("user").order_by("user__username", "id")


def revoke_token(actor, token_id, *, organisation=None, request_id: str = "") -> ApiToken:
    """Revoke a token: one's own, or any member's as a manager of ``organisation``.

    A token the actor may not touch is reported as not found, as the API does
    for what lies outside the caller's reach.
    """
    with transaction.atomic():
        token = tokens_visible_to(actor, organisation).select_for_update(of=("self",)).filter(pk=token_id).first()
        if token is None:
            raise RecordNotFound(f"no token {token_id}")
        if token.revoked_at is not None:
            return token
        before = _token_repr(token)
        token.revoke()
        for org in _owner_organisations(token.user):
            _log(org, actor, "people.token.revoked", token.user, f"token {token}", before=before,
                 after=_token_repr(token), request_id=request_id)
    return token


def _require_manager(actor, organisation) -> None:
    if not is_manager(actor, organisation):
        raise NotPermitted(f"only managers of {organisation.name} change its people")


def _check_role(role: str) -> str:
    if role not in Role.values:
        raise RecordInvalid(f"unknown role {role!r}", field="role", code="invalid-choice", choices=list(Role.values))
    return role


def add_member(actor, organisation, username: str, role: str, *, password: str = "", request_id: str = ""):
    """Add a person to ``organisation`` with ``role``; a new user is made when ``password`` is given."""
    _require_manager(actor, organisation)
    _check_role(role)
    username = (username or "").strip()
    if not username:
        raise RecordInvalid("name the person's user name", field="username", code="required")
    User = get_user_model()
    with transaction.atomic():
        user = User.objects.filter(username=username).first()
        if user is None:
            if not password:
                raise RecordNotFound(f"no user {username!r}; give a first password to create one", field="username")
            user = User.objects.create_user(username=username, password=password)
        if Membership.objects.filter(user=user, organisation=organisation).exists():
            raise RecordConflict(f"{username} is already a member", code="already-member", field="username")
        membership = Membership.objects.create(user=user, organisation=organisation, role=role)
        _log(organisation, actor, "people.membership.added", user, f"{username} as {role}",
             after={"role": role}, request_id=request_id)
    return membership


def _membership(organisation, membership_id) -> Membership:
    found = (Membership.objects.select_for_update().select_related("user")
             .filter(organisation=organisation, pk=membership_id).first())
    if found is None:
        raise RecordNotFound(f"no member {membership_id} in {organisation.name}")
    return found


def _keeps_a_manager(organisation, membership: Membership, new_role: str | None) -> None:
    if membership.role != Role.MANAGER or new_role == Role.MANAGER:
        return
    others = Membership.objects.filter(organisation=organisation, role=Role.MANAGER).exclude(pk=membership.pk)
    if not others.exists():
        raise RecordConflict("an organisation keeps at least one manager", code="last-manager")


def set_role(actor, organisation, membership_id, role: str, *, request_id: str = "") -> Membership:
    _require_manager(actor, organisation)
    _check_role(role)
    with transaction.atomic():
        membership = _membership(organisation, membership_id)
        if membership.role == role:
            return membership
        _keeps_a_manager(organisation, membership, role)
        before = {"role": membership.role}
        membership.role = role
        membership.save(update_fields=["role"])
        _log(organisation, actor, "people.membership.role_changed", membership.user,
             f"{membership.user.get_username()} as {role}", before=before, after={"role": role},
             request_id=request_id)
    return membership


def remove_member(actor, organisation, membership_id, *, request_id: str = "") -> None:
    """Remove a person from the organisation (their user and tokens stay; their access here ends)."""
    _require_manager(actor, organisation)
    with transaction.atomic():
        membership = _membership(organisation, membership_id)
        _keeps_a_manager(organisation, membership, None)
        user, role = membership.user, membership.role
        membership.delete()
        _log(organisation, actor, "people.membership.removed", user, f"{user.get_username()} removed",
             before={"role": role}, request_id=request_id)
