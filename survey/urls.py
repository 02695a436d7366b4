"""URLs. Each area keeps its routes in its own marked section below."""

from django.contrib import admin
from django.contrib.auth import views as auth_views
from django.urls import include, path

from survey.views import api, audit, findings, media, members, pages
from survey.views.signin import ThrottledLoginView, admin_login

# --- pages: home, clients, sites, surveys, upload (survey/views/pages.py) ---
page_patterns = [
    path("", pages.home, name="home"),
    path("preferences/", pages.preferences, name="preferences"),
    path("clients/", pages.client_list, name="clients"),
    path("sites/", pages.site_list, name="sites"),
    path("surveys/new/", pages.survey_create, name="survey_create"),
    path("surveys/deleted/", pages.deleted_surveys, name="deleted_surveys"),
    path("surveys/<int:pk>/", pages.survey_detail, name="survey"),
    path("surveys/<int:pk>/edit/", pages.survey_edit, name="survey_edit"),
    path("surveys/<int:pk>/upload/", pages.survey_upload, name="survey_upload"),
    path("surveys/<int:pk>/status/", pages.survey_status, name="survey_status"),
    path("surveys/<int:pk>/delete/", pages.survey_delete, name="survey_delete"),
    path("surveys/<int:pk>/restore/", pages.survey_restore, name="survey_restore"),
    path("thermograms/<int:pk>/settings/", pages.thermogram_settings, name="thermogram_settings"),
    path(
        "thermograms/<int:pk>/reprocess/", pages.thermogram_reprocess, name="thermogram_reprocess"
    ),
    path("thermograms/<int:pk>/original/", media.thermogram_original, name="thermogram_original"),
    path("thermograms/<int:pk>/preview.png", media.thermogram_preview, name="thermogram_preview"),
    path(
        "thermograms/<int:pk>/thumbnail.png",
        media.thermogram_thumbnail,
        name="thermogram_thumbnail",
    ),
    path("thermograms/<int:pk>/photo/", media.thermogram_photo, name="thermogram_photo"),
    path("thermograms/<int:pk>/celsius.npy", media.thermogram_array, name="thermogram_array"),
    path("audit/", audit.audit_log, name="audit_log"),
    path("members/", members.member_list, name="members"),
    path("members/<int:pk>/", members.member_edit, name="member_edit"),
]

# --- workspace and JSON endpoints (survey/views/api.py) ---
api_patterns = [
    path("thermograms/<int:pk>/", api.workspace, name="thermogram"),
    path("api/thermograms/<int:pk>/", api.thermogram_detail, name="api-thermogram"),
    path(
        "api/thermograms/<int:pk>/temperatures",
        api.thermogram_temperatures_binary,
        name="api-thermogram-temperatures",
    ),
    path("api/thermograms/<int:pk>/marks/", api.marks_collection, name="api-marks"),
    path(
        "api/thermograms/<int:pk>/overlays", api.thermogram_overlays, name="api-thermogram-overlays"
    ),
    path(
        "api/thermograms/<int:pk>/alignment",
        api.thermogram_alignment,
        name="api-thermogram-alignment",
    ),
    path(
        "api/thermograms/<int:pk>/neighbours",
        api.thermogram_neighbours,
        name="api-thermogram-neighbours",
    ),
    path("api/marks/<int:pk>/", api.mark_detail, name="api-mark"),
]

# --- findings, assets, criteria, heat loss (survey/views/findings.py) ---
judgement_patterns = [
    path("thermograms/<int:pk>/findings/new/", findings.finding_create, name="finding_create"),
    path("findings/<int:pk>/", findings.finding_detail, name="finding"),
    path("findings/<int:pk>/edit/", findings.finding_edit, name="finding_edit"),
    path("findings/<int:pk>/status/", findings.finding_status, name="finding_status"),
    path("findings/<int:pk>/verify/", findings.finding_verify, name="finding_verify"),
    path("surveys/<int:pk>/findings/", findings.survey_findings, name="survey_findings"),
    path("surveys/<int:pk>/heat-loss/new/", findings.heat_loss_create, name="heat_loss_create"),
    path("sites/<int:pk>/findings/", findings.site_findings, name="site_findings"),
    path("assets/<int:pk>/", findings.asset_detail, name="asset"),
    path("assets/<int:pk>/trend.svg", findings.asset_trend_svg, name="asset_trend"),
    path("criteria/", findings.criteria_tables, name="criteria_tables"),
    path("criteria/copy/", findings.criteria_copy, name="criteria_copy"),
    path("criteria/<int:pk>/edit/", findings.criteria_edit, name="criteria_edit"),
]

survey_patterns = page_patterns + api_patterns + judgement_patterns

urlpatterns = [
    path("admin/login/", admin_login),  # the admin's page, answering 429 when throttled
    path("admin/", admin.site.urls),
    path("accounts/login/", ThrottledLoginView.as_view(), name="login"),
    path("accounts/logout/", auth_views.LogoutView.as_view(), name="logout"),
    path(
        "accounts/password/",
        auth_views.PasswordChangeView.as_view(),
        name="password_change",
    ),
    path(
        "accounts/password/done/",
        auth_views.PasswordChangeDoneView.as_view(),
        name="password_change_done",
    ),
    path("reports/", include("reports.urls")),
    path("", include((survey_patterns, "survey"))),
]
