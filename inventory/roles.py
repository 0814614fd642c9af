"""The four roles of DESIGN §7 as Django groups, and the one question ``user_has_role``.

Roles are cumulative: a reviewer may do what a maker does, an administrator what a reviewer
does.  A superuser holds every role.  The groups are created by ``ensure_role_groups()``
(idempotent), which a data migration or the demo loader calls.
"""

from __future__ import annotations

from django.contrib.auth.models import Group
from django.core.exceptions import PermissionDenied

VIEWER = "viewer"
MAKER = "maker"
REVIEWER = "reviewer"
ADMINISTRATOR = "administrator"

# Lowest first: each role includes the ones before it.
ROLES: tuple[str, ...] = (VIEWER, MAKER, REVIEWER, ADMINISTRATOR)

ROLE_DUTIES = {
    VIEWER: "reads records, readiness, lineage and flags",
    MAKER: "records lots, fabrication steps and instrument files; raises flags",
    REVIEWER: "releases, rejects and holds records; resolves flags",
    ADMINISTRATOR: "edits the lab's limits and shelf-life rules",
}


class RoleRequired(PermissionDenied):
    """A refusal for want of a role; carries the role so a page can say who holds it."""

    def __init__(self, message: str, *, role: str):
        super().__init__(message)
        self.role = role


def role_holders(role: str) -> list[str]:
    """Usernames of the active people who hold ``role`` (directly or by a higher role)."""
    from django.contrib.auth import get_user_model

    names = ROLES[ROLES.index(role):]
    return sorted(set(get_user_model().objects.filter(is_active=True)
                      .filter(groups__name__in=names).values_list("username", flat=True)))


def ensure_role_groups() -> list[Group]:
    """Create the four role groups if missing; returns them lowest first."""
    return [Group.objects.get_or_create(name=name)[0] for name in ROLES]


def roles_of(user) -> set[str]:
    """Every role ``user`` holds, including those implied by a higher one."""
    if user is None or not user.is_authenticated or not user.is_active:
        return set()
    if user.is_superuser:
        return set(ROLES)
    held = set(user.groups.filter(name__in=ROLES).values_list("name", flat=True))
    if not held:
        return set()
    highest = max(ROLES.index(name) for name in held)
    return set(ROLES[: highest + 1])


def user_has_role(user, role: str) -> bool:
    """True when ``user`` holds ``role`` or a higher one."""
    if role not in ROLES:
        raise ValueError(f"Unknown role '{role}'; roles are {', '.join(ROLES)}.")
    return role in roles_of(user)


def require_role(user, role: str, *, action: str) -> None:
    """Refuse ``action`` unless ``user`` holds ``role``.

    The one check services, pages and API share.

    Raises Django's ``PermissionDenied`` (HTTP 403 in pages and API) naming the action and
    the role it needs.  ``user=None`` stands for the system itself (data migrations, the demo
    loader) and is allowed.
    """
    if user is None:
        return
    if not user_has_role(user, role):
        held = ", ".join(sorted(roles_of(user))) or "none"
        raise RoleRequired(f"{action} needs the {role} role; {user.get_username()} holds {held}.",
                           role=role)
