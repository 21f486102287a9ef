"""Submitting, cancelling and continuing model runs.

A run is compiled when it is submitted, so a model that cannot be built is
refused at once with its reason (:class:`~chronology.runs.compile.ModelRefused`)
and never reaches a worker.  The compiled model is written to the run's
folder and hashed; then one Celery task per chain is enqueued when the
transaction commits (a worker never looks for a row that is not there).

Continuing a run (:func:`continue_run`) makes a NEW run linked to its parent:
the same model and settings, new seed entropy, ``iterations`` more kept
sweeps per chain after a fresh warm-up from dispersed starts (the sampler
cannot yet resume from a stored state).  Its results are computed over the
parent's draws followed, chain by chain, by its own: "more draws appended".
"""

from __future__ import annotations

import os
import secrets
import subprocess
from functools import lru_cache
from pathlib import Path

from django.conf import settings
from django.db import transaction
from django.utils import timezone

from .compile import CompiledModel, ModelRefused, compile_version
from .models import ChainState, Run, RunChain, RunState
from .sources import version_label

__all__ = ["LIMITS", "DEFAULTS", "library_versions", "software_commit", "submit_run", "create_run", "enqueue",
           "cancel_run", "continue_run", "check_settings", "run_inline", "start_inline"]

DEFAULTS = {"chains": 4, "iterations": 5000, "warmup": 1000, "thin": 1}
LIMITS = {"chains": (1, 16), "iterations": (10, 2_000_000), "warmup": (0, 1_000_000), "thin": (1, 1000)}


def library_versions() -> dict:
    import platform

    import arviz
    import numba
    import numpy
    import scipy

    out = {"python": platform.python_version(), "numpy": numpy.__version__, "scipy": scipy.__version__,
           "arviz": arviz.__version__, "numba": numba.__version__}
    for name in ("xarray", "h5netcdf", "matplotlib", "celery", "django"):
        try:
            module = __import__(name)
            out[name] = getattr(module, "__version__", "") or ""
        except ImportError:  # optional for the record only
            pass
    return out


@lru_cache(maxsize=1)
def software_commit() -> str:
    """The git commit of the running code, or "" when it is not a checkout."""
    env = os.environ.get("TELLSTACK_COMMIT")
    if env:
        return env
    try:
        out = subprocess.run(["git", "rev-parse", "HEAD"], cwd=Path(settings.BASE_DIR), capture_output=True,
                             text=True, timeout=5, check=False)
    except (OSError, subprocess.SubprocessError):
        return ""
    return out.stdout.strip() if out.returncode == 0 else ""


def check_settings(values: dict) -> dict:
    """Chains, iterations, warm-up and thinning within :data:`LIMITS` (raises ``ModelRefused`` 400)."""
    out = {}
    for name, default in DEFAULTS.items():
        value = values.get(name, default)
        if value is None:
            value = default
        try:
            value = int(value)
        except (TypeError, ValueError):
            raise ModelRefused("invalid-number", f"{name} must be a whole number", status=400, field=name) from None
        lo, hi = LIMITS[name]
        if not lo <= value <= hi:
            raise ModelRefused("out-of-range", f"{name} must be between {lo} and {hi}", status=400, field=name)
        out[name] = value
    if out["iterations"] // out["thin"] < 2:
        raise ModelRefused("too-few-draws", "iterations / thin must keep at least two draws", status=400,
                           field="thin")
    return out


def _entropy(seed) -> int:
    if seed is None or seed == "":
        return secrets.randbits(128)
    try:
        value = int(seed)
    except (TypeError, ValueError):
        raise ModelRefused("invalid-number", "seed must be a non-negative whole number", status=400,
                           field="seed") from None
    if value < 0:
        raise ModelRefused("invalid-number", "seed must be a non-negative whole number", status=400, field="seed")
    return value


def _write_atomic(path: Path, text: str) -> None:
    path.parent.mkdir(parents=True, exist_ok=True)
    tmp = path.with_name(f".{path.name}.{os.getpid()}.tmp")
    tmp.write_text(text)
    os.replace(tmp, path)


