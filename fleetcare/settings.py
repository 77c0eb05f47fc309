"""Settings read from the environment, with defaults that run with nothing installed.

DATABASE_URL picks the engine (SQLite file by default, PostgreSQL in production).
FLEETCARE_PRODUCTION=1 turns on the deploy hardening and requires SECRET_KEY.
"""
import os
from pathlib import Path

import dj_database_url
import plotly
from django.core.exceptions import ImproperlyConfigured

BASE_DIR = Path(__file__).resolve().parent.parent


def env_bool(name, default=False):
    return os.environ.get(name, "1" if default else "0").lower() in ("1", "true", "yes", "on")


PRODUCTION = env_bool("FLEETCARE_PRODUCTION")
DEBUG = env_bool("DEBUG", default=not PRODUCTION)

if PRODUCTION:
    SECRET_KEY = os.environ.get("SECRET_KEY", "")
    if not SECRET_KEY:
        raise ImproperlyConfigured(
            "FLEETCARE_PRODUCTION=1 needs SECRET_KEY in the environment (50+ random characters, e.g. from "
            "python -c 'import secrets; print(secrets.token_urlsafe(50))')."
        )
else:
    SECRET_KEY = os.environ.get("SECRET_KEY", "dev-only-key-not-for-production-use-0123456789abcdef")

ALLOWED_HOSTS = [
    h.strip()
    for h in os.environ.get("ALLOWED_HOSTS", "127.0.0.1,localhost" if PRODUCTION else "127.0.0.1,localhost,testserver").split(",")
    if h.strip()
]
CSRF_TRUSTED_ORIGINS = [o for o in os.environ.get("CSRF_TRUSTED_ORIGINS", "").split(",") if o]

INSTALLED_APPS = [
    "django.contrib.admin",
    "django.contrib.auth",
    "django.contrib.contenttypes",
    "django.contrib.sessions",
    "django.contrib.messages",
    "whitenoise.runserver_nostatic",
    "django.contrib.staticfiles",
    "crispy_forms",
    "django_tasks",
    "django_tasks_db",
    "crispy_bootstrap5",
    "fleetcare.accounts",
    "fleetcare.fleet",
    "fleetcare.readings",
    "fleetcare.labels",
    "fleetcare.care",
    "fleetcare.budget",
    "fleetcare.dashboard",
    "fleetcare.planner",
    "fleetcare.api",
    "fleetcare.tablet",
    "fleetcare.demo",
]
if not PRODUCTION:
    # Development only: `manage.py benchmark` (tools/benchmark). Production installs the product alone.
    INSTALLED_APPS.append("tools.benchmark")

MIDDLEWARE = [
    "django.middleware.security.SecurityMiddleware",
    "whitenoise.middleware.WhiteNoiseMiddleware",
    "django.contrib.sessions.middleware.SessionMiddleware",
    "django.middleware.common.CommonMiddleware",
    "django.middleware.csrf.CsrfViewMiddleware",
    "django.contrib.auth.middleware.AuthenticationMiddleware",
    "django.contrib.messages.middleware.MessageMiddleware",
    "django.middleware.clickjacking.XFrameOptionsMiddleware",
    "fleetcare.accounts.middleware.SiteTimezoneMiddleware",
    "fleetcare.accounts.middleware.ContentSecurityPolicyMiddleware",
    "fleetcare.accounts.middleware.PrivateResponsesMiddleware",
    "fleetcare.accounts.middleware.KnownDeviceMiddleware",
    "fleetcare.accounts.middleware.RefuseNulInAddressMiddleware",
]

ROOT_URLCONF = "fleetcare.urls"

TEMPLATES = [
    {
        "BACKEND": "django.template.backends.django.DjangoTemplates",
        "DIRS": [BASE_DIR / "templates"],
        "APP_DIRS": True,
        "OPTIONS": {
            "context_processors": [
                "django.template.context_processors.request",
                "django.contrib.auth.context_processors.auth",
                "django.contrib.messages.context_processors.messages",
                "fleetcare.replica.freshness",
            ],
            "builtins": ["fleetcare.fleet.templatetags.words"],  # the one date style: |day, |moment, ...
        },
    },
]

WSGI_APPLICATION = "fleetcare.wsgi.application"

DATABASES = {
    "default": dj_database_url.config(
        default=f"sqlite:///{BASE_DIR / 'db.sqlite3'}",
        conn_max_age=int(os.environ.get("DB_CONN_MAX_AGE", "60")),
        # A kept connection is checked before a request reuses it, so one the database dropped (restart,
        # failover, idle timeout) is replaced instead of failing that request.
        conn_health_checks=env_bool("DB_CONN_HEALTH_CHECKS", default=True),
    )
}
if DATABASES["default"]["ENGINE"] == "django.db.backends.postgresql":
    # PostgreSQL's JIT compiler starts on any statement its planner costs high, such as a findings pass
    # over a few thousand readings, and spends 15-20 ms compiling a query that runs in 50: it pays
    # off only for long analytical queries, which FleetCare does not run. FLEETCARE_PG_JIT=on keeps it.
    DATABASES["default"].setdefault("OPTIONS", {})["options"] = f"-c jit={os.environ.get('FLEETCARE_PG_JIT', 'off')}"
