"""The thermogram workspace page and its JSON endpoints.

Session authentication with CSRF (the page's script sends the csrftoken cookie back in the
X-CSRFToken header). Errors answer {"error": "...", "fields": {...}} with 400, 401, 403,
404 or 405; another organization's id answers 404 like one that does not exist.
"""

import json
import math
from functools import wraps

from django import forms
from django.contrib.auth.decorators import login_required
from django.core.exceptions import PermissionDenied, ValidationError
from django.http import Http404, HttpRequest, HttpResponse, JsonResponse
from django.shortcuts import render
from django.urls import NoReverseMatch, reverse
from django.views.decorators.csrf import ensure_csrf_cookie

from survey.access import (
    get_mark_for_user,
    get_member,
    get_proposal_for_user,
    get_thermogram_for_user,
    require_editor,
    thermograms_for,
)
from survey.dependents import thermogram_hold
from survey.inputs import holds_nul
from survey.models import Mark, Thermogram
from survey.services import display
from survey.services import marks as mark_services
from survey.services import proposals as proposal_services
from survey.services.arrays import (
    ENCODINGS,
    ThermogramNotReady,
    thermogram_array_digest,
    thermogram_temperatures_encoded,
)
from survey.services.loggers import thermogram_logged_conditions
from survey.services.readings import (
    DECISION_TEXT,
    HUMIDITY_KEYS,
    UNCERTAINTY_NOTE,
    condensation_overlay,
    correction_table,
    mark_readings,
    thermogram_readings,
    thermogram_reference_air_c,
)
from survey.services.surveys import thermogram_update_settings
from survey.severity import category_label

WORKSPACE_CAUTION = (
    "Shiny, low-emissivity surfaces reflect their surroundings: their corrected values are "
    "only as good as the emissivity and reflected temperature entered. Thermography shows "
    "surface temperature patterns, not their causes."
)


def _error(status: int, message: str, fields: dict | None = None) -> JsonResponse:
    return JsonResponse({"error": message, "fields": fields or {}}, status=status)


def _validation_error(error: ValidationError) -> JsonResponse:
    if hasattr(error, "error_dict"):
        fields = {name: " ".join(messages) for name, messages in error.message_dict.items()}
        general = fields.pop("__all__", "")
        first = next(iter(fields.items()), None)
        message = general or (f"{first[0]}: {first[1]}" if first else "Invalid input.")
        return _error(400, message, fields)
    return _error(400, " ".join(error.messages))


def api(*methods: str):
    """JSON endpoint: signed-in members only, listed methods only, errors as JSON."""

    def decorator(view):
        @wraps(view)
        def wrapper(request: HttpRequest, *args, **kwargs) -> HttpResponse:
            if not request.user.is_authenticated:
                return _error(401, "Sign in to use the API.")
            if request.method not in methods:
                response = _error(405, f"Use {' or '.join(methods)} here.")
                response["Allow"] = ", ".join(methods)
                return response
            try:
                return view(request, *args, **kwargs)
            except Http404:
                return _error(404, "Not found.")
            except PermissionDenied as error:
                return _error(403, str(error) or "Your role cannot do this.")
            except ValidationError as error:
                return _validation_error(error)
            except ThermogramNotReady as error:
                return _error(409, str(error))
            except mark_services.MarkChanged as error:
                return _error(409, str(error))
            except Mark.DoesNotExist:  # deleted by someone else while this request ran
                return _error(404, "Not found.")

        return wrapper

    return decorator


def _body(request: HttpRequest) -> dict:
    try:
        data = json.loads(request.body or b"{}")
    except (ValueError, UnicodeDecodeError):
        raise ValidationError("The request body is not valid JSON.") from None
    if not isinstance(data, dict):
        raise ValidationError("The request body must be a JSON object.")
    if holds_nul(data):
        raise ValidationError("The request body holds a NUL character (\\u0000); remove it.")
    return data


