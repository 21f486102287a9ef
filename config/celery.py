"""The Celery application.

Without a broker URL in the environment tasks run eagerly, in-process, so the
embedded single-user set-up needs no Redis.  Job state users see lives in the
database (see ``chronology.jobs``), never only in the broker.

The beat schedule (``CELERY_BEAT_SCHEDULE`` in the settings) runs the model
run sweeper; start it as its own process (``celery -A config beat``, the
``beat`` service of docker-compose.yml) or inside one worker (``worker -B``).
Each new pool process warms the sampler's compiled kernels in the background
(from the disk cache in ``NUMBA_CACHE_DIR`` when it holds them), so the first
chain it takes does not spend its time compiling.
"""

import os

from celery import Celery
from celery.signals import worker_process_init

os.environ.setdefault("DJANGO_SETTINGS_MODULE", "config.settings")

app = Celery("tellstack")
app.config_from_object("django.conf:settings", namespace="CELERY")
app.autodiscover_tasks()


@worker_process_init.connect
def _warm_sampler_kernels(**_kwargs) -> None:
    if os.environ.get("TELLSTACK_WARM_KERNELS", "1") != "0":
        from chronology.runs.kernels import warm_in_background

        warm_in_background()
