"""Dashboard (open flags, quarantine, expiring, trends) and Stock (shelf and expiry)."""

from __future__ import annotations

from datetime import date

from django.contrib.auth.decorators import login_required
from django.shortcuts import render
from django.utils import timezone

from bench import page_queries
from inventory.models import Substrate

from ._common import PAGE_SIZE, int_param, paginate, table_download

DASHBOARD_DAYS = 14
DASHBOARD_ROWS = 25  # the rest is one click away on Stock; an uncapped list was too slow


@login_required
def home(request):
    today = timezone.localdate()
    expiring, _next, expiring_total = page_queries.expiring_page(
        DASHBOARD_DAYS, limit=DASHBOARD_ROWS, on_date=today)
    flags = page_queries.open_flags()
    context = {
        "today": today, "days": DASHBOARD_DAYS,
        "expiring": expiring, "expiring_total": expiring_total,
        "open_flags": list(flags[:DASHBOARD_ROWS]), "open_flag_total": flags.count(),
        "quarantine": page_queries.quarantine_counts(),
        "quarantined_substrates": list(page_queries.quarantine_records("substrate")
                                       [:DASHBOARD_ROWS]),
        "chart_kinds": Substrate.Stage.choices,
    }
    return render(request, "inventory/home.html", context)


def _expiring_after(text: str):
    """The page position ``eafter=YYYY-MM-DD~CODE``; anything else starts from the top."""
    day, _, code = text.partition("~")
    try:
        return (date.fromisoformat(day), code) if code else None
    except ValueError:
        return None


@login_required
def stock(request):
    today = timezone.localdate()
    days = int_param(request, "days", DASHBOARD_DAYS, low=0, high=3650)
    kinds = page_queries.shelf_kinds()
    kind = request.GET.get("kind", "substrate")
    if kind not in dict(kinds):
        kind = "substrate"
    location = request.GET.get("location", "").strip()
    shelf = page_queries.shelf_records(kind, today, location_code=location)
    download = table_download(request, f"stock-{kind}", shelf)
    if download is not None:
        return download
    after = _expiring_after(request.GET.get("eafter", ""))
    expiring, next_after, expiring_total = page_queries.expiring_page(
        days, after=after, limit=PAGE_SIZE, on_date=today)
    context = {
        "today": today, "days": days, "kinds": kinds, "kind": kind, "location": location,
        "summary": page_queries.shelf_summary(today),
        "shelf": paginate(request, shelf),
        "expiring": expiring, "expiring_total": expiring_total,
        "expiring_capped": expiring_total > page_queries.EXPIRING_COUNT_CAP,
        "expiring_from_start": after is None,
        "expiring_next": f"{next_after[0].isoformat()}~{next_after[1]}" if next_after else "",
        "beyond": page_queries.expiring_beyond(days, on_date=today),
    }
    return render(request, "inventory/stock.html", context)