def create_run(project, version, user, compiled: CompiledModel, *, parent: Run | None = None, seed=None,
               **values) -> Run:
    """Store a queued run of ``compiled`` (no task is enqueued; see :func:`enqueue`)."""
    s = check_settings(values)
    model = compiled.model
    text = model.to_json()
    run = Run.objects.create(
        project=project, version_id=version.pk if version is not None else parent.version_id,
        version_label=version_label(version) if version is not None else parent.version_label,
        record_revision=parent.record_revision if parent else int(compiled.record_revision or 0),
        parent=parent, created_by=user if getattr(user, "is_authenticated", False) else None,
        chains=s["chains"], iterations=s["iterations"], warmup=s["warmup"], thin=s["thin"],
        seed_entropy=str(_entropy(seed)), model_hash=model.spec_hash(), prior=model.prior,
        grid=model.grid.as_dict(), range={"lo": model.range_lo, "hi": model.range_hi},
        curves=list(compiled.curves), compile_notes=list(compiled.notes),
        library_versions=library_versions(), software_commit=software_commit(),
        summary={"evidence": list(compiled.evidence), "question_labels": dict(compiled.question_labels)},
    )
    RunChain.objects.bulk_create([RunChain(run=run, index=k) for k in range(run.chains)])
    _write_atomic(run.path("model.json"), text)
    return run


def enqueue(run: Run) -> None:
    """Send one task per chain when the current transaction commits."""
    from .tasks import run_chain_task

    run_id = str(run.pk)
    chains = run.chains

    def send():
        for k in range(chains):
            run_chain_task.delay(run_id, k)

    transaction.on_commit(send)


def submit_run(project, version, user, *, seed=None, **values) -> Run:
    """Compile ``version`` and queue a run of it.

    Raises
    ------
    ModelRefused
        The model cannot be built (cycle, no evidence, outside the curve ...)
        or the settings are out of range.
    """
    check_settings(values)
    compiled = compile_version(version)
    with transaction.atomic():
        run = create_run(project, version, user, compiled, seed=seed, **values)
        enqueue(run)
    return run


def cancel_run(run: Run) -> Run:
    """Ask a run to stop; a run no chain has started is cancelled at once."""
    now = timezone.now()
    Run.objects.filter(pk=run.pk).update(cancel_requested=True)
    Run.objects.filter(pk=run.pk, state=RunState.QUEUED).update(state=RunState.CANCELLED, finished_at=now)
    RunChain.objects.filter(run_id=run.pk, state=ChainState.QUEUED).update(state=ChainState.CANCELLED)
    run.refresh_from_db()
    return run


def continue_run(run: Run, user, *, iterations=None, seed=None) -> Run:
    """A new run appending ``iterations`` more kept sweeps per chain to ``run``'s draws."""
    from chronology.engine.model import Model

    if run.state != RunState.DONE:
        raise ModelRefused("run-not-done", "only a finished run can be continued", status=409, state=run.state)
    text = run.path("model.json").read_text()
    model = Model.from_json(text)

    compiled = CompiledModel(model, tuple(run.curves), tuple(run.compile_notes),
                             tuple((run.summary or {}).get("evidence", ())),
                             dict((run.summary or {}).get("question_labels", {})))
    with transaction.atomic():
        new = create_run(run.project, None, user, compiled, parent=run, seed=seed, chains=run.chains,
                         iterations=iterations or run.iterations, warmup=run.warmup, thin=run.thin)
        enqueue(new)
    return new


def run_inline(run: Run, on_progress=None) -> Run:
    """Sample every chain of ``run`` in this process, one after the other, then combine.

    The same task bodies as the workers run, so the outcome is identical;
    ``on_progress(chain, sweeps_done, total)`` is called as the chains go.
    """
    from .tasks import execute_chain

    for k in range(run.chains):
        execute_chain(str(run.pk), k, on_progress=on_progress)
    run.refresh_from_db()
    return run


def start_inline(project, version, user, **values) -> Run:
    """Compile ``version`` and store a queued run without sending any task (for :func:`run_inline`)."""
    seed = values.pop("seed", None)
    check_settings(values)
    compiled = compile_version(version)
    with transaction.atomic():
        return create_run(project, version, user, compiled, seed=seed, **values)
