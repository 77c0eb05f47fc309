"""gunicorn's settings for FleetCare, in one place (gunicorn reads ./gunicorn.conf.py by itself).

Used by the Dockerfile, docker-compose and CI's serving check; README explains each figure.
"""
import os

# Where to listen. Loopback by default; the container sets WEB_BIND=0.0.0.0:8000.
bind = os.environ.get("WEB_BIND", "127.0.0.1:8000")

# Sync workers, one request at a time each. Three suits the 2-core machines FleetCare runs on
# (gunicorn's docs suggest 2 x cores + 1 as a start); every worker holds its own database connection.
workers = int(os.environ.get("WEB_WORKERS", "3"))

# A worker silent for this long is killed and its request answered with an error. The slowest request a
# person makes is an upload of a readings file up to the upload limit, well under 30 s; larger files go to
# the background import. Keep it below the proxy's own read timeout (nginx: 60 s).
timeout = int(os.environ.get("WEB_TIMEOUT", "30"))
graceful_timeout = 30

# Restart each worker after this many requests (with jitter so they do not restart together): bounds the
# memory a long-lived worker can gather.
max_requests = 2000
max_requests_jitter = 200

accesslog = "-"
errorlog = "-"
loglevel = os.environ.get("WEB_LOG_LEVEL", "info")
