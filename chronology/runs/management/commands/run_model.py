"""``python manage.py run_model --project VML24 --version <id>``: run a model with a progress bar."""

from __future__ import annotations

import time

from django.core.management.base import BaseCommand, CommandError

from chronology.runs.compile import ModelRefused
from chronology.runs.models import Run
from chronology.runs.service import DEFAULTS, cancel_run, run_inline, start_inline, submit_run
from chronology.runs.sources import current_reading, find_version
from chronology.runs.summary_table import markdown_summary
from projects.models import Project

_WIDTH = 30


class Command(BaseCommand):
    help = ("Compile a committed interpretation version and sample it. Without a broker the chains run here, "
            "one after the other; with one, the command queues the run and follows its progress.")

    def add_arguments(self, parser):
        # --version names the interpretation version here, not the program's version
        for container in (parser, *parser._action_groups):
            container.conflict_handler = "resolve"
        parser.add_argument("--project", required=True, help="Project code, or ORG:CODE.")
        parser.add_argument("--version", dest="version_id", help="Interpretation version id (default: the "
                            "project's current reading).")
        for name, default in DEFAULTS.items():
            parser.add_argument(f"--{name.replace('_', '-')}", dest=name, type=int, default=default)
        parser.add_argument("--no-converge", action="store_true", help="Sample exactly the iterations given "
                            "instead of extending the run until it converges (or its budget runs out).")
        parser.add_argument("--seed", type=int, default=None, help="Seed entropy (default: random, stored).")
        parser.add_argument("--queue", action="store_true", help="Send the chains to the workers even when "
                            "tasks would run eagerly.")

    def handle(self, *args, project, version_id, seed, queue, no_converge, **options):
        from config.celery import app

        from chronology.runs.sweeper import sweep

        # no beat without a broker: runs whose process stopped are ended here (see the sweeper)
        sweep()
        proj = self._project(project)
        version = find_version(proj, version_id) if version_id else current_reading(proj)
        if version is None:
            raise CommandError(f"no interpretation version {version_id or '(current reading)'} in {proj.code}")
        values = {k: options[k] for k in DEFAULTS}
        values["converge"] = not no_converge
        try:
            if app.conf.task_always_eager and not queue:
                run = start_inline(proj, version, None, seed=seed, **values)
                self.stdout.write(f"run {run.pk}: {run.chains} chains of {run.total_sweeps} sweeps, in this process")
                run = run_inline(run, on_progress=self._bar(run))
            else:
                run = submit_run(proj, version, None, seed=seed, **values)
                self.stdout.write(f"run {run.pk} queued; following its progress (Ctrl-C cancels)")
                run = self._follow(run)
        except ModelRefused as exc:
            raise CommandError(f"the model cannot be built ({exc.code}): {exc.message}") from None
        self.stdout.write("")
        if run.state != "done":
            raise CommandError(f"run {run.pk} ended {run.state}: {run.error}")
        self.stdout.write(markdown_summary(run, run.summary))
        if run.verdict:
            self.stdout.write(f"{run.verdict['code']}: {run.verdict['message']}")
        compiling = sum(c or 0.0 for c in run.timings.get("compile_seconds") or [])
        self.stdout.write(f"compile {compiling:.1f} s, "
                          f"sampling {run.timings.get('sampling_seconds') or 0:.1f} s (summed over chains), "
                          f"{run.timings.get('rounds', 1)} round(s)")
        self.stdout.write(f"results: {run.path('results.json')}\nsamples: {run.path('samples.nc')}\n"
                          f"plots: {run.path('plot.svg')}, {run.path('plot.png')}")

    def _project(self, ref: str) -> Project:
        qs = Project.objects.select_related("organisation")
        if ":" in ref:
            org, code = ref.split(":", 1)
            found = list(qs.filter(organisation__slug=org, code=code))
        else:
            found = list(qs.filter(code=ref))
        if len(found) != 1:
            raise CommandError(f"{'no' if not found else 'more than one'} project {ref!r} (use ORG:CODE)")
        return found[0]

    def _draw(self, done: dict, run) -> None:
        """``done`` maps chain to the fraction of its current segment sampled."""
        n = max(run.chains, len(done))
        fraction = sum(done.values()) / n if n else 1.0
        filled = int(round(_WIDTH * fraction))
        chains = " ".join(f"{100 * done.get(k, 0):3.0f}%" for k in range(n))
        self.stdout.write(f"\r[{'#' * filled}{'.' * (_WIDTH - filled)}] {100 * fraction:5.1f}%  chains: {chains}",
                          ending="")
        self.stdout.flush()

    def _bar(self, run):
        done: dict = {}
        last = [0.0]

        def report(k, sweeps, total):
            done[k] = sweeps / total if total else 1.0
            now = time.monotonic()
            if now - last[0] > 0.1 or sweeps == total:
                last[0] = now
                self._draw(done, run)

        return report

    def _follow(self, run: Run) -> Run:
        try:
            while True:
                run.refresh_from_db()
                total = run.total_sweeps
                self._draw({c.index: 1.0 if c.state == "done" else min(c.sweeps_done / total, 1.0)
                            for c in run.chain_rows.all()}, run)
                if run.is_terminal:
                    return run
                time.sleep(0.5)
        except KeyboardInterrupt:
            self.stdout.write("\ncancelling...")
            cancel_run(run)
            raise CommandError(f"run {run.pk} cancelled") from None
