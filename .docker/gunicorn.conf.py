"""Gunicorn settings of the web service: `gunicorn -c .docker/gunicorn.conf.py`.

Every value can be changed from the environment (listed in .env.example). Workers are
recycled after about GUNICORN_MAX_REQUESTS requests, each after a different number (the
jitter) so they do not all restart at once: a request that needed a lot of memory (a large
thermogram's array, a long export) leaves a worker holding it, and a fresh worker gives it
back to the system.
"""

import os

wsgi_app = "survey.wsgi:application"
bind = os.environ.get("GUNICORN_BIND", "0.0.0.0:8000")
workers = int(os.environ.get("WEB_CONCURRENCY", "3"))
timeout = int(os.environ.get("GUNICORN_TIMEOUT", "120"))
max_requests = int(os.environ.get("GUNICORN_MAX_REQUESTS", "500"))
max_requests_jitter = int(os.environ.get("GUNICORN_MAX_REQUESTS_JITTER", "50"))
accesslog = "-"