class MarkForm(forms.Form):
    """The editable fields of a mark; points are checked by the service."""

    kind = forms.ChoiceField(choices=Mark.Kind.choices, required=False)
    emissivity = forms.FloatField(
        required=False,
        min_value=0.01,
        max_value=1.0,
        error_messages={
            "min_value": "Emissivity must be between 0.01 and 1.",
            "max_value": "Emissivity must be between 0.01 and 1.",
            "invalid": "Emissivity must be a number between 0.01 and 1.",
        },
    )
    reflected_c = forms.FloatField(
        required=False,
        min_value=-60,
        max_value=500,
        error_messages={
            "min_value": "Reflected temperature must be between −60 and 500 °C.",
            "max_value": "Reflected temperature must be between −60 and 500 °C.",
            "invalid": "Reflected temperature must be a number of °C.",
        },
    )
    note = forms.CharField(required=False, max_length=4000, strip=True)
    name = forms.CharField(
        required=False,
        max_length=20,
        strip=True,
        error_messages={"max_length": "A mark's name is at most 20 characters (L1, N, lug 3)."},
    )
    rise_method = forms.ChoiceField(
        choices=Mark.RiseMethod.choices,
        required=False,
        error_messages={
            "invalid_choice": "rise_method is hottest_to_hottest (the default) or hottest_to_mean."
        },
    )
    reference = forms.CharField(required=False, max_length=8)
    single_pixel = forms.BooleanField(required=False)
    load_current_a = forms.FloatField(
        required=False,
        min_value=0,
        max_value=1_000_000,
        error_messages={
            "min_value": "The load current cannot be negative.",
            "max_value": "The load current must be at most 1,000,000 A.",
            "invalid": "The load current must be a number of amperes.",
        },
    )

    def __init__(self, data: dict, thermogram: Thermogram, mark: Mark | None = None):
        super().__init__(data)
        self.thermogram = thermogram
        self.mark = mark

    def clean_reference(self) -> dict:
        """'A' (another mark's label), 'ambient', or empty for no reference."""
        value = (self.cleaned_data.get("reference") or "").strip()
        if value in {"", "none"}:
            return {"reference_kind": Mark.ReferenceKind.NONE, "reference_mark": None}
        if value == "ambient":
            return {"reference_kind": Mark.ReferenceKind.AMBIENT, "reference_mark": None}
        other = self.thermogram.marks.filter(label=value.upper()).first()
        if other is None:
            raise ValidationError(f"There is no mark {value} on this thermogram.")
        if self.mark is not None and other.pk == self.mark.pk:
            raise ValidationError("A mark cannot be its own reference.")
        return {"reference_kind": Mark.ReferenceKind.MARK, "reference_mark": other}


def _mark_options(data: dict, thermogram: Thermogram, mark: Mark | None = None) -> dict:
    """Validate the JSON fields given; returns only those, as service keyword arguments."""
    allowed = {"emissivity", "reflected_c", "note", "reference", "single_pixel", "points"}
    allowed |= {"name", "rise_method"}
    allowed |= {"load_current_a"}
    allowed |= {"kind"} if mark is None else {"version"}
    unknown = sorted(set(data) - allowed)
    if unknown:
        raise ValidationError({name: "Unknown or read-only field." for name in unknown})
    for name in ("emissivity", "reflected_c", "load_current_a"):
        if isinstance(data.get(name), (bool, str)):
            raise ValidationError({name: f"{name} must be a number or null."})
    for name in ("name", "rise_method", "note"):
        if name in data and data[name] is not None and not isinstance(data[name], str):
            raise ValidationError({name: f"{name} must be text."})
    if data.get("rise_method") is None and "rise_method" in data:
        raise ValidationError({"rise_method": "Give hottest_to_hottest or hottest_to_mean."})
    version = data.get("version")
    if "version" in data and (
        isinstance(version, bool) or not isinstance(version, int) or version < 1
    ):
        raise ValidationError({"version": "version must be the whole number the mark showed."})
    form = MarkForm(
        {k: v for k, v in data.items() if k not in {"points", "version"}}, thermogram, mark
    )
    if not form.is_valid():
        raise ValidationError({name: errors for name, errors in form.errors.items()})
    options = {}
    for name in data:
        if name == "reference":
            options |= form.cleaned_data["reference"]
        elif name in {"points", "version"}:
            options[name] = data[name]
        elif name == "name":
            options["name"] = form.cleaned_data["name"] or ""
        else:
            options[name] = form.cleaned_data[name]
    return options


RISE_KEYS = (
    "delta_t_c",
    "delta_t_method",
    "delta_t_text",
    "delta_t_quantitative",
    "full_load_delta_t_c",
    "load_exponent",
    "load_too_low",
    "suggested_level",
    "suggestion",
)


