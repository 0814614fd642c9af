"""Expose the signed-in user's roles to templates, so pages show only usable controls.

The views still refuse actions for the wrong role (and the services check again); hiding a
button is a courtesy, not the guard.
"""

from __future__ import annotations

from django.utils.functional import SimpleLazyObject

from inventory.roles import ADMINISTRATOR, MAKER, REVIEWER, ROLES, roles_of


def user_roles(request) -> dict:
    """``roles`` (set of role names) and ``can_make`` / ``can_review`` / ``can_administer``.

    Lazy: a page that never asks costs no query.
    """
    roles = SimpleLazyObject(lambda: _Roles(roles_of(getattr(request, "user", None))))
    return {"roles": roles}


class _Roles:
    """Template-friendly view of a role set: ``{% if roles.review %}``."""

    def __init__(self, held: set[str]):
        self.held = frozenset(held)

    @property
    def make(self) -> bool:
        return MAKER in self.held

    @property
    def review(self) -> bool:
        return REVIEWER in self.held

    @property
    def administer(self) -> bool:
        return ADMINISTRATOR in self.held

    def __contains__(self, role: str) -> bool:
        return role in self.held

    def __str__(self) -> str:
        """The highest role held (roles are cumulative), or "no role"."""
        held = [role for role in ROLES if role in self.held]
        return held[-1] if held else "no role"
