"""Submitting, cancelling and continuing model runs.

A run is compiled when it is submitted, so a model that cannot be built is
refused at once with its reason (:class:`~chronology.runs.compile.ModelRefused`)
and never reaches a worker.  The compiled model is written to the run's
folder and hashed; then one Celery task per chain is enqueued when the
transaction commits (a worker never looks for a row that is not there).

A run converges by default: it extends itself until every reported quantity
meets the thresholds, within ``budget_seconds`` of wall time and
``max_iterations`` kept sweeps per chain (:mod:`chronology.runs.convergence`);
``converge: false`` samples exactly the iterations asked for.

Continuing a finished run (:func:`continue_run`) makes a NEW run linked to
its parent: the same model and settings, new seed entropy, ``iterations``
more kept sweeps per chain after a fresh warm-up from dispersed starts (the
sampler cannot yet resume from a stored state).  Its results are computed
over the parent's draws followed, chain by chain, by its own: "more draws
appended".  Continuing a failed or cancelled run resumes THAT run: the chains
it had stored are kept, the others are sampled again.

Cancelling (:func:`cancel_run`) always ends the run: at once when no worker
holds a live lease on one of its chains, otherwise as soon as the chain's next
heartbeat sees the request, or, if that worker is gone, at the next sweep.
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
from .leases import held
from .models import ChainState, Run, RunChain, RunState
from .outcomes import cancel_locked
from .rounds import after_chain, combine_fresh, send_chains
from .sources import version_label

__all__ = ["LIMITS", "DEFAULTS", "library_versions", "software_commit", "submit_run", "create_run", "enqueue",
           "cancel_run", "continue_run", "resume_run", "check_settings", "run_inline", "start_inline", "MIN_DRAWS"]

DEFAULTS = {"chains": 4, "iterations": 5000, "warmup": 1000, "thin": 1, "budget_seconds": 900,
            "max_iterations": 200_000}
LIMITS = {"chains": (1, 16), "iterations": (100, 2_000_000), "warmup": (0, 1_000_000), "thin": (1, 1000),
          "budget_seconds": (1, 6 * 3600), "max_iterations": (100, 2_000_000)}
#: Kept draws per chain below which the summaries (densities, ranges, ESS) cannot be computed reliably.
MIN_DRAWS = 100


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
    """Chains, iterations, warm-up, thinning and budgets within :data:`LIMITS` (raises ``ModelRefused`` 400)."""
    out = {}
    for name, default in DEFAULTS.items():
        value = values.get(name, default)
        if isinstance(value, bool):
            raise ModelRefused("invalid-number", f"{name} must be a whole number", status=400, field=name)
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
    if out["iterations"] // out["thin"] < MIN_DRAWS:
        raise ModelRefused("too-few-draws", f"iterations / thin must keep at least {MIN_DRAWS} draws per chain",
                           status=400, field="thin")
    if out["max_iterations"] < out["iterations"]:
        raise ModelRefused("out-of-range", "max_iterations must be at least iterations", status=400,
                           field="max_iterations")
    converge = values.get("converge", True)
    if not isinstance(converge, bool):
        raise ModelRefused("invalid-boolean", "converge must be true or false", status=400, field="converge")
    out["converge"] = converge
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
        converge=s["converge"], budget_seconds=s["budget_seconds"], max_iterations=s["max_iterations"],
        seed_entropy=str(_entropy(seed)), model_hash=model.spec_hash(), prior=model.prior,
        grid=model.grid.as_dict(), range={"lo": model.range_lo, "hi": model.range_hi},
        curves=list(compiled.curves), compile_notes=list(compiled.notes),
        library_versions=library_versions(), software_commit=software_commit(),
        summary={"evidence": list(compiled.evidence), "question_labels": dict(compiled.question_labels)},
    )
    now = timezone.now()
    RunChain.objects.bulk_create([RunChain(run=run, index=k, enqueued_at=now) for k in range(run.chains)])
    _write_atomic(run.path("model.json"), text)
    return run


def enqueue(run: Run) -> None:
    """Send one task per chain when the current transaction commits."""
    send_chains(str(run.pk), range(run.chains))


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
    """Ask a run to stop; it ends at once unless a worker holds a live lease on one of its chains."""
    with transaction.atomic():
        locked = Run.objects.select_for_update().get(pk=run.pk)
        if not locked.is_terminal:
            locked.cancel_requested = True
            locked.save(update_fields=["cancel_requested"])
            now = timezone.now()
            # a lease held by a process of this host that has ended will never see the request
            live = any(held(c, now) for c in RunChain.objects.filter(run=locked, state=ChainState.RUNNING))
            if not live and not combine_fresh(locked, now):
                cancel_locked(locked)
    run.refresh_from_db()
    return run


def continue_run(run: Run, user, *, iterations=None, seed=None) -> Run:
    """Resume a failed or cancelled run; or a new run appending ``iterations`` more kept sweeps to a done one."""
    from chronology.engine.model import Model

    if run.state in (RunState.FAILED, RunState.CANCELLED):
        if iterations is not None or seed is not None:
            raise ModelRefused("resume-keeps-settings", "a failed or cancelled run resumes with its own settings; "
                               "leave out iterations and seed", status=400, field="iterations")
        return resume_run(run)
    if run.state != RunState.DONE:
        raise ModelRefused("run-not-ended", "the run is still going; continue it once it has ended", status=409,
                           state=run.state)
    text = run.path("model.json").read_text()
    model = Model.from_json(text)

    compiled = CompiledModel(model, tuple(run.curves), tuple(run.compile_notes),
                             tuple((run.summary or {}).get("evidence", ())),
                             dict((run.summary or {}).get("question_labels", {})))
    more = iterations or run.iterations
    with transaction.atomic():
        new = create_run(run.project, None, user, compiled, parent=run, seed=seed, chains=run.chains,
                         iterations=more, warmup=run.warmup, thin=run.thin, converge=run.converge,
                         budget_seconds=run.budget_seconds, max_iterations=max(run.max_iterations, more))
        enqueue(new)
    return new


def resume_run(run: Run, *, dispatch: bool = True) -> Run:
    """Put a failed or cancelled run back in the queue; its stored chains are kept, the budget starts again."""
    with transaction.atomic():
        locked = Run.objects.select_for_update().get(pk=run.pk)
        if locked.state not in (RunState.FAILED, RunState.CANCELLED):
            raise ModelRefused("run-not-resumable", "only a failed or cancelled run can be resumed", status=409,
                               state=locked.state)
        now = timezone.now()
        locked.rounds = [*(locked.rounds or []), {"round": len(locked.rounds or []) + 1, "add_iterations": 0,
                                                  "add_chains": 0, "iterations": locked.iterations,
                                                  "chains": locked.chains, "at": now.isoformat(),
                                                  "reason": f"resumed after it ended {locked.state}",
                                                  "error": locked.error}]
        locked.state, locked.error, locked.finished_at = RunState.QUEUED, None, None
        locked.cancel_requested, locked.combining, locked.verdict = False, False, None
        locked.timings = {**(locked.timings or {}), "budget_from": None}
        locked.save(update_fields=["rounds", "state", "error", "finished_at", "cancel_requested", "combining",
                                   "verdict", "timings"])
        RunChain.objects.filter(run=locked).exclude(state=ChainState.DONE).update(
            state=ChainState.QUEUED, attempts=0, sweeps_done=0, enqueued_at=now, lease_expires_at=None)
        if dispatch:
            enqueue(locked)
    run.refresh_from_db()
    return run


def run_inline(run: Run, on_progress=None) -> Run:
    """Sample every chain of ``run`` in this process, one after the other, then combine.

    The same task bodies as the workers run, so the outcome is identical,
round after round until the run converges or its budget runs out;
    ``on_progress(chain, sweeps_done, total)`` is called as the chains go.
    """
    from .tasks import execute_chain

    while True:
        run.refresh_from_db()
        todo = list(RunChain.objects.filter(run=run).exclude(state=ChainState.DONE).values_list("index", flat=True))
        if run.is_terminal or not todo:
            break
        outcomes = [execute_chain(str(run.pk), k, on_progress=on_progress, dispatch=False) for k in todo]
        if not {"sampled", "stored"} & set(outcomes):
            break  # another process holds the chains left: it will finish them
    if not run.is_terminal:
        # every chain was stored by an earlier attempt: close the round here
        after_chain(str(run.pk), dispatch=False)
        run.refresh_from_db()
    return run


def start_inline(project, version, user, **values) -> Run:
    """Compile ``version`` and store a queued run without sending any task (for :func:`run_inline`)."""
    seed = values.pop("seed", None)
    check_settings(values)
    compiled = compile_version(version)
    with transaction.atomic():
        return create_run(project, version, user, compiled, seed=seed, **values)
