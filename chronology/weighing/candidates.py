"""The candidates of a weighing: committed versions, or the alternatives of one version.

Two ways to ask:

* several committed versions of one project that use the same evidence
  (the same dating evidence items, whatever use or outlier prior each
  gives them): one candidate per version;
* one version's *alternatives*: each of the ``2^k`` ways of deciding the
  ``k`` equalities and uncertain relationships it leaves undecided, for
  ``k <= MAX_ALTERNATIVE_ITEMS``; a choice that makes the order inconsistent
  cannot be true and is listed as refused, with its reason.  For larger
  ``k`` (or when asked, ``method="joint"``) the uncertain relationships are
  weighed jointly from one encompassing model per decision of the
  equalities (:mod:`chronology.weighing.joint`), since the number of
  marginal likelihoods would double with every item.

Every candidate is compiled on one overall range, since a marginal
likelihood depends on the range (the prior is uniform over it): when the
candidates' own ranges differ they are all compiled on the smallest range
holding every one, and a note says so.
"""

from __future__ import annotations

from chronology.runs.compile import CompiledModel, ModelRefused
from chronology.runs.sources import find_version, version_label

from .joint import check_family, families, reading_name
from .variants import Decisions, compile_variant, decision_sets, record_of, undecided_items

__all__ = ["MAX_ALTERNATIVE_ITEMS", "MAX_VERSIONS", "METHODS", "Prepared", "prepare", "compile_candidate"]

#: Most undecided items whose 2^k alternatives are weighed one by one.
MAX_ALTERNATIVE_ITEMS = 4
#: Most versions in one weighing.
MAX_VERSIONS = 8
#: How a version's alternatives are weighed: one by one up to the limit and jointly beyond it, or as asked.
METHODS = ("auto", "one-by-one", "joint")


class Prepared:
    """Compiled candidates (name -> spec and model), the refused ones, the common range and notes."""

    def __init__(self):
        self.candidates: list[dict] = []
        self.models: list[CompiledModel] = []
        self.refused: list[dict] = []
        self.range: tuple[float, float] | None = None
        self.notes: list[str] = []
        self.mode = "versions"


def compile_candidate(project, candidate: dict, range_=None) -> CompiledModel:
    """Compile one candidate as stored in a job's params."""
    version = find_version(project, candidate["version"])
    if version is None:
        raise ModelRefused("unknown-version", f"no interpretation version {candidate['version']}", status=404,
                           field="versions")
    decisions = None
    if "accepted" in candidate:
        decisions = Decisions(frozenset(candidate["accepted"]), frozenset(candidate["rejected"]))
    return compile_variant(version, decisions=decisions, range_=range_)


def _used_evidence(compiled: CompiledModel) -> frozenset:
    return frozenset(row["key"] for row in compiled.evidence if row["use"] != "excluded")


def _versions(project, version_ids) -> list[dict]:
    if not isinstance(version_ids, list) or not 2 <= len(version_ids) <= MAX_VERSIONS:
        raise ModelRefused("invalid-input", f"versions is a list of 2 to {MAX_VERSIONS} version ids", status=400,
                           field="versions")
    if len(set(map(str, version_ids))) != len(version_ids):
        raise ModelRefused("invalid-input", "a version is named twice", status=400, field="versions")
    out = []
    for ident in version_ids:
        version = find_version(project, ident)
        if version is None:
            raise ModelRefused("unknown-version", f"no interpretation version {ident!r} in this project", status=404,
                               field="versions")
        out.append({"name": version_label(version), "version": version.pk})
    return out


def _alternatives(project, version_id, method: str) -> tuple[str, list[dict]]:
    version = find_version(project, version_id)
    if version is None:
        raise ModelRefused("unknown-version", f"no interpretation version {version_id!r} in this project", status=404,
                           field="version")
    _project, _rev, content, _contexts, relationships = record_of(version)
    items = undecided_items(content, relationships)
    if not items:
        raise ModelRefused("no-alternatives", "the version leaves nothing undecided: it has one reading only",
                           status=422, field="version")
    if method == "joint" or (method == "auto" and len(items) > MAX_ALTERNATIVE_ITEMS):
        return "joint", families(version, items)
    if len(items) > MAX_ALTERNATIVE_ITEMS:
        raise ModelRefused(
            "too-many-alternatives",
            f"the version leaves {len(items)} items undecided: 2^{len(items)} = {2 ** len(items)} marginal "
            f"likelihoods is too many to weigh one by one (at most {MAX_ALTERNATIVE_ITEMS} items); weigh them "
            "jointly (method \"joint\"), decide some first, or commit the readings you want to compare as "
            "versions and weigh those",
            status=422, field="version", undecided=[rid for rid, _k in items])
    label = version_label(version)
    out = []
    for accepted, rejected in decision_sets(items):
        out.append({"name": reading_name(label, items, accepted), "version": version.pk, "accepted": accepted,
                    "rejected": rejected})
    return "alternatives", out


def prepare(project, *, versions=None, alternatives_of=None, method: str = "auto") -> Prepared:
    """Compile every candidate once, check they use the same evidence and put them on one range.

    Raises
    ------
    ModelRefused
        ``invalid-input`` (400), ``unknown-version`` (404),
        ``no-alternatives``/``too-many-alternatives``/``different-evidence``
        (422), ``no-candidates`` (422) when every alternative is refused, or
        a version's own refusal.  With ``method="joint"`` a candidate is a
        family of readings (:func:`chronology.weighing.joint.families`).
    """
    if (versions is None) == (alternatives_of is None):
        raise ModelRefused("invalid-input", "give either versions (a list of ids) or version (one id) with "
                           "alternatives: true", status=400, field="versions")
    if method not in METHODS:
        raise ModelRefused("invalid-input", f"method is one of {', '.join(METHODS)}", status=400, field="method")
    out = Prepared()
    if versions is not None:
        specs = _versions(project, versions)
    else:
        out.mode, specs = _alternatives(project, alternatives_of, method)
    compiled: list[tuple[dict, CompiledModel]] = []
    for spec in specs:
        try:
            c = compile_candidate(project, spec)
            if out.mode == "joint":
                check_family(project, spec, c)
            compiled.append((spec, c))
        except ModelRefused as exc:
            if versions is not None or exc.code == "not-a-restriction":
                raise
            out.refused.append({**spec, "code": exc.code, "reason": exc.message})
    if not compiled:
        raise ModelRefused("no-candidates", "every alternative is refused", status=422, field="version",
                           refused=out.refused)
    used = {_used_evidence(c) for _s, c in compiled}
    if len(used) > 1:
        raise ModelRefused("different-evidence", "the versions do not use the same dating evidence, so their "
                           "marginal likelihoods are not comparable", status=422, field="versions",
                           evidence=[{"name": s["name"], "evidence": sorted(_used_evidence(c))} for s, c in compiled])
    ranges = {(c.model.range_lo, c.model.range_hi) for _s, c in compiled}
    out.range = (min(r[0] for r in ranges), max(r[1] for r in ranges))
    if len(ranges) > 1:
        out.notes.append(f"the candidates' own overall ranges differ; every one is compiled on "
                         f"{out.range[0]:g} to {out.range[1]:g} (astronomical years) so their marginal likelihoods "
                         "are comparable")
        compiled = [(s, compile_candidate(project, s, out.range)) for s, _c in compiled]
    for spec, c in compiled:
        out.candidates.append({**spec, "model_hash": c.model_hash, "events": len(c.model.events)})
        out.models.append(c)
    return out
