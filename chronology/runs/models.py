"""Model runs: one compiled model sampled by several chains in background workers.

The row in the database is the truth users see (state, progress per chain,
timings, errors, the summary of the results); the broker only carries ids.
Large artefacts live in files under ``MEDIA_ROOT/runs/<run id>/``:

* ``model.json`` — the compiled model, canonical JSON, hashed into ``model_hash``;
* ``chain-<k>.npz`` — the kept draws of chain ``k`` (written atomically);
* ``samples.nc`` — every chain's draws as ArviZ InferenceData (NetCDF);
* ``results.json`` and ``plot.svg`` / ``plot.png`` — the summaries.

A run is reproducible: the model hash, the seed entropy, the chain settings,
the curve checksums, the library versions and the software commit are stored
with it, and the same model with the same seed gives identical draws.
"""

from __future__ import annotations

import uuid
from pathlib import Path

from django.conf import settings
from django.db import models
from django.utils import timezone

from projects.models import Project


class RunState(models.TextChoices):
    QUEUED = "queued"
    RUNNING = "running"
    DONE = "done"
    FAILED = "failed"
    CANCELLED = "cancelled"


TERMINAL_STATES = frozenset({RunState.DONE, RunState.FAILED, RunState.CANCELLED})


class Run(models.Model):
    id = models.UUIDField(primary_key=True, default=uuid.uuid4, editable=False)
    project = models.ForeignKey(Project, on_delete=models.PROTECT, related_name="model_runs")
    version_id = models.BigIntegerField(help_text="The committed interpretation version the model was compiled from.")
    version_label = models.CharField(max_length=200, blank=True)
    record_revision = models.PositiveIntegerField(help_text="Record revision the version refers to.")
    parent = models.ForeignKey(
        "self", on_delete=models.PROTECT, null=True, blank=True, related_name="continuations",
        help_text="The run this one continues: its draws come first in every chain.",
    )
    state = models.CharField(max_length=10, choices=RunState.choices, default=RunState.QUEUED)
    created_by = models.ForeignKey(settings.AUTH_USER_MODEL, on_delete=models.PROTECT, null=True, related_name="+")
    created_at = models.DateTimeField(default=timezone.now)
    started_at = models.DateTimeField(null=True, blank=True)
    finished_at = models.DateTimeField(null=True, blank=True)
    cancel_requested = models.BooleanField(default=False)

    chains = models.PositiveSmallIntegerField()
    iterations = models.PositiveIntegerField(help_text="Sweeps kept per chain after warm-up, before thinning.")
    warmup = models.PositiveIntegerField()
    thin = models.PositiveIntegerField(default=1)
    seed_entropy = models.CharField(max_length=80, help_text="numpy SeedSequence entropy, decimal.")
    rng = models.CharField(max_length=120, default="numpy SeedSequence.spawn per chain; xoshiro256** in the kernel")

    model_hash = models.CharField(max_length=64, help_text="SHA-256 of the canonical model JSON.")
    prior = models.CharField(max_length=20)
    grid = models.JSONField(default=dict)
    range = models.JSONField(default=dict, help_text="Overall range L..U, astronomical years.")
    curves = models.JSONField(default=list, help_text="Name, checksum and licence of each curve used.")
    compile_notes = models.JSONField(default=list, blank=True)
    library_versions = models.JSONField(default=dict)
    software_commit = models.CharField(max_length=64, blank=True)

    converge = models.BooleanField(default=True, help_text="Extend the run until every reported quantity converges.")
    budget_seconds = models.PositiveIntegerField(default=900, help_text="Wall time the run may take to converge.")
    max_iterations = models.PositiveIntegerField(default=200_000,
                                                 help_text="Most kept sweeps per chain the run may reach.")
    rounds = models.JSONField(default=list, blank=True,
                              help_text="Each extension: iterations and chains after it, and why it was made.")
    verdict = models.JSONField(null=True, blank=True,
                               help_text="Why the run ended as it did: converged, or which budget ran out.")

    combining = models.BooleanField(default=False)
    timings = models.JSONField(default=dict, blank=True)
    error = models.JSONField(null=True, blank=True)
    converged = models.BooleanField(null=True, blank=True)
    summary = models.JSONField(null=True, blank=True, help_text="Per-event ranges, questions, outliers, diagnostics.")

    class Meta:
        ordering = ["-created_at"]
        indexes = [models.Index(fields=["project", "created_at"])]

    def __str__(self) -> str:
        return f"run {self.id} ({self.state})"

    @property
    def is_terminal(self) -> bool:
        return self.state in TERMINAL_STATES

    @property
    def total_sweeps(self) -> int:
        return self.warmup + self.iterations

    @property
    def directory(self) -> Path:
        return Path(settings.MEDIA_ROOT) / "runs" / str(self.id)

    def path(self, name: str) -> Path:
        return self.directory / name

    def chain_path(self, k: int) -> Path:
        return self.path(f"chain-{k}.npz")


class ChainState(models.TextChoices):
    QUEUED = "queued"
    RUNNING = "running"
    DONE = "done"
    FAILED = "failed"
    CANCELLED = "cancelled"


class RunChain(models.Model):
    """Progress of one chain, on its own row so chains never contend for one lock."""

    run = models.ForeignKey(Run, on_delete=models.CASCADE, related_name="chain_rows")
    index = models.PositiveSmallIntegerField()
    state = models.CharField(max_length=10, choices=ChainState.choices, default=ChainState.QUEUED)
    sweeps_done = models.PositiveIntegerField(default=0, help_text="Sweeps done in the segment being sampled.")
    iterations_done = models.PositiveIntegerField(default=0, help_text="Kept sweeps stored in the chain file.")
    segments = models.PositiveSmallIntegerField(default=0, help_text="Segments stored (one per extension).")
    attempts = models.PositiveSmallIntegerField(default=0, help_text="Claims of the current segment.")
    worker = models.CharField(max_length=200, blank=True)
    heartbeat_at = models.DateTimeField(null=True, blank=True)
    lease_expires_at = models.DateTimeField(null=True, blank=True,
                                            help_text="The worker holding the chain must renew this by then.")
    enqueued_at = models.DateTimeField(null=True, blank=True)
    compile_seconds = models.FloatField(null=True, blank=True, help_text="Kernel compile or cache load time.")
    started_at = models.DateTimeField(null=True, blank=True)
    finished_at = models.DateTimeField(null=True, blank=True)
    seconds = models.FloatField(null=True, blank=True, help_text="Sampling time of the stored draws (all segments).")
    draws = models.PositiveIntegerField(default=0)

    class Meta:
        ordering = ["run_id", "index"]
        constraints = [models.UniqueConstraint(fields=["run", "index"], name="one_row_per_run_chain")]

    def __str__(self) -> str:
        return f"chain {self.index} of {self.run_id} ({self.state})"
