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
            parser.add_argument(f"--{name}", type=int, default=default)
        parser.add_argument("--seed", type=int, default=None, help="Seed entropy (default: random, stored).")
        parser.add_argument("--queue", action="store_true", help="Send the chains to the workers even when "
                            "tasks would run eagerly.")

    def handle(self, *args, project, version_id, seed, queue, **options):
        from config.celery import app

        proj = self._project(project)
        version = find_version(proj, version_id) if version_id else current_reading(proj)
        if version is None:
            raise CommandError(f"no interpretation version {version_id or '(current reading)'} in {proj.code}")
        values = {k: options[k] for k in DEFAULTS}
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
        total = run.total_sweeps * run.chains
        fraction = sum(done.values()) / total if total else 1.0
        filled = int(round(_WIDTH * fraction))
        chains = " ".join(f"{100 * done.get(k, 0) / run.total_sweeps:3.0f}%" for k in range(run.chains))
        self.stdout.write(f"\r[{'#' * filled}{'.' * (_WIDTH - filled)}] {100 * fraction:5.1f}%  chains: {chains}",
                          ending="")
        self.stdout.flush()

    def _bar(self, run):
        done: dict = {}
        last = [0.0]

        def report(k, sweeps, total):
            done[k] = sweeps
            now = time.monotonic()
            if now - last[0] > 0.1 or sweeps == total:
                last[0] = now
                self._draw(done, run)

        return report

    def _follow(self, run: Run) -> Run:
        try:
            while True:
                run.refresh_from_db()
                self._draw({c.index: c.sweeps_done for c in run.chain_rows.all()}, run)
                if run.is_terminal:
                    return run
                time.sleep(0.5)
        except KeyboardInterrupt:
            self.stdout.write("\ncancelling...")
            cancel_run(run)
            raise CommandError(f"run {run.pk} cancelled") from None