if DATABASES["default"]["ENGINE"] == "django.db.backends.sqlite3":
    # Write-ahead logging: pages keep answering while the background worker holds an import's transaction
    # (in SQLite's default journal mode a long write locks readers out too); writers wait up to 20 s.
    DATABASES["default"].setdefault("OPTIONS", {}).update(
        {"init_command": "PRAGMA journal_mode=WAL; PRAGMA synchronous=NORMAL;", "timeout": 20}
    )
# DATABASE_REPLICA_URL (optional; default: none): a read-only copy of the database, such as a PostgreSQL streaming
# standby. The dashboards' and exports' reads go there (fleetcare.replica); writes and every other page use
# DATABASE_URL. A page whose copy is more than REPLICA_LAG_NOTE_SECONDS (default 10 s) behind says how old
# its figures are.
DATABASE_REPLICA_URL = os.environ.get("DATABASE_REPLICA_URL", "")
REPLICA_LAG_NOTE_SECONDS = int(os.environ.get("REPLICA_LAG_NOTE_SECONDS", "10"))
if DATABASE_REPLICA_URL:
    DATABASES["replica"] = dj_database_url.parse(
        DATABASE_REPLICA_URL, conn_max_age=DATABASES["default"]["CONN_MAX_AGE"],
        conn_health_checks=DATABASES["default"]["CONN_HEALTH_CHECKS"],
    )
    DATABASES["replica"]["OPTIONS"] = dict(DATABASES["default"].get("OPTIONS", {}))
    DATABASES["replica"]["TEST"] = {"MIRROR": "default"}  # tests read their own writes
DATABASE_ROUTERS = ["fleetcare.replica.ReplicaRouter"]
DEFAULT_AUTO_FIELD = "django.db.models.BigAutoField"

AUTH_PASSWORD_VALIDATORS = [
    {"NAME": "django.contrib.auth.password_validation.UserAttributeSimilarityValidator"},
    {"NAME": "django.contrib.auth.password_validation.MinimumLengthValidator"},
    {"NAME": "django.contrib.auth.password_validation.CommonPasswordValidator"},
    {"NAME": "django.contrib.auth.password_validation.NumericPasswordValidator"},
]

LANGUAGE_CODE = "en"
TIME_ZONE = os.environ.get("TIME_ZONE", "UTC")
USE_I18N = False
USE_TZ = True

STATIC_URL = "static/"
# plotly.js is served from the installed plotly package, so the browser and Python sides always match.
STATICFILES_DIRS = [BASE_DIR / "static", ("vendor/plotly", Path(plotly.__file__).parent / "package_data")]
STATIC_ROOT = Path(os.environ.get("STATIC_ROOT", BASE_DIR / "staticfiles"))
STORAGES = {
    "default": {"BACKEND": "django.core.files.storage.FileSystemStorage"},
    "staticfiles": {
        "BACKEND": (
            "whitenoise.storage.CompressedManifestStaticFilesStorage"
            if PRODUCTION
            else "django.contrib.staticfiles.storage.StaticFilesStorage"
        )
    },
}

# Uploaded CSV files wait here for the background worker (web and worker must share this folder); never
# served to browsers. Each import's full list of notes is kept here too.
MEDIA_ROOT = Path(os.environ.get("FLEETCARE_MEDIA_ROOT", BASE_DIR / "media"))
# The largest CSV file the import page accepts, in megabytes (about 40 bytes a row: 100 MB ≈ 2.5 M rows).
FLEETCARE_IMPORT_MAX_MB = int(os.environ.get("FLEETCARE_IMPORT_MAX_MB", "100"))
# Rows read, checked and written at a time by the import: its memory follows this, not the file's size.
FLEETCARE_IMPORT_CHUNK_ROWS = int(os.environ.get("FLEETCARE_IMPORT_CHUNK_ROWS", "10000"))

# Long work (CSV imports, the findings pass after them, "check now") runs as tasks in the database,
# picked up by `manage.py db_worker` (started by `manage.py demo`; its own service in production).
TASKS = {"default": {"BACKEND": "django_tasks_db.DatabaseBackend", "QUEUES": ["default"]}}

# Where FleetCare is reached from the battery room, e.g. https://fleetcare.example.com: printed labels'
# QR codes hold this address. Empty: the address the supervisor printing the labels used (fine when the
# tablets reach FleetCare the same way); set it when they do not, e.g. behind a proxy or another name.
FLEETCARE_BASE_URL = os.environ.get("FLEETCARE_BASE_URL", "").strip().rstrip("/")
if FLEETCARE_BASE_URL and not FLEETCARE_BASE_URL.startswith(("http://", "https://")):
    raise ImproperlyConfigured(f"FLEETCARE_BASE_URL must start with https:// (or http://), not “{FLEETCARE_BASE_URL}”.")

