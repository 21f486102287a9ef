"""Django settings for Tellstack.

Every setting is read from the environment with a working default:

* no ``DATABASE_URL``: an embedded SQLite file under ``TELLSTACK_DATA_DIR``
  (default ``./data``);
* no ``CELERY_BROKER_URL``: Celery runs tasks eagerly, in-process;
* ``DEBUG`` defaults to on for the embedded set-up; with it off,
  ``SECRET_KEY`` and ``ALLOWED_HOSTS`` must be given.
"""

import os
from pathlib import Path

import dj_database_url

from .env import env_bool, env_int, env_list, env_required, env_str

BASE_DIR = Path(__file__).resolve().parent.parent
DATA_DIR = Path(env_str("TELLSTACK_DATA_DIR", str(BASE_DIR / "data"))).resolve()

DEBUG = env_bool("DEBUG", True)
if DEBUG:
    SECRET_KEY = env_str("SECRET_KEY", "insecure-development-key-change-me")
    ALLOWED_HOSTS = env_list("ALLOWED_HOSTS", ["localhost", "127.0.0.1", "[::1]", "testserver"])
else:
    SECRET_KEY = env_required("SECRET_KEY")
    ALLOWED_HOSTS = env_list("ALLOWED_HOSTS", [])
    if not ALLOWED_HOSTS:
        env_required("ALLOWED_HOSTS")

INSTALLED_APPS = [
    "django.contrib.admin",
    "django.contrib.auth",
    "django.contrib.contenttypes",
    "django.contrib.sessions",
    "django.contrib.messages",
    "django.contrib.staticfiles",
    "rest_framework",
    "django_filters",
    "drf_spectacular",
    "drf_spectacular_sidecar",
    "projects",
    "chronology",
    "chronology.evidence",
    "chronology.interpretations",
    "chronology.runs",
    "chronology.weighing",
    "demo",
    "exchange",
    "api",
    "web",
]

MIDDLEWARE = [
    "api.middleware.RequestIdMiddleware",
    "django.middleware.security.SecurityMiddleware",
    "whitenoise.middleware.WhiteNoiseMiddleware",
    "django.contrib.sessions.middleware.SessionMiddleware",
    "django.middleware.common.CommonMiddleware",
    "django.middleware.csrf.CsrfViewMiddleware",
    "django.contrib.auth.middleware.AuthenticationMiddleware",
    "django.contrib.messages.middleware.MessageMiddleware",
    "django.middleware.clickjacking.XFrameOptionsMiddleware",
]

ROOT_URLCONF = "config.urls"
WSGI_APPLICATION = "config.wsgi.application"
ASGI_APPLICATION = "config.asgi.application"

TEMPLATES = [
    {
        "BACKEND": "django.template.backends.django.DjangoTemplates",
        "DIRS": [],
        "APP_DIRS": True,
        "OPTIONS": {
            "context_processors": [
                "django.template.context_processors.request",
                "django.contrib.auth.context_processors.auth",
                "django.contrib.messages.context_processors.messages",
                "web.context.navigation",
            ],
        },
    },
]


def _database() -> dict:
    url = env_str("DATABASE_URL")
    if url:
        config = dj_database_url.parse(url, conn_max_age=env_int("DATABASE_CONN_MAX_AGE", 60))
    else:
        DATA_DIR.mkdir(parents=True, exist_ok=True)
        config = {
            "ENGINE": "django.db.backends.sqlite3",
            "NAME": str(DATA_DIR / "tellstack.sqlite3"),
            # Writers take the lock when the transaction starts, so the record's
            # read-check-write sequence is serialised as on PostgreSQL.
            "OPTIONS": {"transaction_mode": "IMMEDIATE", "timeout": 30},
        }
    test_name = env_str("TELLSTACK_TEST_DB_NAME")
    if test_name:
        config["TEST"] = {"NAME": test_name}
    return config


DATABASES = {"default": _database()}
DEFAULT_AUTO_FIELD = "django.db.models.BigAutoField"

AUTH_PASSWORD_VALIDATORS = [
    {"NAME": "django.contrib.auth.password_validation.MinimumLengthValidator"},
    {"NAME": "django.contrib.auth.password_validation.CommonPasswordValidator"},
]

LANGUAGE_CODE = "en-gb"
TIME_ZONE = "UTC"
USE_I18N = True
USE_TZ = True

