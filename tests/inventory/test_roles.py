"""The four roles of DESIGN §7 are cumulative groups; a superuser holds them all."""

import pytest

from inventory.roles import ROLES, ensure_role_groups, roles_of, user_has_role


@pytest.fixture
def groups(db):
    return {group.name: group for group in ensure_role_groups()}


def test_groups_are_created_once(groups):
    from django.contrib.auth.models import Group

    ensure_role_groups()
    assert sorted(Group.objects.values_list("name", flat=True)) == sorted(ROLES)


def test_roles_are_cumulative(groups, django_user_model):
    reviewer = django_user_model.objects.create_user("rev", password="pw-review-123456")
    reviewer.groups.add(groups["reviewer"])
    assert roles_of(reviewer) == {"viewer", "maker", "reviewer"}
    assert user_has_role(reviewer, "maker") and not user_has_role(reviewer, "administrator")


def test_no_group_inactive_and_superuser(groups, django_user_model):
    nobody = django_user_model.objects.create_user("nobody", password="pw-nobody-123456")
    assert roles_of(nobody) == set()
    boss = django_user_model.objects.create_superuser("boss", password="pw-boss-1234567")
    assert roles_of(boss) == set(ROLES)
    boss.is_active = False
    assert roles_of(boss) == set()


def test_unknown_role_is_refused(groups, django_user_model):
    user = django_user_model.objects.create_user("u", password="pw-user-12345678")
    with pytest.raises(ValueError, match="Unknown role"):
        user_has_role(user, "owner")


def test_the_migration_created_the_groups(db):
    """The data migration (inventory 0003) makes the groups without anyone calling
    ensure_role_groups()."""
    from django.contrib.auth.models import Group

    assert set(ROLES) <= set(Group.objects.values_list("name", flat=True))
