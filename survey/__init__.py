"""The project package and the survey domain.

Importing it loads nothing: the Celery app is loaded by SurveyConfig.ready() once Django
starts, so `import survey.thermal` stays free of Django and Celery.
"""
