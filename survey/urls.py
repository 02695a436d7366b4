"""URLs. Each area keeps its routes in its own marked section below."""

from django.contrib import admin
from django.contrib.auth import views as auth_views
from django.urls import include, path

from survey.views import (
    api,
    audit,
    findings,
    health,
    instruments,
    loggers,
    mark_templates,
    media,
    members,
    organization,
    pages,
    proposal_settings,
    recovery,
    register,
    roof,
)
from survey.views.signin import ThrottledLoginView, admin_login

# --- pages: home, clients, sites, surveys, upload (survey/views/pages.py) ---
page_patterns = [
    path("", pages.home, name="home"),
    path("preferences/", pages.preferences, name="preferences"),
    path("clients/", pages.client_list, name="clients"),
    path("sites/", pages.site_list, name="sites"),
    path("surveys/new/", pages.survey_create, name="survey_create"),
    path("surveys/deleted/", recovery.deleted_items, name="deleted_surveys"),
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
    path(
        "thermograms/<int:pk>/marks.png",
        media.thermogram_marks_picture,
        name="thermogram_marks_picture",
    ),
    path("thermograms/<int:pk>/photo/", media.thermogram_photo, name="thermogram_photo"),
    path("thermograms/<int:pk>/celsius.npy", media.thermogram_array, name="thermogram_array"),
    path("audit/", audit.audit_log, name="audit_log"),
    path("members/", members.member_list, name="members"),
    path("members/<int:pk>/", members.member_edit, name="member_edit"),
    path("instruments/", instruments.instrument_list, name="instruments"),
    path("instruments/<int:pk>/", instruments.instrument_edit, name="instrument_edit"),
    path("instruments/<int:pk>/delete/", instruments.instrument_delete, name="instrument_delete"),
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
    path(
        "api/thermograms/<int:pk>/proposals",
        api.thermogram_proposals,
        name="api-thermogram-proposals",
    ),
    path("api/proposals/<int:pk>/accept", api.proposal_accept, name="api-proposal-accept"),
    path("api/proposals/<int:pk>/reject", api.proposal_reject, name="api-proposal-reject"),
]

# --- findings, assets, criteria, heat loss (survey/views/findings.py) ---
judgement_patterns = [
    path("thermograms/<int:pk>/findings/new/", findings.finding_create, name="finding_create"),
    path("findings/<int:pk>/", findings.finding_detail, name="finding"),
    path("findings/<int:pk>/edit/", findings.finding_edit, name="finding_edit"),
    path("findings/<int:pk>/status/", findings.finding_status, name="finding_status"),
    path("findings/<int:pk>/verify/", findings.finding_verify, name="finding_verify"),
    path(
        "findings/<int:pk>/verify-override/",
        findings.finding_verify_override,
        name="finding_verify_override",
    ),
    path("findings/<int:pk>/rejudge/", findings.finding_rejudge, name="finding_rejudge"),
    path("surveys/<int:pk>/findings/", findings.survey_findings, name="survey_findings"),
    path("surveys/<int:pk>/heat-loss/new/", findings.heat_loss_create, name="heat_loss_create"),
    path("sites/<int:pk>/findings/", findings.site_findings, name="site_findings"),
    path("assets/<int:pk>/", findings.asset_detail, name="asset"),
    path("assets/<int:pk>/trend.svg", findings.asset_trend_svg, name="asset_trend"),
    path("criteria/", findings.criteria_tables, name="criteria_tables"),
    path("criteria/copy/", findings.criteria_copy, name="criteria_copy"),
    path("criteria/<int:pk>/edit/", findings.criteria_edit, name="criteria_edit"),
    path("criteria/<int:pk>/review/", findings.criteria_review, name="criteria_review"),
]

