"""The rows of each package table, read from a project and streamed.

Every generator yields plain rows (lists in the order of the table's
fields) in a stable order, reading with ``iterator()`` so that even the
change log of a large project is never held in memory at once.  Record
objects are named by uid (see ``exchange.portable``).
"""

from __future__ import annotations

import re
from typing import Iterator

from chronology.evidence.models import CalendarDate, Curve, Determination, Sample, Terminus
from chronology.interpretations.models import Interpretation, Version
from chronology.runs.models import Run
from projects.models import ChangeLogEntry, Context, RecordState, Relationship, Revision

from ..portable import KeyMap, portable_hash, version_key
from . import schemas

CHUNK = 5000

#: Licences that allow a curve's table to be passed on with the record: open
#: licences naming redistribution (CC0, CC BY, CC BY-SA, ODC-BY, ODbL, public
#: domain) without a non-commercial or no-derivatives term, and the
#: project's synthetic test curves.  Any other licence text keeps the rows
#: out; the package then carries the curve's name, citation, licence and
#: checksum only, so the receiver can import the same table from its source.
OPEN_LICENCE = re.compile(r"\b(CC0|CC[- ]BY(?:[- ]SA)?|ODC[- ]BY|ODbL|public domain)\b", re.IGNORECASE)
RESTRICTED = re.compile(r"\b(NC|ND|non[- ]commercial|no[- ]derivatives?|all rights reserved)\b", re.IGNORECASE)


def licence_allows_table(curve: Curve) -> bool:
    """Whether ``curve``'s rows may go into a package (see ``OPEN_LICENCE``)."""
    if curve.synthetic:
        return True
    return bool(OPEN_LICENCE.search(curve.licence or "")) and not RESTRICTED.search(curve.licence or "")


def _lifetime(obj) -> list:
    return [obj.created_revision, obj.retracted_revision, obj.retraction_reason]


def contexts(project, keys: KeyMap) -> Iterator[list]:
    for c in Context.objects.filter(project=project).order_by("id").iterator(chunk_size=CHUNK):
        yield [str(c.uid), c.label, c.kind, c.description, c.area, c.top_level, c.base_level, *_lifetime(c)]


def relationships(project, keys: KeyMap) -> Iterator[list]:
    ctx = keys.uid["context"]
    for r in Relationship.objects.filter(project=project).order_by("id").iterator(chunk_size=CHUNK):
        yield [str(r.uid), r.type, ctx[r.later_id], ctx[r.earlier_id], r.certainty, r.recorded_as, r.note,
               *_lifetime(r)]


def samples(project, keys: KeyMap) -> Iterator[list]:
    ctx = keys.uid["context"]
    for s in Sample.objects.filter(project=project).order_by("id").iterator(chunk_size=CHUNK):
        yield [str(s.uid), ctx[s.context_id], s.code, s.material, s.short_lived, s.notes, *_lifetime(s)]


def _curves(keys: KeyMap):
    return Curve.objects.filter(pk__in=list(keys.curve_key)).select_related("table").order_by("table__checksum", "id")


def curves(project, keys: KeyMap) -> Iterator[list]:
    seen = set()
    for c in _curves(keys):
        if c.table.checksum in seen:  # two names for one table: the first stands for both
            continue
        seen.add(c.table.checksum)
        yield [c.table.checksum, c.name, c.citation, c.licence, c.synthetic, c.table.n_rows, c.table.cal_bp_min,
               c.table.cal_bp_max, licence_allows_table(c)]


def curve_rows(project, keys: KeyMap) -> Iterator[list]:
    seen = set()
    for c in _curves(keys):
        if c.table.checksum in seen or not licence_allows_table(c):
            continue
        seen.add(c.table.checksum)
        rows = c.table.rows
        for i, (cal, c14, sigma) in enumerate(zip(rows["cal_bp"], rows["c14_bp"], rows["sigma"])):
            yield [c.table.checksum, i, cal, c14, sigma]


def determinations(project, keys: KeyMap) -> Iterator[list]:
    smp, crv = keys.uid["sample"], keys.curve_key
    for d in Determination.objects.filter(project=project).order_by("id").iterator(chunk_size=CHUNK):
        yield [str(d.uid), smp[d.sample_id], d.lab_code, d.measured, d.cra, d.cra_sigma, d.f14c, d.f14c_sigma,
               d.delta13c, crv[d.curve_id], d.delta_r, d.delta_r_sigma, d.marine_fraction, d.marine_fraction_sigma,
               crv.get(d.marine_curve_id) if d.marine_curve_id else None, d.notes, *_lifetime(d)]


