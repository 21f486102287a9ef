"""``python manage.py demo --out DIR``: the main job on the demo site.

Creates or reuses the database (migrating it), loads the invented site
Vellmarsh Lane through the public write path, checks it, and writes what it
found to DIR.  Each later stage of the path (order, interpretations,
evidence, models) adds its own step to ``STEPS``.
"""

from __future__ import annotations

import json
from pathlib import Path

from django.core.management import call_command
from django.core.management.base import BaseCommand

from demo.steps import STEPS


class Command(BaseCommand):
    help = "Load the invented demo site, check and model it, and write the outputs to --out."

    def add_arguments(self, parser):
        parser.add_argument("--out", default="demo-output", help="Folder for the outputs (created if missing).")
        parser.add_argument("--quick", action="store_true", help="Shorter model runs (for smoke tests).")

    def handle(self, *args, out, quick, **options):
        out_dir = Path(out).resolve()
        out_dir.mkdir(parents=True, exist_ok=True)
        call_command("migrate", interactive=False, verbosity=0)
        state: dict = {"out": out_dir, "quick": quick, "files": []}
        for step in STEPS:
            self.stdout.write(f"· {step.__doc__.strip().splitlines()[0]}")
            step(state, self.stdout)
        index = {"outputs": sorted(str(Path(f).relative_to(out_dir)) for f in state["files"])}
        (out_dir / "index.json").write_text(json.dumps(index, indent=2))
        self.stdout.write(self.style.SUCCESS(f"Demo written to {out_dir} ({len(state['files'])} files)"))
