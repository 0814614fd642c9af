"""Shared fixtures: state is always built through the product's own service functions."""

from __future__ import annotations

from datetime import date, timedelta
from pathlib import Path

import pytest

CHRONOAMPEROGRAMS = Path(__file__).resolve().parents[1] / "fixtures" / "chronoamperograms"
TODAY = date(2026, 6, 15)


@pytest.fixture(autouse=True)
def _empty_cache():
    """Every test starts with an empty cache: codes and digests repeat from test to test, so
    a plot rendered in one would otherwise be served in the next."""
    from django.core.cache import cache

    cache.clear()


@pytest.fixture
def today(monkeypatch):
    """Freeze the service layer's idea of today so dates in tests are exact."""
    from django.utils import timezone

    monkeypatch.setattr(timezone, "localdate", lambda *a, **k: TODAY)
    return TODAY


# Passwords of the role fixtures, for tests that re-enter them (signatures, login).
PASSWORDS = {
    "viewer": "pw-viewer-123456",
    "maker": "pw-maker-123456",
    "reviewer": "pw-review-123456",
    "administrator": "pw-admin-123456",
}


def user_with_role(django_user_model, role: str, username: str | None = None):
    """A user holding ``role`` (and, roles being cumulative, every role below it)."""
    from django.contrib.auth.models import Group

    from inventory.roles import ensure_role_groups

    ensure_role_groups()
    user = django_user_model.objects.create_user(username or role, password=PASSWORDS[role])
    user.groups.add(Group.objects.get(name=role))
    return user


@pytest.fixture
def viewer(django_user_model):
    return user_with_role(django_user_model, "viewer")


@pytest.fixture
def maker(django_user_model):
    return user_with_role(django_user_model, "maker")


@pytest.fixture
def reviewer(django_user_model):
    return user_with_role(django_user_model, "reviewer")


@pytest.fixture
def administrator(django_user_model):
    return user_with_role(django_user_model, "administrator")


class ChainBuilder:
    """Builds records through inventory.services, releasing what a test wants released."""

    def __init__(self, maker, reviewer, today):
        from inventory import services

        self.s = services
        self.maker = maker
        self.reviewer = reviewer
        self.today = today

    def day(self, days_ago: int) -> date:
        return self.today - timedelta(days=days_ago)

    def release(self, record):
        """Set-up release by the system: no QC or signature needed (tests of those sign)."""
        return self.s.record_transition(actor=None, record=record, to_status="released")

    def signed_release(self, record, meaning="approved"):
        """The reviewer's release as a person does it: an electronic signature."""
        from inventory.signatures import SignatureIntent

        return self.s.record_release(actor=self.reviewer, record=record, signature=SignatureIntent(
            password=PASSWORDS["reviewer"], meaning=meaning))

    def signed_reject(self, record, reason):
        from inventory.signatures import SignatureIntent

        return self.s.record_reject(actor=self.reviewer, record=record, reason=reason,
                                    signature=SignatureIntent(password=PASSWORDS["reviewer"],
                                                              meaning="rejected"))

    def lot(self, kind="plating_bath", days_ago=30, release=True, **extra):
        lot = self.s.reagent_lot_receive(actor=self.maker, name=f"{kind} lot", kind=kind,
                                         received_on=self.day(days_ago), **extra)
        return self.release(lot) if release else lot

    def spheres(self, days_ago=30, release=True, diameter_nm=500):
        lot = self.s.sphere_lot_receive(actor=self.maker, material="polystyrene",
                                        nominal_diameter_nm=diameter_nm, solids_percent_w_v=10,
                                        received_on=self.day(days_ago))
        return self.release(lot) if release else lot

    def template(self, spheres=None, slides=None, days_ago=10, release=True):
        template = self.s.template_assemble(
            actor=self.maker, sphere_lot=spheres or self.spheres(),
            base_slide_lot=slides or self.lot("base_slide"), method="interface_transfer",
            slide_area_cm2=2.0, made_on=self.day(days_ago))
        return self.release(template) if release else template

    def run(self, pieces=2, days_ago=9, template=None, bath=None):
        return self.s.deposition_run_record(
            actor=self.maker, template=template or self.template(days_ago=days_ago + 1),
            bath_lot=bath or self.lot("plating_bath"), metal="Au", electrons_per_atom=1,
            mode="potentiostatic", electrode_area_cm2=1.0, made_on=self.day(days_ago),
            pieces=pieces)

    def measured_run(self, *, diameter_nm=600, filename="au_600nm_hd050.csv", target=0.50,
                     pieces=1):
        """A run through ``diameter_nm`` spheres, planned for h/D ``target``, with an invented
        chronoamperogram of fixtures/chronoamperograms attached (its README gives the h/D
        each file was made for, through 600 nm spheres on 1.00 cm²)."""
        path = CHRONOAMPEROGRAMS / filename
        return self.s.deposition_run_record(
            actor=self.maker, template=self.template(spheres=self.spheres(
                diameter_nm=diameter_nm)), bath_lot=self.lot("plating_bath"), metal="Au",
            electrons_per_atom=1, mode="potentiostatic", electrode_area_cm2=1.0,
            made_on=self.day(9), pieces=pieces, target_height_over_diameter=target,
            chronoamperogram=(path.name, path.read_bytes()))

    def batch(self, days_ago=5, release=True, sources=()):
        batch = self.s.nanoparticle_batch_make(actor=self.maker, metal="Ag",
                                               synthesis_method="citrate", volume_mL=50,
                                               made_on=self.day(days_ago), source_lots=sources)
        return self.release(batch) if release else batch

    def decorated_substrate(self, linker_days_ago=2, batch=None, linker_lot=None):
        """Run → piece → linker layer → particles; the piece is released."""
        from inventory.models import Substrate

        _run, pieces = self.run(pieces=1, days_ago=linker_days_ago + 3)
        piece = pieces[0]
        self.s.linker_layer_apply(actor=self.maker, linker_lot=linker_lot
                                  or self.lot("linker_thiol"), substrates=[piece],
                                  concentration_mM=1, immersion_h=12,
                                  made_on=self.day(linker_days_ago))
        batch = batch or self.batch(days_ago=linker_days_ago + 1)
        piece = Substrate.objects.get(pk=piece.pk)
        self.s.particle_attach(actor=self.maker, substrate=piece, batch=batch, immersion_min=30,
                               made_on=self.day(max(linker_days_ago - 1, 0)))
        return self.release(Substrate.objects.get(pk=piece.pk))


@pytest.fixture
def chain(db, maker, reviewer, today):
    return ChainBuilder(maker, reviewer, today)
