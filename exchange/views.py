"""Pages: upload a sheet -> dry-run report (map unknown columns once) -> confirm; template
and sheet downloads per kind; the notifications page; the calendar feed behind its secret.

Thin: every write is one service call (exchange.uploads, exchange.services).
"""

from __future__ import annotations

from django.contrib import messages
from django.contrib.auth.decorators import login_required
from django.core.exceptions import PermissionDenied, ValidationError
from django.http import Http404, HttpResponse
from django.shortcuts import get_object_or_404, redirect, render
from django.utils import timezone
from django.views.decorators.http import require_POST

from inventory.roles import MAKER, user_has_role

from . import services, uploads
from .calendar_feed import calendar_for
from .exporting import CSV_CONTENT_TYPE, XLSX_CONTENT_TYPE, kind_sheet, kind_template
from .kinds import KINDS, normalise
from .models import DigestPreference, SheetUpload
from .reminders import reminders_for
from .sheets import max_bytes

FORMATS = {"xlsx": XLSX_CONTENT_TYPE, "csv": CSV_CONTENT_TYPE}


def _kind_or_404(kind: str):
    spec = KINDS.get(kind)
    if spec is None:
        raise Http404(f"No record kind '{kind}'.")
    return spec


def _download(content: bytes, name: str, file_format: str) -> HttpResponse:
    if file_format not in FORMATS:
        raise Http404("Download as xlsx or csv.")
    response = HttpResponse(content, content_type=FORMATS[file_format])
    response["Content-Disposition"] = f'attachment; filename="{name}.{file_format}"'
    return response


def _errors_of(error: ValidationError) -> list[str]:
    if hasattr(error, "error_dict"):
        return [" ".join(e.messages) for items in error.error_dict.values() for e in items]
    return error.messages


@login_required
def index(request, *, errors=None, status=200, chosen_kind=""):
    return render(request, "exchange/index.html", {
        "kinds": KINDS.values(), "errors": errors or [], "can_import":
        user_has_role(request.user, MAKER), "chosen_kind": chosen_kind,
        "max_mb": max_bytes() // 2**20}, status=status)


@login_required
def template_download(request, kind: str, file_format: str):
    spec = _kind_or_404(kind)
    return _download(kind_template(spec, file_format=file_format) if file_format in FORMATS
                     else b"", f"{kind}-template", file_format)


@login_required
def sheet_download(request, kind: str, file_format: str):
    spec = _kind_or_404(kind)
    return _download(kind_sheet(spec, file_format=file_format) if file_format in FORMATS
                     else b"", kind, file_format)


def _report_page(request, upload, report, *, status=200):
    spec = KINDS[upload.kind]
    return render(request, "exchange/report.html", {
        "upload": upload, "report": report, "kind": spec,
        "fields": [(c.field, c.header) for c in spec.columns]}, status=status)


@login_required
@require_POST
def upload(request):
    kind = request.POST.get("kind", "")
    sheet = request.FILES.get("sheet")
    if kind not in KINDS:
        return index(request, errors=["Choose the kind of records the sheet holds."],
                     status=400)
    if sheet is None:
        return index(request, errors=["Choose a file to upload."], status=400,
                     chosen_kind=kind)
    if sheet.size > max_bytes():
        return index(request, errors=[f"{sheet.name} is {sheet.size / 2**20:.1f} MB; the limit "
                                      f"is {max_bytes() // 2**20} MB."], status=400,
                     chosen_kind=kind)
    try:
        stored, report = uploads.sheet_upload_check(actor=request.user, kind=kind,
                                                    file_name=sheet.name, content=sheet.read())
    except ValidationError as error:
        return index(request, errors=_errors_of(error), status=400, chosen_kind=kind)
    except PermissionDenied as error:
        return index(request, errors=[str(error)], status=403, chosen_kind=kind)
    return _report_page(request, stored, report)


def _own_upload(request, upload_id: int) -> SheetUpload:
    return get_object_or_404(SheetUpload, pk=upload_id, uploaded_by=request.user,
                             confirmed_at__isnull=True)


@login_required
@require_POST
def save_mapping(request, upload_id: int):
    stored = _own_upload(request, upload_id)
    mapping = {normalise(key[len("map:"):]): value for key, value in request.POST.items()
               if key.startswith("map:")}
    try:
        services.column_mapping_save(actor=request.user, kind=stored.kind, mapping=mapping)
        report = uploads.sheet_upload_recheck(actor=request.user, upload=stored)
    except ValidationError as error:
        return index(request, errors=_errors_of(error), status=400, chosen_kind=stored.kind)
    return _report_page(request, stored, report)


@login_required
@require_POST
def confirm(request, upload_id: int):
    stored = _own_upload(request, upload_id)
    try:
        report = uploads.sheet_upload_confirm(actor=request.user, upload=stored)
    except ValidationError as error:
        return index(request, errors=_errors_of(error), status=400, chosen_kind=stored.kind)
    if not report.committed:
        return _report_page(request, stored, report, status=400)
    return render(request, "exchange/done.html", {"upload": stored, "report": report,
                                                  "kind": KINDS[stored.kind]})


# ---------------------------------------------------------------------------------------
# Notifications: digest preference and calendar links
# ---------------------------------------------------------------------------------------

@login_required
def notifications(request):
    new_link = None
    if request.method == "POST":
        action = request.POST.get("action")
        try:
            if action == "digest":
                services.digest_preference_set(
                    actor=request.user, daily_digest=request.POST.get("daily_digest") == "on",
                    email=request.POST.get("email", "").strip())
                messages.success(request, "Digest preference saved.")
            elif action == "new_link":
                secret = services.calendar_secret_issue(actor=request.user)
                new_link = request.build_absolute_uri(f"/calendar/{secret}.ics")
            elif action == "revoke":
                count = services.calendar_secret_revoke_all(actor=request.user)
                messages.success(request, f"{count} calendar link(s) revoked.")
        except ValidationError as error:
            messages.error(request, "; ".join(_errors_of(error)))
        if new_link is None:
            return redirect("exchange:notifications")
    preference = DigestPreference.objects.filter(user=request.user).first()
    return render(request, "exchange/notifications.html", {
        "preference": preference, "new_link": new_link,
        "reminders": reminders_for(request.user, today=timezone.localdate()),
        "live_links": request.user.calendar_secrets.filter(revoked_at__isnull=True).count()})


def calendar(request, secret: str):
    """The feed needs no sign-in (calendar programs cannot): the secret is the key."""
    user = services.calendar_secret_owner(secret)
    if user is None:
        raise Http404("No such calendar.")
    response = HttpResponse(calendar_for(user, today=timezone.localdate()),
                            content_type="text/calendar; charset=utf-8")
    response["Cache-Control"] = "private, max-age=900"
    return response