def mark_json(mark: Mark, readings: dict) -> dict:
    """A mark as the API shows it: stats (apparent), corrected figures and judgements."""
    stats = {k: v for k, v in (mark.stats or {}).items() if k != "profile"}
    corrected = readings["corrected"]
    humidity = {key: readings.get(key) for key in HUMIDITY_KEYS}
    return {
        "id": mark.pk,
        "label": mark.label,
        "name": mark.name,
        "title": mark.title,
        "rise_method": mark.rise_method,
        "version": mark.version,
        "kind": mark.kind,
        "points": mark.points,
        "single_pixel": mark.single_pixel,
        "note": mark.note,
        "load_current_a": mark.load_current_a,
        "caption": readings.get("caption", ""),
        "emissivity": mark.emissivity,
        "reflected_c": mark.reflected_c,
        "effective_emissivity": readings["emissivity"],
        "effective_reflected_c": readings["reflected_c"],
        "emissivity_warning": readings["emissivity_warning"],
        "reference": readings["reference"],
        "reference_title": readings.get("reference_title"),
        "stats": stats,
        "corrected": {
            "min_c": corrected["min"],
            "max_c": corrected["max"],
            "mean_c": corrected["mean"],
            "uncertainty_c": readings["uncertainty_c"],
        },
        "error": readings.get("error"),
        **{key: readings.get(key) for key in RISE_KEYS},
        **humidity,
        "decisions": {
            key: DECISION_TEXT[value]
            for key in ("condensation_decision", "mould_decision", "factor_decision")
            if (value := humidity.get(key))
        },
        "uncertainty_note": UNCERTAINTY_NOTE,
        "profile": readings["profile"],
        "url": reverse("survey:api-mark", args=[mark.pk]),
    }


def _marks_json(thermogram: Thermogram) -> list[dict]:
    marks = {m.pk: m for m in thermogram.marks.all()}
    return [mark_json(marks[r["id"]], r) for r in thermogram_readings(thermogram)]


def _neighbours(request: HttpRequest, thermogram: Thermogram) -> dict:
    ids = list(
        thermograms_for(get_member(request))
        .filter(survey=thermogram.survey)
        .order_by("sequence", "id")
        .values_list("id", flat=True)
    )
    index = ids.index(thermogram.pk)

    def link(pk: int | None) -> dict | None:
        if pk is None:
            return None
        return {
            "id": pk,
            "page": reverse("survey:thermogram", args=[pk]),
            "api": reverse("survey:api-thermogram", args=[pk]),
        }

    return {
        "position": index + 1,
        "count": len(ids),
        "previous": link(ids[index - 1] if index > 0 else None),
        "next": link(ids[index + 1] if index + 1 < len(ids) else None),
    }


def thermogram_json(request: HttpRequest, thermogram: Thermogram) -> dict:
    member = get_member(request)
    survey = thermogram.survey
    ready = thermogram.is_ready
    pk = thermogram.pk
    # A thermogram an issued report shows opens read-only, and says why.
    locked = thermogram_hold(thermogram)
    return {
        "id": pk,
        "title": str(thermogram),
        "status": thermogram.status,
        "status_label": thermogram.get_status_display(),
        "error": thermogram.error,
        "width": thermogram.width,
        "height": thermogram.height,
        "min_c": thermogram.min_c,
        "max_c": thermogram.max_c,
        "estimated": thermogram.estimated,
        "capture": {
            "captured_at": thermogram.captured_at,
            "emissivity": thermogram.emissivity,
            "reflected_c": thermogram.reflected_c,
            "transmittance": thermogram.transmittance,
            "atmosphere_c": thermogram.atmosphere_c,
            "distance_m": thermogram.distance_m,
        },
        "display": {
            "palette": thermogram.palette,
            "span_low_c": thermogram.span_low_c,
            "span_high_c": thermogram.span_high_c,
            "auto_span": display.thermogram_auto_span(thermogram),
        },
        "palettes": display.palette_ramps(),
        "colours": display.overlay_colours(),
        "unit": member.temperature_unit,
        "can_edit": member.can_edit and not locked,
        "locked": locked,
        "survey": {
            "id": survey.pk,
            "title": str(survey),
            "kind": survey.kind,
            "is_building": survey.is_building,
            "reference_air_c": thermogram_reference_air_c(thermogram),
            "page": _survey_page(survey.pk),
        },
        "logged_conditions": thermogram_logged_conditions(thermogram),
        "correction": correction_table(thermogram) if ready else None,
        "condensation": condensation_overlay(thermogram),
        "photo": {
            "url": reverse("survey:thermogram_photo", args=[pk]),
            "alignment": thermogram.photo_alignment,
        }
        if thermogram.photo
        else None,
        "neighbours": _neighbours(request, thermogram),
        "urls": {
            "self": reverse("survey:api-thermogram", args=[pk]),
            "page": reverse("survey:thermogram", args=[pk]),
            "temperatures": reverse("survey:api-thermogram-temperatures", args=[pk]),
            "marks": reverse("survey:api-marks", args=[pk]),
            "alignment": reverse("survey:api-thermogram-alignment", args=[pk]),
            "proposals": reverse("survey:api-thermogram-proposals", args=[pk]),
            # Findings may be written on a thermogram an issued report shows (they are new).
            "new_finding": reverse("survey:finding_create", args=[pk]) if member.can_edit else None,
        },
        "marks": _marks_json(thermogram) if ready else [],
    }


