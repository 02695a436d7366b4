from django.apps import AppConfig


class ReportsConfig(AppConfig):
    default_auto_field = "django.db.models.BigAutoField"
    name = "reports"
    verbose_name = "Client reports"

    def ready(self) -> None:
        # The survey app never imports this one: it learns here what reports keep of a survey.
        from reports.services import survey_report_hold, survey_reports_release
        from survey.dependents import Dependent, register

        register(Dependent(name="reports", hold=survey_report_hold, release=survey_reports_release))
