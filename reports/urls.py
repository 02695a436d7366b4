"""Report URLs, mounted under /reports/ (namespace "reports")."""

from django.urls import path

from reports import views

app_name = "reports"

urlpatterns = [
    path("survey/<int:survey_id>/", views.survey_reports, name="survey"),
    path("survey/<int:survey_id>/create/", views.report_create, name="create"),
    path("survey/<int:survey_id>/findings.csv", views.findings_csv, name="findings_csv"),
    path("survey/<int:survey_id>/results.json", views.results_json, name="results_json"),
    path("<int:report_id>/draft/", views.draft_request, name="draft"),
    path("<int:report_id>/issue/", views.report_issue, name="issue"),
    path("versions/<int:version_id>/progress/", views.version_progress, name="progress"),
    path("versions/<int:version_id>/pdf/", views.version_download, name="download"),
    path("versions/<int:version_id>/retry/", views.version_retry, name="retry"),
    path("versions/<int:version_id>/share/", views.share_link_create, name="share_create"),
    path("share-links/<int:link_id>/revoke/", views.share_link_revoke, name="share_revoke"),
    path("share-links/<int:link_id>/email/", views.share_link_email, name="share_email"),
    path("s/<str:token>/", views.share_page, name="share"),
    path(
        "s/<str:token>/findings/<int:finding_id>/acknowledge/",
        views.share_acknowledge,
        name="share_acknowledge",
    ),
    path("s/<str:token>/pdf/", views.share_download, name="share_download"),
]