def _survey_page(survey_pk: int) -> str | None:
    try:
        return reverse("survey:survey", args=[survey_pk])
    except NoReverseMatch:  # the survey page belongs to another area
        return None


@login_required
@ensure_csrf_cookie
def workspace(request: HttpRequest, pk: int) -> HttpResponse:
    thermogram = get_thermogram_for_user(request, pk)
    context = {
        "thermogram": thermogram,
        "survey": thermogram.survey,
        "caution": WORKSPACE_CAUTION,
        "api_url": reverse("survey:api-thermogram", args=[pk]),
        "survey_url": _survey_page(thermogram.survey_id),
    }
    return render(request, "survey/workspace.html", context)


VIEW_SPAN_LIMITS_C = (-100.0, 2000.0)  # as the thermogram settings form


def _view_settings(data: dict) -> dict:
    """Validate {"palette", "span_low_c", "span_high_c"} (null span = automatic)."""
    palettes = display.palette_names()
    unknown = sorted(set(data) - {"palette", "span_low_c", "span_high_c"})
    if unknown:
        raise ValidationError(
            {name: "Only palette and span can be saved here." for name in unknown}
        )
    if not data:
        raise ValidationError("Give the palette, the span, or both.")
    changes: dict = {}
    if "palette" in data:
        if not isinstance(data["palette"], str) or data["palette"] not in palettes:
            raise ValidationError({"palette": f"Choose one of: {', '.join(palettes)}."})
        changes["palette"] = data["palette"]
    if "span_low_c" in data or "span_high_c" in data:
        low, high = data.get("span_low_c"), data.get("span_high_c")
        if (low is None) != (high is None):
            raise ValidationError("Give both ends of the span, or null for both (automatic).")
        for name, value in (("span_low_c", low), ("span_high_c", high)):
            if value is None:
                continue
            if isinstance(value, bool) or not isinstance(value, int | float):
                raise ValidationError({name: "The span ends must be numbers of °C or null."})
            # Bounds first: a huge JSON integer compares fine but overflows isfinite().
            if not (
                VIEW_SPAN_LIMITS_C[0] <= value <= VIEW_SPAN_LIMITS_C[1] and math.isfinite(value)
            ):
                raise ValidationError({name: "The span ends must lie between −100 and 2000 °C."})
        if low is not None and not low < high:
            raise ValidationError("The top of the span must be warmer than the bottom.")
        changes["span_low_c"] = None if low is None else float(low)
        changes["span_high_c"] = None if high is None else float(high)
    return changes


@api("GET", "PATCH")
def thermogram_detail(request: HttpRequest, pk: int) -> JsonResponse:
    """The thermogram's metadata; PATCH saves the workspace's palette and span to it."""
    thermogram = get_thermogram_for_user(request, pk)
    if request.method == "PATCH":
        require_editor(get_member(request))
        thermogram = thermogram_update_settings(
            thermogram=thermogram, user=request.user, **_view_settings(_body(request))
        )
    return JsonResponse(thermogram_json(request, thermogram))


@api("GET")
def thermogram_temperatures_binary(request: HttpRequest, pk: int) -> HttpResponse:
    """The °C array, row by row, little-endian float32 (or float16 with ?dtype=float16).

    Values are value·scale + offset °C (scale and offset in the X-Scale and X-Offset
    headers; 1 and 0 for float32). NaN marks pixels without a reading.
    """
    thermogram = get_thermogram_for_user(request, pk)
    dtype = request.GET.get("dtype", "float32")
    if dtype not in ENCODINGS:
        return _error(400, "dtype must be float32 or float16.", {"dtype": "float32 or float16"})
    etag = f'"{thermogram_array_digest(thermogram)[:32]}-{dtype}"'
    if request.headers.get("If-None-Match") == etag:
        response = HttpResponse(status=304)
    else:
        encoded = thermogram_temperatures_encoded(thermogram, dtype)
        response = HttpResponse(encoded.data, content_type="application/octet-stream")
        response["X-Width"] = str(encoded.width)
        response["X-Height"] = str(encoded.height)
        response["X-Dtype"] = encoded.dtype
        response["X-Scale"] = repr(encoded.scale)
        response["X-Offset"] = repr(encoded.offset)
    response["ETag"] = etag
    response["Cache-Control"] = "private, max-age=86400"
    return response


