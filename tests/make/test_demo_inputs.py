"""After load_demo every Make form can be tried at once: each required choice of a record
offers at least one usable record (a released template, colloid, substrate …)."""

from __future__ import annotations

import pytest
from django.contrib.auth import get_user_model
from django.core.management import call_command

from bench.make.steps import STEPS


@pytest.fixture
def demo_maker(db, today):
    call_command("load_demo")
    return get_user_model().objects.get(username="rin.okafor")


def test_every_make_form_offers_a_usable_input_after_the_demo(demo_maker):
    empty = []
    for step in STEPS:
        form = step.form_class(user=demo_maker)
        for name, field in form.fields.items():
            queryset = getattr(field, "queryset", None)
            if queryset is not None and field.required and not queryset.exists():
                empty.append(f"{step.slug}.{name}")
    assert not empty, f"Make choices with nothing usable in the demo: {empty}"
