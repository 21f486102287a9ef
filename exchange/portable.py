"""The project-independent form of record data: objects named by uid, not by row id.

Row ids are local to one database; the client-generated uids travel with
each object (and are kept on import), so the package names every record
object by its uid, every curve by the checksum of its table, every
interpretation by its name and every version by ``<name>#<number>``.  The
same translation read backwards turns a package into arguments for the
write path of another project.
"""

from __future__ import annotations

import hashlib
import json
import re

from chronology.evidence.models import CalendarDate, Curve, Determination, Sample, Terminus
from projects.models import Context, Relationship

#: Record object kinds and their models, in the order their references allow.
RECORD_MODELS = {
    "context": Context,
    "relationship": Relationship,
    "sample": Sample,
    "determination": Determination,
    "calendar_date": CalendarDate,
    "terminus": Terminus,
}

#: Keys of the stored representations that hold the row id of another object.
REFERENCE_KEYS = {"later_id": "context", "earlier_id": "context", "context_id": "context", "sample_id": "sample"}
CURVE_KEYS = ("curve_id", "marine_curve_id")

_EVIDENCE_REF = re.compile(r"^(sample|determination|calendar_date|terminus):(.+)$")


def version_key(interpretation_name: str, number: int) -> str:
    return f"{interpretation_name}#{number}"


class KeyMap:
    """Row id to portable key (and back) for one project's objects.

    Built once per export or import (a dict of ints per kind, tens of MB at
    most for the largest projects), and extended as an import creates rows.
    """

    def __init__(self):
        self.uid: dict[str, dict[int, str]] = {kind: {} for kind in RECORD_MODELS}
        self.row: dict[str, dict[str, int]] = {kind: {} for kind in RECORD_MODELS}
        self.curve_key: dict[int, str] = {}
        self.curve_row: dict[str, int] = {}
        self.version_key: dict[int, str] = {}
        self.version_row: dict[str, int] = {}
        self.interpretation_key: dict[int, str] = {}
        self.content_hash: dict[str, str] = {}
        self.run_keys: dict[str, str] = {}
        self.source_digests: dict[int, str] = {}

    @classmethod
    def of_project(cls, project) -> "KeyMap":
        from chronology.interpretations.models import Version

        keys = cls()
        for kind, model in RECORD_MODELS.items():
            for pk, uid in model.objects.filter(project=project).values_list("id", "uid").iterator(chunk_size=10000):
                keys.add(kind, pk, str(uid))
        curve_ids = set(Determination.objects.filter(project=project).values_list("curve_id", flat=True))
        curve_ids |= set(Determination.objects.filter(project=project, marine_curve__isnull=False)
                         .values_list("marine_curve_id", flat=True))
        for pk, checksum in Curve.objects.filter(pk__in=curve_ids).values_list("id", "table__checksum"):
            keys.add_curve(pk, checksum)
        for version in Version.objects.filter(project=project).select_related("interpretation"):
            keys.add_version(version)
        keys.add_import_provenance(project)
        return keys

    def add_import_provenance(self, project) -> None:
        """Run keys and revision digests of a project that was itself imported."""
        from .models import PackageImport

        for done in PackageImport.objects.filter(project=project).order_by("id"):
            self.run_keys.update(done.run_keys or {})
            self.source_digests.update({int(k): v for k, v in (done.source_digests or {}).items()})

    def run_key(self, run) -> str:
        """A run's key: its id where it first ran (kept by an import)."""
        return self.run_keys.get(str(run.pk), str(run.pk))

    def add(self, kind: str, pk: int, uid: str) -> None:
        self.uid[kind][pk] = uid
        self.row[kind][uid] = pk

    def add_curve(self, pk: int, checksum: str) -> None:
        self.curve_key[pk] = checksum
        self.curve_row.setdefault(checksum, pk)

    def add_version(self, version) -> None:
        key = version_key(version.interpretation.name, version.number)
        self.version_key[version.pk] = key
        self.version_row[key] = version.pk
        self.interpretation_key[version.interpretation_id] = version.interpretation.name
        if version.content_hash:
            self.content_hash[version.content_hash] = portable_hash(self.content_out(version.content),
                                                                    version.record_revision)

    # -- record object states ------------------------------------------------

    def state_out(self, data: dict | None) -> dict | None:
        """A stored representation with row ids replaced by portable keys."""
        if data is None:
            return None
        out = {k: v for k, v in data.items() if k != "id"}
        for key, kind in REFERENCE_KEYS.items():
            if out.get(key) is not None:
                out[key] = self.uid[kind].get(out[key], out[key])
        for key in CURVE_KEYS:
            if out.get(key) is not None:
                out[key] = self.curve_key.get(out[key], out[key])
        return out

    # -- interpretation content ---------------------------------------------

    def content_out(self, content: dict) -> dict:
        return _sorted_unordered(map_content(content, lambda pk: self.uid["context"].get(pk, pk),
                           lambda pk: self.uid["relationship"].get(pk, pk),
                           lambda kind, pk: self.uid[kind].get(int(pk), pk) if str(pk).isdigit() else pk))

    def content_in(self, content: dict) -> dict:
        return map_content(content, lambda uid: self.row["context"].get(uid, uid),
                           lambda uid: self.row["relationship"].get(uid, uid),
                           lambda kind, uid: self.row[kind].get(uid, uid))

    # -- change-log entries ----------------------------------------------------

    def object_key(self, kind: str, object_id) -> str:
        """The portable key of the object a change-log entry is about."""
        if object_id is None:
            return ""
        if kind in self.uid:
            return self.uid[kind].get(object_id, str(object_id))
        if kind == "interpretation":
            return self.interpretation_key.get(object_id, str(object_id))
        if kind in ("interpretation_version", "reading"):
            return self.version_key.get(object_id, str(object_id))
        return str(object_id)

    def log_value_out(self, kind: str, value):
        """``before``/``after`` of a log entry in portable form."""
        if not isinstance(value, dict):
            return value
        if kind in self.uid:
            return self.state_out(value)
        out = dict(value)
        if isinstance(out.get("interpretation"), int):
            out["interpretation"] = self.interpretation_key.get(out["interpretation"], out["interpretation"])
        for name in ("parent", "version"):
            if isinstance(out.get(name), int):
                out[name] = self.version_key.get(out[name], out[name])
        if isinstance(out.get("content_hash"), str):
            out["content_hash"] = self.content_hash.get(out["content_hash"], out["content_hash"])
        return out