LOGIN_URL = "/accounts/login/"
LOGIN_REDIRECT_URL = "/start/"
LOGOUT_REDIRECT_URL = "/accounts/login/"

AUTHENTICATION_BACKENDS = ["fleetcare.accounts.backends.ThrottledModelBackend"]
# Sign-in throttling (fleetcare/accounts/throttle.py). Failures within the window pause sign-in for the lock time:
# per username and address (or per username on a device where it signed in before), per address whatever the
# usernames (one password tried on many accounts), per username whatever the addresses (one account guessed from
# many places). A device where the user signed in before is recognised for FLEETCARE_SIGNIN_DEVICE_DAYS and is not
# held by the address or username pauses. Defaults: common practice.
FLEETCARE_SIGNIN_MAX_FAILURES = int(os.environ.get("FLEETCARE_SIGNIN_MAX_FAILURES", "5"))
FLEETCARE_SIGNIN_ADDRESS_MAX_FAILURES = int(os.environ.get("FLEETCARE_SIGNIN_ADDRESS_MAX_FAILURES", "10"))
FLEETCARE_SIGNIN_USERNAME_MAX_FAILURES = int(os.environ.get("FLEETCARE_SIGNIN_USERNAME_MAX_FAILURES", "10"))
FLEETCARE_SIGNIN_DEVICE_DAYS = int(os.environ.get("FLEETCARE_SIGNIN_DEVICE_DAYS", "90"))
# How many proxies of ours stand in front of the app, each appending the address it was reached from to
# X-Forwarded-For. 0 (default): the connection's own address is the client's and the header is ignored (a client
# can write anything there). 1: behind one proxy (e.g. the TLS terminator in front of gunicorn), whose own entry
# (the header's last) is the client's address.
FLEETCARE_TRUSTED_PROXIES = int(os.environ.get("FLEETCARE_TRUSTED_PROXIES", "0"))
FLEETCARE_SIGNIN_WINDOW_MINUTES = int(os.environ.get("FLEETCARE_SIGNIN_WINDOW_MINUTES", "15"))
FLEETCARE_SIGNIN_LOCK_MINUTES = int(os.environ.get("FLEETCARE_SIGNIN_LOCK_MINUTES", "15"))

# A shift is at most 12 h: the session ends 12 h after sign-in (the clock is not reset by activity).
SESSION_COOKIE_AGE = int(os.environ.get("SESSION_COOKIE_AGE", str(12 * 3600)))
SESSION_EXPIRE_AT_BROWSER_CLOSE = False
SESSION_COOKIE_HTTPONLY = True
SESSION_COOKIE_SAMESITE = "Lax"
CSRF_COOKIE_SAMESITE = "Lax"
X_FRAME_OPTIONS = "DENY"
SECURE_CONTENT_TYPE_NOSNIFF = True
SECURE_REFERRER_POLICY = "same-origin"
SECURE_CROSS_ORIGIN_OPENER_POLICY = "same-origin"

CRISPY_ALLOWED_TEMPLATE_PACKS = "bootstrap5"
CRISPY_TEMPLATE_PACK = "bootstrap5"

if PRODUCTION:
    # Behind a TLS-terminating proxy that sets X-Forwarded-Proto (and strips it from clients).
    SECURE_SSL_REDIRECT = env_bool("SECURE_SSL_REDIRECT", default=True)
    SESSION_COOKIE_SECURE = True
    CSRF_COOKIE_SECURE = True
    SECURE_HSTS_SECONDS = int(os.environ.get("SECURE_HSTS_SECONDS", "31536000"))
    SECURE_HSTS_INCLUDE_SUBDOMAINS = env_bool("SECURE_HSTS_INCLUDE_SUBDOMAINS", default=True)
    SECURE_HSTS_PRELOAD = env_bool("SECURE_HSTS_PRELOAD", default=True)
    SECURE_PROXY_SSL_HEADER = ("HTTP_X_FORWARDED_PROTO", "https")

# Content-Security-Policy sent on every response (fleetcare/accounts/middleware.py): our own assets only.
# plotly.js adds <style> elements and style="" attributes as it draws, hence 'unsafe-inline' for styles only.
CONTENT_SECURITY_POLICY = {
    "default-src": ["'self'"],
    "script-src": ["'self'"],
    "style-src": ["'self'", "'unsafe-inline'"],
    "img-src": ["'self'", "data:", "blob:"],
    "font-src": ["'self'"],
    "connect-src": ["'self'"],
    "object-src": ["'none'"],
    "base-uri": ["'self'"],
    "form-action": ["'self'"],
    "frame-ancestors": ["'none'"],
}

LOGGING = {
    "version": 1,
    "disable_existing_loggers": False,
    "handlers": {"console": {"class": "logging.StreamHandler"}},
    "root": {"handlers": ["console"], "level": os.environ.get("LOG_LEVEL", "WARNING")},
}
