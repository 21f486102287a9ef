"""``python manage.py bench SUITE --json``: speed figures as JSON.

Suites measure, in one run, our code and (where there is one) the reference
library doing the same job, so ratios are fair.  Tests assert correctness;
these only report speed.
"""

from __future__ import annotations

import importlib
import json

from django.core.management.base import BaseCommand, CommandError

SUITES = {
    # The write path through HTTP is measured from the API layer, which sits above chronology.
    "record": "api.benchmarks.record",
    "graph": "chronology.benchmarks.graph",
    "diagram": "chronology.benchmarks.diagram",
    "alternatives": "chronology.benchmarks.alternatives",
    "calibration": "chronology.benchmarks.calibration",
    "calibration-limits": "chronology.benchmarks.calibration_limits",
    "sampler": "chronology.benchmarks.sampler",
    "calibration-check": "chronology.benchmarks.calibration_check",
    "sync": "api.benchmarks.sync",
    "coverage": "chronology.benchmarks.coverage",
    "evidence": "chronology.benchmarks.evidence",
    "readings": "chronology.benchmarks.readings",
    "outputs": "chronology.benchmarks.outputs",
    # The package's own suite lives with it (exchange sits above chronology; named here, imported on demand).
    "exchange": "exchange.benchmark",
    "pages": "web.benchmarks",
}


class Command(BaseCommand):
    help = "Run a benchmark suite and print its figures (as JSON with --json)."

    def add_arguments(self, parser):
        parser.add_argument("suite", choices=sorted(SUITES))
        parser.add_argument("--json", action="store_true", help="Print one JSON object.")
        parser.add_argument("--contexts", type=int, action="append", help="Record size(s), where the suite takes one.")
        parser.add_argument("--posts", type=int, help="Relationships to post (record suite).")
        parser.add_argument("--quick", action="store_true", help="Smaller cases, for a smoke run.")
        parser.add_argument("--variant", action="append", help="Only this variant (coverage suite); repeatable.")
        parser.add_argument("--sites", type=int, help="Simulated sites per variant (coverage suite).")

    def handle(self, *args, suite, json: bool, contexts, posts, quick, variant=None, sites=None, **options):
        try:
            module = importlib.import_module(SUITES[suite])
        except ImportError as exc:
            raise CommandError(f"suite {suite} is not available: {exc}") from exc
        kwargs = {}
        if suite in ("record", "sync"):
            if contexts:
                kwargs["contexts"] = contexts[0]
            if posts and suite == "record":
                kwargs["posts"] = posts
        elif contexts and suite in ("graph", "diagram"):
            kwargs["sizes"] = tuple(contexts)
        elif contexts and suite == "pages":
            kwargs.update(contexts=contexts[0], relationships=contexts[0] * 5 // 4)
        elif contexts and suite == "alternatives":
            kwargs["contexts"] = contexts[0]
        if suite == "coverage":
            if variant:
                unknown = sorted(set(variant) - set(module.VARIANTS))
                if unknown:
                    raise CommandError(f"unknown coverage variant(s) {', '.join(unknown)}; "
                                       f"choose from {', '.join(module.VARIANTS)}")
                kwargs["variants"] = tuple(variant)
            if sites:
                kwargs["sites"] = sites
        if quick:
            kwargs.update(getattr(module, "QUICK", {}))
        result = module.run(**kwargs)
        if json:
            self.stdout.write(_dumps(result))
        else:
            self.stdout.write(_dumps(result, indent=2))


def _dumps(result, indent=None) -> str:
    return json.dumps(result, indent=indent, default=float)