#: Lists of a document with no order of their own; sorted again once their references are portable.
UNORDERED = ("assignments", "equalities", "set_aside", "uncertain", "orderings", "evidence", "estimate")


def _sorted_unordered(doc: dict) -> dict:
    for name in UNORDERED:
        if isinstance(doc.get(name), list):
            doc[name] = sorted(doc[name], key=lambda item: json.dumps(item, sort_keys=True))
    return doc


def map_content(content: dict, context, relationship, evidence) -> dict:
    """A copy of an interpretation document with every record reference mapped.

    ``context(ref)``, ``relationship(ref)`` and ``evidence(kind, ref)`` map
    one reference each; the places references may sit are those of the
    document's schema (``chronology.interpretations.content``).
    """
    doc = json.loads(json.dumps(content))
    for item in doc.get("assignments") or []:
        item["context"] = context(item["context"])
    for name in ("equalities", "set_aside", "uncertain"):
        for item in doc.get(name) or []:
            item["relationship"] = relationship(item["relationship"])
    for item in doc.get("orderings") or []:
        for end in ("earlier", "later"):
            item[end] = context(item[end])
    for item in doc.get("evidence") or []:
        item["evidence"] = _evidence_ref(item["evidence"], evidence)
    doc["estimate"] = [context(v) for v in doc.get("estimate") or []]
    for question in doc.get("questions") or []:
        for name in ("from", "to", "earlier", "later"):
            value = question.get(name)
            if not isinstance(value, str):
                continue
            if value.startswith("context:"):
                ref = value.split(":", 1)[1]
                question[name] = f"context:{context(int(ref) if ref.isdigit() else ref)}"
            elif value.startswith("evidence:"):
                question[name] = "evidence:" + _evidence_ref(value.split(":", 1)[1], evidence)
    return doc


def _evidence_ref(value: str, evidence) -> str:
    match = _EVIDENCE_REF.match(str(value))
    if match is None:
        return value
    return f"{match.group(1)}:{evidence(match.group(1), match.group(2))}"


def portable_hash(portable_content: dict, record_revision: int) -> str:
    """SHA-256 of a version's content in portable form, with its record revision.

    The stored ``content_hash`` covers the content with this database's row
    ids, so a copy in another project has another one; this hash is the same
    in every copy of the version, and the import checks it.
    """
    payload = json.dumps({"record_revision": record_revision, "content": portable_content}, sort_keys=True,
                         separators=(",", ":"), ensure_ascii=False)
    return hashlib.sha256(payload.encode()).hexdigest()