STATIC_URL = "static/"
STATIC_ROOT = DATA_DIR / "static"
# The service serves its own assets (whitenoise), straight from the apps'
# static folders, so nothing is fetched from outside and no collectstatic
# step is needed to start it.
WHITENOISE_USE_FINDERS = True
WHITENOISE_AUTOREFRESH = DEBUG

LOGIN_URL = "web:login"
LOGIN_REDIRECT_URL = "web:home"
LOGOUT_REDIRECT_URL = "web:login"
MEDIA_ROOT = Path(env_str("TELLSTACK_MEDIA_DIR", str(DATA_DIR / "media")))
MEDIA_URL = "media/"

REST_FRAMEWORK = {
    "DEFAULT_AUTHENTICATION_CLASSES": [
        "api.authentication.DeviceTokenAuthentication",
        "rest_framework.authentication.SessionAuthentication",
    ],
    "DEFAULT_PERMISSION_CLASSES": ["rest_framework.permissions.IsAuthenticated"],
    "DEFAULT_PAGINATION_CLASS": "api.pagination.StablePagination",
    "PAGE_SIZE": 100,
    "DEFAULT_FILTER_BACKENDS": ["django_filters.rest_framework.DjangoFilterBackend"],
    "DEFAULT_SCHEMA_CLASS": "drf_spectacular.openapi.AutoSchema",
    "EXCEPTION_HANDLER": "api.errors.exception_handler",
    "DEFAULT_PARSER_CLASSES": [
        "api.parsers.BoundedJSONParser",
        "rest_framework.parsers.FormParser",
        "rest_framework.parsers.MultiPartParser",
    ],
    "DEFAULT_THROTTLE_CLASSES": [
        "rest_framework.throttling.UserRateThrottle",
        "rest_framework.throttling.AnonRateThrottle",
        "api.throttles.RoleScopedThrottle",
    ],
    "DEFAULT_THROTTLE_RATES": {
        "user": env_str("TELLSTACK_THROTTLE_USER", "100000/hour"),
        "anon": env_str("TELLSTACK_THROTTLE_ANON", "100/hour"),
    },
    "TEST_REQUEST_DEFAULT_FORMAT": "json",
}

SPECTACULAR_SETTINGS = {
    "TITLE": "Tellstack API",
    "DESCRIPTION": (
        "The stratigraphic record of many excavations, its interpretations and "
        "Bayesian chronological models. Dates from a model depend on its prior "
        "assumptions and the calibration curve used; they need review by a "
        "qualified specialist before they are relied on."
    ),
    "VERSION": "1.0.0",
    "SERVE_INCLUDE_SCHEMA": False,
    "COMPONENT_SPLIT_REQUEST": True,
    # The docs pages load their viewers from the service itself, never a CDN.
    "SWAGGER_UI_DIST": "SIDECAR",
    "SWAGGER_UI_FAVICON_HREF": "SIDECAR",
}

#: The largest request body (bytes; 413 beyond it) and the deepest JSON nesting accepted (400 beyond it).
DATA_UPLOAD_MAX_MEMORY_SIZE = env_int("TELLSTACK_MAX_BODY_BYTES", 8 * 1024 * 1024)
TELLSTACK_MAX_JSON_DEPTH = env_int("TELLSTACK_MAX_JSON_DEPTH", 32)

#: How long a request holding an ``Idempotency-Key`` keeps its claim (seconds): longer than
#: gunicorn's worker timeout (120 s in the compose file), so a retry can claim the key only
#: once the first request's process is surely gone.
TELLSTACK_IDEMPOTENCY_LEASE_SECONDS = float(env_str("TELLSTACK_IDEMPOTENCY_LEASE_SECONDS", "150"))

#: Calendar grid step (years) for calibration and models; a request may ask for any of the steps.
TELLSTACK_CALIBRATION_STEP = float(env_str("TELLSTACK_CALIBRATION_STEP", "1"))
TELLSTACK_CALIBRATION_STEPS = tuple(float(s) for s in env_str("TELLSTACK_CALIBRATION_STEPS", "0.5,1,2,5,10,20,50,100").split(","))
#: Bounds on calibration work (see chronology/evidence/limits.py); the curve cache is bounded by bytes.
TELLSTACK_CURVE_CACHE_BYTES = env_int("TELLSTACK_CURVE_CACHE_BYTES", 64 * 1024 * 1024)
TELLSTACK_CALIBRATE_INLINE_VALUES = env_int("TELLSTACK_CALIBRATE_INLINE_VALUES", 100)
TELLSTACK_CALIBRATE_MAX_VALUES = env_int("TELLSTACK_CALIBRATE_MAX_VALUES", 2000)

