"""Deleting clients, sites, assets, thermograms and findings (confirmed), and restoring them.

A delete asks for confirmation on its own page, and a deleted row can be restored from the
Deleted items page until the retention period ends (`manage.py purge_deleted`).
"""

from django.contrib import messages
from django.contrib.auth.decorators import login_required
from django.core.exceptions import ValidationError
from django.http import HttpRequest, HttpResponse
from django.shortcuts import redirect, render
from django.urls import reverse
from django.views.decorators.http import require_POST

from survey.access import (
    deleted_surveys_for,
    get_asset_for_user,
    get_client_for_user,
    get_deleted_item_for_user,
    get_finding_for_user,
    get_member,
    get_site_for_user,
    get_thermogram_for_user,
    require_editor,
)
from survey.forms.fields import submitted
from survey.forms.register import ConfirmForm
from survey.services import deletion


def _confirm_delete(request, *, item, kind: str, service, back: str, after: str, consequences):
    """The confirmation page of a delete, and the delete once confirmed."""
    require_editor(get_member(request))
    form = ConfirmForm(submitted(request))
    if request.method == "POST" and form.is_valid():
        try:
            service(**{kind: item, "user": request.user})
        except ValidationError as error:
            messages.error(request, " ".join(error.messages))
            return redirect(back)
        messages.success(request, f"{item} deleted. It can be restored from Deleted items.")
        return redirect(after)
    context = {
        "item": item,
        "kind": kind,
        "form": form,
        "back": back,
        "consequences": consequences,
    }
    return render(request, "survey/register/confirm_delete.html", context)


@login_required
def client_delete(request: HttpRequest, pk: int) -> HttpResponse:
    client = get_client_for_user(request, pk)
    return _confirm_delete(
        request,
        item=client,
        kind="client",
        service=deletion.client_delete,
        back=reverse("survey:client", args=[client.pk]),
        after=reverse("survey:clients"),
        consequences=["Its sites and their asset registers are deleted with it."],
    )


@login_required
def site_delete(request: HttpRequest, pk: int) -> HttpResponse:
    site = get_site_for_user(request, pk)
    return _confirm_delete(
        request,
        item=site,
        kind="site",
        service=deletion.site_delete,
        back=reverse("survey:site", args=[site.pk]),
        after=reverse("survey:client", args=[site.client_id]),
        consequences=["Its asset register is deleted with it."],
    )


@login_required
def asset_delete(request: HttpRequest, pk: int) -> HttpResponse:
    asset = get_asset_for_user(request, pk)
    return _confirm_delete(
        request,
        item=asset,
        kind="asset",
        service=deletion.asset_delete,
        back=reverse("survey:asset", args=[asset.pk]),
        after=reverse("survey:site", args=[asset.site_id]),
        consequences=[
            "Thermograms and findings keep their link to it. To keep an asset that is out "
            "of service with its history, retire it instead."
        ],
    )


@login_required
def thermogram_delete(request: HttpRequest, pk: int) -> HttpResponse:
    thermogram = get_thermogram_for_user(request, pk)
    findings = thermogram.findings.count()
    consequences = ["Its marks and files are kept until it is purged."]
    if findings:
        consequences.insert(0, f"Its {findings} finding(s) are deleted with it.")
    return _confirm_delete(
        request,
        item=thermogram,
        kind="thermogram",
        service=deletion.thermogram_delete,
        back=reverse("survey:survey", args=[thermogram.survey_id]),
        after=reverse("survey:survey", args=[thermogram.survey_id]),
        consequences=consequences,
    )


@login_required
def finding_delete(request: HttpRequest, pk: int) -> HttpResponse:
    finding = get_finding_for_user(request, pk)
    return _confirm_delete(
        request,
        item=finding,
        kind="finding",
        service=deletion.finding_delete,
        back=reverse("survey:finding", args=[finding.pk]),
        after=reverse("survey:survey_findings", args=[finding.survey_id]),
        consequences=["Reports already issued keep it; the next version will not show it."],
    )


@login_required
def deleted_items(request: HttpRequest) -> HttpResponse:
    member = get_member(request)
    context = {
        "surveys": deleted_surveys_for(member).select_related("site__client"),
        "items": deletion.deleted_items(member.organization),
    }
    return render(request, "survey/deleted_surveys.html", context)


@login_required
@require_POST
def item_restore(request: HttpRequest, kind: str, pk: int) -> HttpResponse:
    item = get_deleted_item_for_user(request, kind, pk)
    require_editor(get_member(request))
    try:
        deletion.item_restore(kind=kind, item=item, user=request.user)
    except ValidationError as error:
        messages.error(request, " ".join(error.messages))
        return redirect("survey:deleted_surveys")
    messages.success(request, f"{item} restored.")
    return redirect(_restored_page(kind, item))


def _restored_page(kind: str, item) -> str:
    if kind in ("thermogram", "finding"):
        return reverse("survey:survey", args=[item.survey_id])
    return reverse(f"survey:{kind}", args=[item.pk])
