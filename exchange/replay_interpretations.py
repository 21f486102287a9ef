"""Replaying interpretation actions of a package through the interpretation services.

Each logged action (created, version created, edited, committed, proposed,
approved, rejected, reading changed) is made again with
``chronology.interpretations.services``, at the record revision where it
was logged and with its original provenance.  Actions the services make as
a consequence of another (the supersession of the previously approved
version, the reading that follows it) are not replayed separately.  A
version's content is stored once in the package, as it finally is; drafts
are rebuilt with that content.
"""

from __future__ import annotations

from chronology.interpretations import services
from chronology.interpretations.models import Interpretation, Version
from chronology.interpretations.services import NotAllowed

from .package import reader
from .package.reader import refuse
from .portable import version_key

#: Actions the services log as the consequence of another one.
CONSEQUENCES = {"interpretation.version.superseded"}
SUPERSEDED_READING = "the current reading was superseded"


class InterpretationReplay:
    def __init__(self, replay):
        self.replay = replay
        self._versions: dict[str, dict] | None = None
        self._descriptions: dict[str, str] | None = None
        self._pending: dict | None = None

    @property
    def versions(self) -> dict[str, dict]:
        if self._versions is None:
            self._versions = {row["key"]: row for row in reader.rows(self.replay.zf, "versions")}
            self._descriptions = {row["name"]: row["description"] or ""
                                  for row in reader.rows(self.replay.zf, "interpretations")}
        return self._versions

    def _version(self, key: str) -> Version:
        pk = self.replay.keys.version_row.get(key)
        if pk is None:

            raise refuse("changes", None, f"version {key} is acted on before it is created", "missing-reference")
        return Version.objects.select_related("interpretation", "project").get(pk=pk)

    def _call(self, entry: dict, fn):
        """``fn(actor)`` as the original actor, or as the importer if that account lacks the role here."""
        try:
            return fn(self.replay.actors.actor(entry))
        except NotAllowed:
            return fn(self.replay.actors.actor(entry, as_importer=True))

    def apply(self, entries: list[dict]) -> None:
        for entry in entries:
            self._one(entry)

    def _one(self, entry: dict) -> None:
        action, after = entry["action"], entry["after"] or {}
        keys = self.replay.keys
        if action in CONSEQUENCES:
            return
        if action == "interpretation.reading.changed" and entry["message"] == SUPERSEDED_READING:
            return
        if action == "interpretation.created":
            self._pending = entry
            return
        if action == "interpretation.version.created":
            row = self.versions[entry["object_key"]]
            content = keys.content_in(row["content"])
            revision = after.get("record_revision", row["record_revision"])
            if row["parent"] is None:
                created = self._pending or entry
                name = row["interpretation"]
                actors = self.replay.actors
                _interp, version = self._call(created, lambda actor: services.create_interpretation(
                    self.replay.project, actor, name=name, description=self._descriptions.get(name, ""),
                    content=content, record_revision=revision, message=entry["message"] or "",
                    version_actor=actors.actor(entry, as_importer=actor.user == actors.importer)))
                self._pending = None
            else:
                parent = self._version(row["parent"])
                version = self._call(entry, lambda actor: services.new_draft(
                    parent, actor, message=entry["message"] or "", content=content, record_revision=revision))
            keys.add_version(version)
            return
        if action.startswith("interpretation.version."):
            self._workflow(entry, action.rsplit(".", 1)[1])
        elif action == "interpretation.reading.changed":
            version = self._version(entry["object_key"])
            self._call(entry, lambda actor: services.make_current(version, actor))
        else:
            self._logged(entry)

    def _workflow(self, entry: dict, step: str) -> None:
        version = self._version(entry["object_key"])
        row = self.versions[entry["object_key"]]
        after = entry["after"] or {}
        if step == "edited":
            content = self.replay.keys.content_in(row["content"])
            self._call(entry, lambda actor: services.edit_draft(
                version, actor, if_match="*", content=content, message=after.get("message"),
                record_revision=after.get("record_revision")))
        elif step == "committed":
            self._call(entry, lambda actor: services.commit(version, actor, message=row["message"] or ""))
        elif step == "proposed":
            self._call(entry, lambda actor: services.propose(version, actor))
        elif step == "approved":
            self._call(entry, lambda actor: services.approve(version, actor, reason=entry["message"] or ""))
        elif step == "rejected":
            self._call(entry, lambda actor: services.reject(version, actor, reason=entry["message"] or ""))
        else:
            self._logged(entry)

    def _logged(self, entry: dict) -> None:
        """Any other action (e.g. a request for alternatives) is logged again as it was."""
        keys = self.replay.keys

        def back(value):
            if not isinstance(value, dict):
                return value
            out = dict(value)
            for name in ("version", "parent"):
                if isinstance(out.get(name), str) and out[name] in keys.version_row:
                    out[name] = keys.version_row[out[name]]
            return out

        key = entry["object_key"]
        object_id = keys.version_row.get(key)
        if object_id is None:
            found = Interpretation.objects.filter(project=self.replay.project, name=key).first()
            object_id = found.pk if found else None
        services.log_action(self.replay.project, self.replay.actors.actor(entry), entry["action"],
                            kind=entry["object_kind"], object_id=object_id, repr_=entry["object_repr"] or "",
                            before=back(entry["before"]), after=back(entry["after"]), message=entry["message"] or "")

    def verify(self) -> None:
        """Every version's content, in portable form, hashes as in the package."""
        from .portable import portable_hash

        keys = self.replay.keys
        for n, (key, row) in enumerate(self.versions.items(), start=2):
            pk = keys.version_row.get(key)
            version = Version.objects.select_related("interpretation").get(pk=pk) if pk else None
            if version is None or version_key(version.interpretation.name, version.number) != key:
                raise refuse("versions", n, f"version {key} was not rebuilt", "replay-diverged", "key")
            if portable_hash(keys.content_out(version.content), version.record_revision) != row["portable_hash"]:
                raise refuse("versions", n, f"version {key} does not hash as in the package", "replay-diverged",
                             "portable_hash")
            if version.status != row["status"]:
                raise refuse("versions", n, f"version {key} is {version.status}, the package says {row['status']}",
                             "replay-diverged", "status")
