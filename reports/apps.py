from django.apps import AppConfig


class ReportsConfig(AppConfig):
    default_auto_field = "django.db.models.BigAutoField"
    name = "reports"
    verbose_name = "Client reports"

    def ready(self) -> None:
        # The survey app never imports this one: it learns here what reports keep of a survey.
        from reports.services import (
            REPORT_STATES,
            report_states,
            survey_report_hold,
            survey_reports_release,
            surveys_with_report_state,
            thermogram_report_hold,
        )
        from survey.dependents import Dependent, SurveyFacet, register

        register(
            Dependent(
                name="reports",
                hold=survey_report_hold,
                release=survey_reports_release,
                thermogram_hold=thermogram_report_hold,
                survey_facets=[
                    SurveyFacet(
                        key="report",
                        label="Report",
                        choices=REPORT_STATES,
                        apply=surveys_with_report_state,
                        describe=report_states,
                    )
                ],
            )
        )