CACHES = {"default": {"BACKEND": "django.core.cache.backends.locmem.LocMemCache"}}

# Celery: no broker means eager, in-process tasks.
CELERY_TASK_ALWAYS_EAGER = env_str("CELERY_BROKER_URL") is None
CELERY_BROKER_URL = env_str("CELERY_BROKER_URL", "memory://")
CELERY_TASK_EAGER_PROPAGATES = True
CELERY_TASK_ACKS_LATE = True
CELERY_TASK_REJECT_ON_WORKER_LOST = True
CELERY_WORKER_PREFETCH_MULTIPLIER = 1
CELERY_TASK_SERIALIZER = "json"
CELERY_RESULT_BACKEND = None
CELERY_TASK_IGNORE_RESULT = True
CELERY_BROKER_CONNECTION_RETRY_ON_STARTUP = True
# Model runs (chronology.runs): every chain holds a lease renewed by its
# heartbeats; the sweeper (Celery beat, every TELLSTACK_RUN_SWEEP_SECONDS)
# requeues a chain whose lease ran out and fails the run after
# TELLSTACK_RUN_MAX_ATTEMPTS attempts.  Without a broker there is no beat: the
# sweep runs on a process's first request and then at most every
# TELLSTACK_RUN_SWEEP_SECONDS, when runs are read or listed, and when the run
# command starts; a run whose process stopped ends failed ("interrupted").
TELLSTACK_RUN_LEASE_SECONDS = float(env_str("TELLSTACK_RUN_LEASE_SECONDS", env_str("TELLSTACK_RUN_STALE_SECONDS", "60")))
TELLSTACK_RUN_HEARTBEAT_SECONDS = float(env_str("TELLSTACK_RUN_HEARTBEAT_SECONDS", "5"))
TELLSTACK_RUN_COMBINE_LEASE_SECONDS = float(env_str("TELLSTACK_RUN_COMBINE_LEASE_SECONDS", "600"))
TELLSTACK_RUN_MAX_ATTEMPTS = env_int("TELLSTACK_RUN_MAX_ATTEMPTS", 3)
TELLSTACK_RUN_SWEEP_SECONDS = float(env_str("TELLSTACK_RUN_SWEEP_SECONDS", "30"))
#: A chain still queued this long after its message was sent is sent again
#: (a message held by a worker that died comes back only after the visibility timeout).
TELLSTACK_RUN_RESEND_QUEUED_SECONDS = float(env_str("TELLSTACK_RUN_RESEND_QUEUED_SECONDS", "900"))
#: Longest wall time a run may take to converge, unless its settings ask for less.
TELLSTACK_RUN_MAX_BUDGET_SECONDS = env_int("TELLSTACK_RUN_MAX_BUDGET_SECONDS", 6 * 3600)
# With late acks a message whose worker died comes back only after the
# visibility timeout (Redis transport).  It must be longer than the longest
# chain segment, which the run budget bounds, or a chain still being sampled is
# handed out twice (harmless: the lease turns the copy away, but it costs a
# slot).  Dead workers are found by the sweeper long before this.
CELERY_BROKER_TRANSPORT_OPTIONS = {
    "visibility_timeout": env_int("CELERY_VISIBILITY_TIMEOUT", TELLSTACK_RUN_MAX_BUDGET_SECONDS + 3600),
}
CELERY_BEAT_SCHEDULE = {
    # a sweep that waited a whole period behind busy workers is dropped: the next one does its work
    "sweep-model-runs": {"task": "runs.sweep", "schedule": TELLSTACK_RUN_SWEEP_SECONDS,
                         "options": {"expires": TELLSTACK_RUN_SWEEP_SECONDS}},
}
#: Compiled sampler kernels are cached here, so a new worker loads them instead of compiling.
TELLSTACK_NUMBA_CACHE_DIR = env_str("NUMBA_CACHE_DIR", str(DATA_DIR / "numba-cache"))
# numba reads this when the sampler module is imported, which is always after the settings.
os.environ.setdefault("NUMBA_CACHE_DIR", TELLSTACK_NUMBA_CACHE_DIR)

LOGGING = {
    "version": 1,
    "disable_existing_loggers": False,
    "handlers": {"console": {"class": "logging.StreamHandler"}},
    "root": {"handlers": ["console"], "level": env_str("LOG_LEVEL", "WARNING")},
}
