"""The daily digest: one e-mail per person who opted in and has something to hear about.

Django's mail framework sends it (console backend in development, SMTP by settings);
``manage.py send_digest`` runs it from cron or a systemd timer (README, "Daily digest").
A person is sent one digest per day at most (``DigestPreference.last_sent_on``).
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import date

from django.conf import settings
from django.core.mail import EmailMessage, get_connection

from .models import DigestPreference
from .reminders import Reminders, reminders_for


@dataclass(frozen=True)
class Digest:
    preference: DigestPreference
    address: str
    reminders: Reminders

    def subject(self, today: date) -> str:
        return f"sersledger digest {today.isoformat()}: {len(self.reminders)} item(s)"

    def body(self, today: date) -> str:
        lines = [f"Good morning {self.preference.user.get_username()},", "",
                 f"what needs you on {today.isoformat()}:"]
        for name, title in Reminders.SECTIONS:
            items = getattr(self.reminders, name)
            if items:
                lines += ["", f"{title} ({len(items)}):", *(f"  - {r.text}" for r in items)]
        lines += ["", "Check each lot against its safety data sheet before use or disposal.",
                  "Change or stop this digest on your notifications page."]
        return "\n".join(lines) + "\n"


def digests_due(*, today: date) -> list[Digest]:
    """Digests for active, opted-in people with an address and at least one item."""
    digests = []
    preferences = DigestPreference.objects.select_related("user").filter(
        daily_digest=True, user__is_active=True).order_by("user__username")
    for preference in preferences:
        address = preference.email or preference.user.email
        if not address or preference.last_sent_on == today:
            continue
        reminders = reminders_for(preference.user, today=today)
        if len(reminders):
            digests.append(Digest(preference, address, reminders))
    return digests


def send_digests(*, today: date, dry_run: bool = False) -> list[Digest]:
    digests = digests_due(today=today)
    if dry_run:
        return digests
    with get_connection() as connection:
        for digest in digests:
            EmailMessage(digest.subject(today), digest.body(today),
                         settings.DEFAULT_FROM_EMAIL, [digest.address],
                         connection=connection).send()
            DigestPreference.objects.filter(pk=digest.preference.pk).update(last_sent_on=today)
    return digests
