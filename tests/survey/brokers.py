"""Point the test process's Celery publisher at a given broker for a while."""

import contextlib


@contextlib.contextmanager
def broker_at(app, url: str):
    saved = app.conf.broker_url
    app.conf.broker_url = url
    app._pool = None
    app.amqp._producer_pool = None
    try:
        yield
    finally:
        app.pool.force_close_all()
        app.conf.broker_url = saved
        app._pool = None
        app.amqp._producer_pool = None