def calendar_dates(project, keys: KeyMap) -> Iterator[list]:
    smp, ctx = keys.uid["sample"], keys.uid["context"]
    for d in CalendarDate.objects.filter(project=project).order_by("id").iterator(chunk_size=CHUNK):
        yield [str(d.uid), smp.get(d.sample_id) if d.sample_id else None, ctx[d.context_id], d.kind, d.mean, d.sd,
               d.start, d.end, d.method, d.notes, *_lifetime(d)]


def termini(project, keys: KeyMap) -> Iterator[list]:
    ctx = keys.uid["context"]
    for t in Terminus.objects.filter(project=project).order_by("id").iterator(chunk_size=CHUNK):
        yield [str(t.uid), ctx[t.context_id], t.kind, t.year, t.year_end, t.find, t.notes, *_lifetime(t)]


def interpretations(project, keys: KeyMap) -> Iterator[list]:
    for i in Interpretation.objects.filter(project=project).order_by("id"):
        yield [i.name, i.description]


def versions(project, keys: KeyMap) -> Iterator[list]:
    qs = Version.objects.filter(project=project).select_related("interpretation", "author").order_by("id")
    for v in qs.iterator(chunk_size=500):
        content = keys.content_out(v.content)
        yield [version_key(v.interpretation.name, v.number), v.interpretation.name, v.number,
               keys.version_key.get(v.parent_id) if v.parent_id else None, v.record_revision, v.author.username,
               v.message, v.status, v.status_reason, content, portable_hash(content, v.record_revision), v.is_valid]


def runs(project, keys: KeyMap) -> Iterator[list]:
    for run in Run.objects.filter(project=project).select_related("created_by").order_by("created_at", "id"):
        key = keys.run_key(run)
        yield [key, keys.version_key.get(run.version_id, str(run.version_id)), run.record_revision,
               keys.run_key(run.parent) if run.parent_id else None, run.state,
               run.created_by.username if run.created_by else "", run.chains, run.iterations, run.warmup, run.thin,
               run.seed_entropy, run.rng, run.model_hash, run.prior, run.grid, run.range, run.curves,
               run.compile_notes, run.library_versions, run.software_commit, run.converged, run.error,
               run.summary, samples_path(key) if run.path("samples.nc").exists() else None]


def samples_path(run_key: str) -> str:
    return f"runs/{run_key}.nc"


def revisions(project, keys: KeyMap) -> Iterator[list]:
    source = keys.source_digests
    yield [0, None, "", "", "", "the empty record", "", "", ""]
    qs = Revision.objects.filter(project=project).order_by("number")
    for r in qs.iterator(chunk_size=CHUNK):
        yield [r.number, r.created_at, r.user_name, r.device, r.request_id, r.summary, r.parent_digest, r.digest,
               source.get(r.number, r.digest)]


def changes(project, keys: KeyMap) -> Iterator[list]:
    # Plain tuples, not model instances: the log is the largest table.
    qs = ChangeLogEntry.objects.filter(project=project).order_by("revision", "id").values_list(
        "revision", "created_at", "user_name", "device", "request_id", "action", "object_kind", "object_id",
        "object_repr", "before", "after", "message")
    for seq, e in enumerate(qs.iterator(chunk_size=CHUNK), start=1):
        revision, created_at, user_name, device, request_id, action, kind, object_id, repr_, before, after, msg = e
        yield [seq, revision, created_at, user_name, device, request_id, action, kind,
               keys.object_key(kind, object_id), repr_, keys.log_value_out(kind, before),
               keys.log_value_out(kind, after), msg]


def record_states(project, keys: KeyMap) -> Iterator[list]:
    qs = RecordState.objects.filter(project=project).order_by("kind", "object_id", "valid_from")
    for s in qs.values_list("kind", "object_id", "valid_from", "valid_to", "data").iterator(chunk_size=CHUNK):
        kind, object_id, valid_from, valid_to, data = s
        yield [kind, keys.uid[kind].get(object_id, str(object_id)), valid_from, valid_to, keys.state_out(data)]


ROWS = {
    schemas.CONTEXTS.name: contexts,
    schemas.RELATIONSHIPS.name: relationships,
    schemas.SAMPLES.name: samples,
    schemas.CURVES.name: curves,
    schemas.CURVE_ROWS.name: curve_rows,
    schemas.DETERMINATIONS.name: determinations,
    schemas.CALENDAR_DATES.name: calendar_dates,
    schemas.TERMINI.name: termini,
    schemas.INTERPRETATIONS.name: interpretations,
    schemas.VERSIONS.name: versions,
    schemas.RUNS.name: runs,
    schemas.REVISIONS.name: revisions,
    schemas.CHANGES.name: changes,
    schemas.RECORD_STATES.name: record_states,
}
