from django.apps import AppConfig


class SurveyConfig(AppConfig):
    default_auto_field = "django.db.models.BigAutoField"
    name = "survey"
    verbose_name = "Thermal surveys"

    def ready(self) -> None:
        # The Celery app is loaded where Django starts (web, worker, commands, tests), so
        # shared tasks bind to it and `import survey.thermal` stays free of both.
        import survey.celery  # noqa: F401

        # Marks that change redraw the previews (a span widened to the marks follows them).
        from survey.hooks import on_marks_changed
        from survey.services.display import previews_enqueue

        on_marks_changed(previews_enqueue)
