"""The sampler's compiled kernels in a worker process: warmed once, timed apart.

The kernels are numba functions compiled with ``cache=True``; the compiled
code is kept on disk in ``NUMBA_CACHE_DIR`` (set by the settings, under the
data folder), so only the first process ever to run a given build compiles
(tens of seconds); the others load the cache in about a second.  A worker
warms them when its pool process starts (:func:`warm_in_background`, called
from the ``worker_process_init`` signal in ``config/celery.py``): in a thread,
because Celery gives a new pool process only a few seconds to report ready.
A chain calls :func:`ensure_compiled` before it claims its lease and records
the seconds it waited as its compile time, apart from its sampling time.
"""

from __future__ import annotations

import logging
import threading
import time

__all__ = ["ensure_compiled", "warm_in_background", "compile_seconds"]

log = logging.getLogger(__name__)

_lock = threading.Lock()
_state = {"warm": False, "seconds": None}


def ensure_compiled() -> float:
    """Compile or load the kernels once in this process; returns the seconds this call waited for them."""
    t0 = time.perf_counter()
    with _lock:
        if not _state["warm"]:
            from chronology.engine.sampler import warm_up

            _state["seconds"] = warm_up()
            _state["warm"] = True
            log.info("sampler kernels ready in %.1f s", _state["seconds"])
    return time.perf_counter() - t0


def compile_seconds() -> float | None:
    """Seconds the kernels took to compile or load in this process (None before)."""
    return _state["seconds"]


def warm_in_background() -> threading.Thread:
    """Start :func:`ensure_compiled` in a daemon thread (a chain arriving meanwhile waits for it)."""
    thread = threading.Thread(target=_warm_logged, name="sampler-warm-up", daemon=True)
    thread.start()
    return thread


def _warm_logged() -> None:
    try:
        ensure_compiled()
    except Exception:  # a failed warm-up only costs the first chain the compile
        log.exception("warming the sampler kernels failed")


def _forget_for_tests() -> None:
    with _lock:
        _state.update(warm=False, seconds=None)
