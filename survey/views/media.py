"""Private media of thermograms, served only after an access check (survey/files.py)."""

from pathlib import Path

from django.contrib.auth.decorators import login_required
from django.http import Http404, HttpRequest, HttpResponse
from django.views.decorators.http import require_GET

from survey.access import get_member, get_thermogram_for_user
from survey.files import serve_file
from survey.services.arrays import ThermogramNotReady
from survey.services.audit import audit_record
from survey.services.display import marks_picture_png

# A finding judges a handful of marks; the picture draws at most this many.
MARKS_IN_PICTURE = 50


@login_required
@require_GET
def thermogram_original(request: HttpRequest, pk: int) -> HttpResponse:
    thermogram = get_thermogram_for_user(request, pk)
    response = serve_file(
        thermogram.original, download_name=thermogram.original_name, attachment=True
    )
    audit_record(
        organization=thermogram.organization, actor=request.user, action="download", obj=thermogram
    )
    return response


@login_required
@require_GET
def thermogram_preview(request: HttpRequest, pk: int) -> HttpResponse:
    thermogram = get_thermogram_for_user(request, pk)
    name = f"{Path(thermogram.original_name).stem}-preview.png"
    return serve_file(
        thermogram.preview, download_name=name, attachment=False, content_type="image/png"
    )


@login_required
@require_GET
def thermogram_thumbnail(request: HttpRequest, pk: int) -> HttpResponse:
    thermogram = get_thermogram_for_user(request, pk)
    name = f"{Path(thermogram.original_name).stem}-thumbnail.png"
    return serve_file(
        thermogram.thumbnail, download_name=name, attachment=False, content_type="image/png"
    )


@login_required
@require_GET
def thermogram_marks_picture(request: HttpRequest, pk: int) -> HttpResponse:
    """The thermogram with the marks given as ?marks=<id>&marks=<id> (its own only)."""
    thermogram = get_thermogram_for_user(request, pk)
    ids = [i for i in request.GET.getlist("marks") if i.isdigit()][:MARKS_IN_PICTURE]
    marks = sorted(thermogram.marks.filter(pk__in=ids), key=lambda m: (len(m.label), m.label))
    try:
        png = marks_picture_png(thermogram, marks, get_member(request).temperature_unit)
    except (ThermogramNotReady, FileNotFoundError):
        raise Http404("This thermogram has no picture yet.") from None
    response = HttpResponse(png, content_type="image/png")
    response["Content-Disposition"] = f'inline; filename="thermogram-{thermogram.pk}-marks.png"'
    response["X-Content-Type-Options"] = "nosniff"
    return response


@login_required
@require_GET
def thermogram_photo(request: HttpRequest, pk: int) -> HttpResponse:
    thermogram = get_thermogram_for_user(request, pk)
    name = Path(thermogram.photo.name).name if thermogram.photo else "photo"
    return serve_file(thermogram.photo, download_name=name, attachment=False)


@login_required
@require_GET
def thermogram_array(request: HttpRequest, pk: int) -> HttpResponse:
    """The decoded °C array as .npy (float32), for analysis in a notebook."""
    thermogram = get_thermogram_for_user(request, pk)
    name = f"{Path(thermogram.original_name).stem}-celsius.npy"
    return serve_file(
        thermogram.array,
        download_name=name,
        attachment=True,
        content_type="application/octet-stream",
    )
