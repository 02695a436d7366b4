"""URLs. Each area keeps its routes in its own marked section below."""

from django.contrib import admin
from django.contrib.auth import views as auth_views
from django.urls import include, path

from survey.views import pages

# --- pages: home, clients, sites, surveys, upload (survey/views/pages.py) ---
page_patterns = [
    path("", pages.home, name="home"),
]

# --- workspace and JSON endpoints (survey/views/api.py) ---
api_patterns = []

# --- findings, assets, criteria, heat loss (survey/views/findings.py) ---
judgement_patterns = []

survey_patterns = page_patterns + api_patterns + judgement_patterns

urlpatterns = [
    path("admin/", admin.site.urls),
    path("accounts/login/", auth_views.LoginView.as_view(), name="login"),
    path("accounts/logout/", auth_views.LogoutView.as_view(), name="logout"),
    path("reports/", include("reports.urls")),
    path("", include((survey_patterns, "survey"))),
]
