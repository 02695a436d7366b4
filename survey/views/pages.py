from django.contrib.auth.decorators import login_required
from django.http import HttpRequest, HttpResponse
from django.shortcuts import render

from survey.access import get_member, surveys_for


@login_required
def home(request: HttpRequest) -> HttpResponse:
    member = get_member(request)
    surveys = surveys_for(member).select_related("site__client")[:50]
    return render(request, "survey/home.html", {"surveys": surveys})
