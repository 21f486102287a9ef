"""Sensitivity runs: one version sampled under a set of variations, as one background job.

The request names a committed version and up to :data:`MAX_VARIATIONS`
variations (:mod:`chronology.weighing.variants`).  Every variation is compiled
at once, so a bad one is refused before any sampling; the job then samples
the base and each variation with the service's sampler (the same settings
and seed for all) and reports, per boundary, how its median and its ranges
move from the base (:func:`chronology.engine.sensitivity.movements`).
"""

from __future__ import annotations

import secrets

from chronology import jobs
from chronology.models import Job
from chronology.runs.compile import ModelRefused
from chronology.runs.sources import find_version, version_label
from projects.models import Role

from .settings_input import whole_number_settings
from .variants import check_variation, compile_variant

__all__ = ["JOB_KIND", "MAX_VARIATIONS", "SAMPLING_LIMITS", "start_sensitivity"]

JOB_KIND = "sensitivity"
MAX_VARIATIONS = 8
#: Sampling settings of a sensitivity run: name -> (least, greatest, default).
SAMPLING_LIMITS = {"chains": (1, 8, 2), "iterations": (200, 50000, 3000), "warmup": (0, 20000, 500)}


def _sampling(data) -> dict:
    limits = {name: (lo, hi) for name, (lo, hi, _default) in SAMPLING_LIMITS.items()}
    defaults = {name: default for name, (_lo, _hi, default) in SAMPLING_LIMITS.items()}
    return whole_number_settings(data, limits, defaults)


def start_sensitivity(project, actor, *, version_id, variations, settings=None, seed=None) -> Job:
    """Check and compile every variation now, then submit the sampling as one job."""
    from chronology.interpretations.services import log_action, require_role

    from .tasks import run_sensitivity

    require_role(project, actor, Role.ANALYST)
    version = find_version(project, version_id)
    if version is None:
        raise ModelRefused("unknown-version", f"no interpretation version {version_id!r} in this project",
                           status=404, field="version")
    if not isinstance(variations, list) or not 1 <= len(variations) <= MAX_VARIATIONS:
        raise ModelRefused("invalid-input", f"variations is a list of 1 to {MAX_VARIATIONS} objects", status=400,
                           field="variations")
    checked = [check_variation(v, i) for i, v in enumerate(variations)]
    sampling = _sampling(settings)
    if seed is not None and (not isinstance(seed, int) or isinstance(seed, bool) or not 0 <= seed < 2 ** 63):
        raise ModelRefused("invalid-input", "seed is a whole number from 0 to 2^63 - 1", status=400, field="seed")
    base = compile_variant(version)
    for i, v in enumerate(checked):
        try:
            compile_variant(version, variation=v)
        except ModelRefused as exc:
            exc.details.setdefault("field", f"variations[{i}]")
            exc.details["variation"] = i
            raise
    params = {"version": version.pk, "version_label": version_label(version), "variations": checked,
              "settings": sampling, "seed": secrets.randbits(32) if seed is None else seed,
              "base_model_hash": base.model_hash}
    job = jobs.submit(project, actor.user, JOB_KIND, params, run_sensitivity)
    log_action(project, actor, "interpretation.sensitivity.requested", kind="interpretation_version",
               object_id=version.pk, repr_=version_label(version), after=params)
    return job