@api("GET", "POST")
def marks_collection(request: HttpRequest, pk: int) -> JsonResponse:
    thermogram = get_thermogram_for_user(request, pk)
    if request.method == "GET":
        return JsonResponse({"marks": _marks_json(thermogram)})
    require_editor(get_member(request))
    data = _body(request)
    for name in ("kind", "points"):
        if name not in data:
            raise ValidationError({name: "This field is required."})
    options = _mark_options(data, thermogram)
    mark = mark_services.mark_add(thermogram=thermogram, user=request.user, **options)
    return JsonResponse(mark_json(mark, mark_readings(mark)), status=201)


@api("GET", "PATCH", "DELETE")
def mark_detail(request: HttpRequest, pk: int) -> HttpResponse:
    mark = get_mark_for_user(request, pk)
    if request.method == "GET":
        return JsonResponse(mark_json(mark, mark_readings(mark)))
    require_editor(get_member(request))
    if request.method == "DELETE":
        try:
            mark_services.mark_delete(mark=mark, user=request.user)
        except mark_services.MarkInUse as error:
            findings = [
                {
                    "id": finding.pk,
                    "category": category_label(finding.survey.kind, finding.category),
                    "url": reverse("survey:finding", args=[finding.pk]),
                }
                for finding in error.findings
            ]
            return JsonResponse(
                {"error": " ".join(error.messages), "fields": {}, "findings": findings},
                status=409,
            )
        return HttpResponse(status=204)
    options = _mark_options(_body(request), mark.thermogram, mark)
    mark = mark_services.mark_update(mark=mark, user=request.user, **options)
    return JsonResponse(mark_json(mark, mark_readings(mark)))


@api("GET", "PUT", "DELETE")
def thermogram_alignment(request: HttpRequest, pk: int) -> JsonResponse:
    """The photo alignment: PUT {"pairs": [[[photo x, y], [thermogram x, y]], …]}."""
    thermogram = get_thermogram_for_user(request, pk)
    if request.method != "GET":
        require_editor(get_member(request))
        pairs = _body(request).get("pairs") if request.method == "PUT" else None
        if request.method == "PUT" and pairs is None:
            raise ValidationError({"pairs": "Give two or three pairs of matching points."})
        thermogram = mark_services.thermogram_set_alignment(
            thermogram=thermogram, pairs=pairs, user=request.user
        )
    return JsonResponse({"alignment": thermogram.photo_alignment})


@api("GET")
def thermogram_overlays(request: HttpRequest, pk: int) -> JsonResponse:
    thermogram = get_thermogram_for_user(request, pk)
    return JsonResponse({"condensation": condensation_overlay(thermogram)})


@api("GET")
def thermogram_neighbours(request: HttpRequest, pk: int) -> JsonResponse:
    thermogram = get_thermogram_for_user(request, pk)
    return JsonResponse(_neighbours(request, thermogram))


# --- proposed marks (survey/services/proposals.py) ---


def _proposals_json(thermogram: Thermogram, member, note: str = "") -> dict:
    items = [
        proposal_services.proposal_dict(proposal, unit=member.temperature_unit)
        | {
            "accept": reverse("survey:api-proposal-accept", args=[proposal.pk]),
            "reject": reverse("survey:api-proposal-reject", args=[proposal.pk]),
        }
        for proposal in proposal_services.open_proposals(thermogram)
    ]
    if not items and not note:
        note = proposal_services.proposals_note(thermogram)
    return {"proposals": items, "note": note, "can_edit": member.can_edit}


@api("GET", "POST")
def thermogram_proposals(request: HttpRequest, pk: int) -> JsonResponse:
    """The open proposals; POST computes them again (rejected places stay left out)."""
    thermogram = get_thermogram_for_user(request, pk)
    member = get_member(request)
    note = ""
    if request.method == "POST":
        require_editor(member)
        note = proposal_services.thermogram_propose(thermogram=thermogram, user=request.user).note
    return JsonResponse(_proposals_json(thermogram, member, note))


@api("POST")
def proposal_accept(request: HttpRequest, pk: int) -> JsonResponse:
    """Accept a proposal: the new mark, with its readings (201)."""
    proposal = get_proposal_for_user(request, pk)
    require_editor(get_member(request))
    mark = proposal_services.proposal_accept(proposal=proposal, user=request.user)
    return JsonResponse(mark_json(mark, mark_readings(mark)), status=201)


@api("POST")
def proposal_reject(request: HttpRequest, pk: int) -> HttpResponse:
    """Reject a proposal (204); the place is not proposed again."""
    proposal = get_proposal_for_user(request, pk)
    require_editor(get_member(request))
    proposal_services.proposal_reject(proposal=proposal, user=request.user)
    return HttpResponse(status=204)