# --- beyond the desk: logged conditions, mark templates, proposal settings (issue 18) ---
field_patterns = [
    path("surveys/<int:pk>/loggers/import/", loggers.logger_import, name="logger_import"),
    path("surveys/<int:pk>/loggers.svg", loggers.logger_chart, name="logger_chart"),
    path("loggers/<int:pk>/delete/", loggers.condition_log_delete, name="condition_log_delete"),
    path("templates/", mark_templates.mark_template_list, name="mark_templates"),
    path("templates/<int:pk>/", mark_templates.mark_template_detail, name="mark_template"),
    path(
        "templates/<int:pk>/delete/",
        mark_templates.mark_template_delete,
        name="mark_template_delete",
    ),
    path(
        "templates/<int:pk>/picture.png",
        mark_templates.mark_template_picture,
        name="mark_template_picture",
    ),
    path(
        "templates/<int:pk>/align/<int:thermogram_pk>/",
        mark_templates.template_align,
        name="template_align",
    ),
    path(
        "thermograms/<int:pk>/template/new/",
        mark_templates.template_create,
        name="template_create",
    ),
    path("surveys/<int:pk>/apply-template/", mark_templates.template_apply, name="template_apply"),
    path("proposals/settings/", proposal_settings.proposal_settings, name="proposal_settings"),
    path(
        "surveys/<int:pk>/proposal-settings/",
        proposal_settings.survey_proposal_settings,
        name="survey_proposal_settings",
    ),
]

# --- clients, sites, asset register, rounds, deletes and restores (register, recovery) ---
register_patterns = [
    path("clients/<int:pk>/", register.client_detail, name="client"),
    path("clients/<int:pk>/edit/", register.client_edit, name="client_edit"),
    path("clients/<int:pk>/delete/", recovery.client_delete, name="client_delete"),
    path("sites/<int:pk>/", register.site_detail, name="site"),
    path("sites/<int:pk>/edit/", register.site_edit, name="site_edit"),
    path("sites/<int:pk>/delete/", recovery.site_delete, name="site_delete"),
    path("sites/<int:pk>/visit/", register.site_visit, name="site_visit"),
    path("sites/<int:pk>/assets/new/", register.asset_create, name="asset_create"),
    path("sites/<int:pk>/assets.csv", register.assets_export, name="assets_export"),
    path("sites/<int:pk>/assets/import/", register.assets_import, name="assets_import"),
    path("assets/due/", register.assets_due, name="assets_due"),
    path("assets/<int:pk>/edit/", register.asset_edit, name="asset_edit"),
    path("assets/<int:pk>/retire/", register.asset_retire, name="asset_retire"),
    path("assets/<int:pk>/delete/", recovery.asset_delete, name="asset_delete"),
    path("surveys/<int:pk>/assets/", register.survey_tie_assets, name="survey_tie_assets"),
    path(
        "surveys/<int:pk>/view-defaults/",
        register.survey_view_defaults,
        name="survey_view_defaults",
    ),
    path("round-stops/<int:pk>/skip/", register.round_stop_skip, name="round_stop_skip"),
    path("thermograms/<int:pk>/delete/", recovery.thermogram_delete, name="thermogram_delete"),
    path("findings/<int:pk>/delete/", recovery.finding_delete, name="finding_delete"),
    path("deleted/<str:kind>/<int:pk>/restore/", recovery.item_restore, name="item_restore"),
    path("organization/", organization.organization_settings, name="organization"),
    path(
        "organization/letterhead/",
        organization.organization_letterhead,
        name="organization_letterhead",
    ),
]

# --- roof surveys: the plan and moisture checks (survey/views/roof.py) ---
roof_patterns = [
    path("surveys/<int:pk>/roof-plan/", roof.roof_plan, name="roof_plan"),
    path("surveys/<int:pk>/roof-plan/image/", roof.roof_plan_image, name="roof_plan_image"),
    path(
        "thermograms/<int:pk>/plan-position/",
        roof.thermogram_plan_position,
        name="thermogram_plan_position",
    ),
    path(
        "findings/<int:pk>/moisture-checks/",
        roof.moisture_check_create,
        name="moisture_check_create",
    ),
]

survey_patterns = (
    page_patterns
    + api_patterns
    + judgement_patterns
    + field_patterns
    + register_patterns
    + roof_patterns
)

urlpatterns = [
    path("healthz", health.healthz, name="healthz"),
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
