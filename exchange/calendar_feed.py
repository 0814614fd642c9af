"""A person's calendar (RFC 5545, built with the icalendar library): expiry dates of their
active stock and the colloid re-measurements scheduled for them, as all-day events.

UIDs are stable (record code + what), so a calendar program updates an event when a date
moves instead of adding a second one.
"""

from __future__ import annotations

from datetime import date, datetime, timedelta

from django.utils import timezone
from icalendar import Calendar, Event

from .reminders import expiring_for, remeasure_schedule_for

HORIZON_DAYS = 365
PRODUCT_ID = "-//sersledger//exchange calendar//EN"


def _event(uid: str, day: date, summary: str, description: str, stamp: datetime) -> Event:
    event = Event()
    event.add("uid", uid)
    event.add("dtstamp", stamp)
    event.add("dtstart", day)
    event.add("dtend", day + timedelta(days=1))
    event.add("summary", summary)
    event.add("description", description)
    event.add("transp", "TRANSPARENT")
    return event


def calendar_for(user, *, today: date) -> bytes:
    calendar = Calendar()
    calendar.add("prodid", PRODUCT_ID)
    calendar.add("version", "2.0")
    calendar.add("x-wr-calname", f"sersledger: {user.get_username()}")
    stamp = timezone.now()
    for item in expiring_for(user, today=today, days=HORIZON_DAYS):
        calendar.add_component(_event(f"{item.code}-expiry@sersledger", item.day,
                                      f"{item.code} expires", item.text, stamp))
    for item in remeasure_schedule_for(user):
        calendar.add_component(_event(f"{item.code}-remeasure-{item.day.isoformat()}@sersledger",
                                      item.day, f"Re-measure {item.code} (UV-vis)", item.text,
                                      stamp))
    return calendar.to_ical()
