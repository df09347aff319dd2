"""The spreadsheet import for the LSO: upload, see the dry run, confirm (registry.services.import_uploads)."""
from __future__ import annotations

from django.contrib import messages
from django.http import HttpResponse
from django.shortcuts import redirect, render
from django.views.decorators.http import require_POST

from registry import permissions
from registry.forms import LaserImportForm, submit_to_service
from registry.services.import_uploads import (
    STAGED_IMPORT_MAX_AGE,
    StagedImportRefused,
    laser_import_confirm,
    laser_import_stage,
)
from registry.services.laser_import import COLUMNS, ImportReport
from registry.views.access import PageRequest, page


def _render(request: PageRequest, form: LaserImportForm, report: ImportReport | None = None, token: str | None = None,
            status: int = 200) -> HttpResponse:
    outcomes = {action: [outcome for outcome in report.lasers if outcome.action == action] if report else []
                for action in ("create", "update", "unchanged")}
    return render(request, "pages/laser_import.html", {
        "form": form, "report": report, "token": token, "outcomes": outcomes,
        "columns": [column.name for column in COLUMNS],
        "minutes": int(STAGED_IMPORT_MAX_AGE.total_seconds() // 60),
    }, status=status)


@page(permissions.LASERS, "import")
def laser_import_upload(request: PageRequest) -> HttpResponse:
    """GET: the upload form. POST: the dry run of the uploaded sheet, with a confirmation when it has no problem."""
    if request.method != "POST":
        return _render(request, LaserImportForm())
    form = LaserImportForm(request.POST, request.FILES)
    staged = submit_to_service(form, lambda values: laser_import_stage(
        stream=values["file"], name=values["file"].name, size=values["file"].size, by=request.person,
        create_locations=values["create_locations"], session=request.session))
    if staged is None:
        return _render(request, form)
    return _render(request, LaserImportForm(), staged.report, staged.token)


@require_POST
@page(permissions.LASERS, "import")
def laser_import_confirmation(request: PageRequest) -> HttpResponse:
    """Import the sheet whose dry run was shown; refused (409) when that dry run cannot be confirmed any more."""
    try:
        report = laser_import_confirm(token=request.POST.get("token", ""), by=request.person, session=request.session)
    except StagedImportRefused as refusal:
        messages.error(request, str(refusal))
        return _render(request, LaserImportForm(), status=409)
    if report.written:
        messages.success(request, f"{report.source} imported: lasers created {report.count('create')}, updated "
                                  f"{report.count('update')}, unchanged {report.count('unchanged')}; locations "
                                  f"created {len(report.locations_created)}.")
        return redirect("register")
    if report.moved_since_dry_run:
        messages.warning(request, "The register changed since the dry run, so nothing was written. This is what the "
                                  "import would do now: confirm again, or upload the file again.")
        return _render(request, LaserImportForm(), report, request.POST["token"])
    messages.error(request, "The register changed since the dry run and the sheet now has problems; nothing was "
                            "written.")
    return _render(request, LaserImportForm(), report)
