"""The Celery app. Workers start with `celery -A survey.celery worker`; web processes and
management commands load it through SurveyConfig.ready()."""

import os

from celery import Celery

os.environ.setdefault("DJANGO_SETTINGS_MODULE", "survey.settings")

app = Celery("survey")
app.config_from_object("django.conf:settings", namespace="CELERY")
app.autodiscover_tasks()
