"""Instruments page: editors keep the organization's cameras (geometry and calibration)."""

from django.contrib import messages
from django.contrib.auth.decorators import login_required
from django.core.exceptions import ValidationError
from django.http import HttpRequest, HttpResponse
from django.shortcuts import redirect, render

from survey.access import get_instrument_for_user, get_member, instruments_for, require_editor
from survey.forms.fields import add_service_error, submitted
from survey.forms.surveys import InstrumentForm
from survey.services import instruments as services


@login_required
def instrument_list(request: HttpRequest) -> HttpResponse:
    member = get_member(request)
    require_editor(member)
    form = InstrumentForm(submitted(request), initial={"accuracy_c": 2.0, "accuracy_pct": 2.0})
    if request.method == "POST" and form.is_valid():
        try:
            instrument = services.instrument_create(
                organization=member.organization, user=request.user, **form.cleaned_data
            )
        except ValidationError as error:
            add_service_error(form, error)
        else:
            messages.success(request, f"{instrument.model_name} added.")
            return redirect("survey:instruments")
    rows = [
        (instrument, services.instrument_ifov_mrad(instrument))
        for instrument in instruments_for(member)
    ]
    return render(request, "survey/instruments.html", {"rows": rows, "form": form})


@login_required
def instrument_edit(request: HttpRequest, pk: int) -> HttpResponse:
    member = get_member(request)
    instrument = get_instrument_for_user(request, pk)
    require_editor(member)
    initial = {name: getattr(instrument, name) for name in services.INSTRUMENT_FIELDS}
    form = InstrumentForm(submitted(request), initial=initial)
    if request.method == "POST" and form.is_valid():
        try:
            services.instrument_update(
                instrument=instrument, user=request.user, **form.cleaned_data
            )
        except ValidationError as error:
            add_service_error(form, error)
        else:
            messages.success(request, f"{instrument.model_name} saved.")
            return redirect("survey:instruments")
    context = {"instrument": instrument, "form": form, "used": instrument.surveys.count()}
    return render(request, "survey/instrument_edit.html", context)


@login_required
def instrument_delete(request: HttpRequest, pk: int) -> HttpResponse:
    member = get_member(request)
    instrument = get_instrument_for_user(request, pk)
    require_editor(member)
    if request.method == "POST":
        try:
            services.instrument_delete(instrument=instrument, user=request.user)
        except ValidationError as error:
            messages.error(request, " ".join(error.messages))
            return redirect("survey:instrument_edit", pk=instrument.pk)
        messages.success(request, f"{instrument.model_name} deleted.")
        return redirect("survey:instruments")
    return render(request, "survey/instrument_delete.html", {"instrument": instrument})
