"""The tables of a project package and their Table Schemas.

Each table is described once here — field names, Table Schema types,
enums, primary and foreign keys — and the same description drives the
writer (``datapackage.json``), the reader's checks and the README.  Types
and keywords are those of the Frictionless Table Schema specification
(Frictionless Data, "Table Schema", v1); the empty cell is the one missing
value.
"""

from __future__ import annotations

from dataclasses import dataclass, field

from chronology.evidence.models import CalendarDate, Determination, Terminus
from chronology.interpretations.models import Status
from chronology.runs.models import RunState
from projects.models.record import Certainty, ContextKind, RelationshipType
from projects.record.writes import WORDINGS

#: Package format; bumped on any change a reader must know of.
FORMAT = "tellstack-project-package/1"

MISSING = [""]

#: Times are UTC with microseconds, written with this pattern (Table Schema allows one).
DATETIME_FORMAT = "%Y-%m-%dT%H:%M:%S.%fZ"


@dataclass(frozen=True)
class Field:
    name: str
    type: str = "string"
    description: str = ""
    required: bool = False
    enum: tuple | None = None

    def descriptor(self) -> dict:
        out = {"name": self.name, "type": self.type}
        if self.type == "datetime":
            out["format"] = DATETIME_FORMAT
        if self.description:
            out["description"] = self.description
        constraints = {}
        if self.required:
            constraints["required"] = True
        if self.enum is not None:
            constraints["enum"] = list(self.enum)
        if constraints:
            out["constraints"] = constraints
        return out


@dataclass(frozen=True)
class Table:
    name: str
    title: str
    about: str
    fields: tuple[Field, ...]
    primary_key: tuple[str, ...] = ()
    foreign_keys: tuple[tuple[str, str, str], ...] = ()  # (field, table, field)
    extra: dict = field(default_factory=dict)

    @property
    def path(self) -> str:
        return f"data/{self.name}.csv"

    @property
    def names(self) -> list[str]:
        return [f.name for f in self.fields]

    def schema(self) -> dict:
        schema = {"fields": [f.descriptor() for f in self.fields], "missingValues": MISSING}
        if self.primary_key:
            schema["primaryKey"] = list(self.primary_key)
        if self.foreign_keys:
            schema["foreignKeys"] = [
                {"fields": [own], "reference": {"resource": other, "fields": [other_field]}}
                for own, other, other_field in self.foreign_keys
            ]
        return schema


def _uid() -> Field:
    return Field("uid", description="The object's client-generated id, kept in every copy.", required=True)


def _lifetime() -> tuple[Field, ...]:
    return (
        Field("created_revision", "integer", "Record revision in which the object was recorded.", required=True),
        Field("retracted_revision", "integer", "Record revision in which it was retracted, if it was."),
        Field("retraction_reason", description="Why it was retracted."),
    )


def _enum(choices) -> tuple:
    return tuple(str(c) for c in choices)


CONTEXTS = Table(
    "contexts", "Contexts", "Every context (stratigraphic unit) ever recorded, with its latest attributes.",
    (_uid(), Field("label", required=True), Field("kind", required=True, enum=_enum(ContextKind.values)),
     Field("description"), Field("area"), Field("top_level", "number", "Metres above datum."),
     Field("base_level", "number", "Metres above datum."), *_lifetime()),
    primary_key=("uid",),
)

RELATIONSHIPS = Table(
    "relationships", "Relationships as recorded",
    "Every physical relationship as recorded: stored as 'later <type> earlier', with the recorder's own wording.",
    (_uid(), Field("type", required=True, enum=_enum(RelationshipType.values)),
     Field("later", required=True, description="uid of the later (upper) context."),
     Field("earlier", required=True, description="uid of the earlier (lower) context."),
     Field("certainty", required=True, enum=_enum(Certainty.values)),
     Field("recorded_as", required=True, enum=tuple(WORDINGS)), Field("note"), *_lifetime()),
    primary_key=("uid",),
    foreign_keys=(("later", "contexts", "uid"), ("earlier", "contexts", "uid")),
)

SAMPLES = Table(
    "samples", "Samples", "Material taken from a context for dating.",
    (_uid(), Field("context", required=True), Field("code", required=True), Field("material"),
     Field("short_lived", "boolean"), Field("notes"), *_lifetime()),
    primary_key=("uid",), foreign_keys=(("context", "contexts", "uid"),),
)

CURVES = Table(
    "curves", "Calibration curves used",
    "Each calibration curve a determination refers to: name, citation, licence and the checksum of its table.",
    (Field("checksum", required=True), Field("name", required=True), Field("citation"), Field("licence"),
     Field("synthetic", "boolean", "A generated test curve, not for dating real samples."),
     Field("n_rows", "integer"), Field("cal_bp_min", "number"), Field("cal_bp_max", "number"),
     Field("table_included", "boolean", "Whether the curve's rows are in curve_rows (see the README).")),
    primary_key=("checksum",),
)

CURVE_ROWS = Table(
    "curve_rows", "Curve tables", "The rows of the curves whose licence allows them to be passed on.",
    (Field("checksum", required=True), Field("row", "integer", required=True), Field("cal_bp", "number"),
     Field("c14_bp", "number"), Field("sigma", "number")),
    primary_key=("checksum", "row"), foreign_keys=(("checksum", "curves", "checksum"),),
)

DETERMINATIONS = Table(
    "determinations", "Radiocarbon determinations", "Radiocarbon measurements of samples and the curve each is read against.",
    (_uid(), Field("sample", required=True), Field("lab_code", required=True),
     Field("measured", required=True, enum=_enum(Determination.Measured.values)),
     Field("cra", "number", "14C yr BP."), Field("cra_sigma", "number"), Field("f14c", "number"),
     Field("f14c_sigma", "number"), Field("delta13c", "number"), Field("curve", required=True),
     Field("delta_r", "number"), Field("delta_r_sigma", "number"), Field("marine_fraction", "number"),
     Field("marine_fraction_sigma", "number"), Field("marine_curve"), Field("notes"), *_lifetime()),
    primary_key=("uid",),
    foreign_keys=(("sample", "samples", "uid"), ("curve", "curves", "checksum"),
                  ("marine_curve", "curves", "checksum")),
)

CALENDAR_DATES = Table(
    "calendar_dates", "Calendar dates", "Calendar dates of samples or contexts (astronomical years).",
    (_uid(), Field("sample"), Field("context", required=True),
     Field("kind", required=True, enum=_enum(CalendarDate.Kind.values)), Field("mean", "number"),
     Field("sd", "number"), Field("start", "number"), Field("end", "number"), Field("method"), Field("notes"),
     *_lifetime()),
    primary_key=("uid",), foreign_keys=(("sample", "samples", "uid"), ("context", "contexts", "uid")),
)

TERMINI = Table(
    "termini", "Termini", "Termini post and ante quem of contexts from datable finds (astronomical years).",
    (_uid(), Field("context", required=True), Field("kind", required=True, enum=_enum(Terminus.Kind.values)),
     Field("year", "number", required=True), Field("year_end", "number"), Field("find"), Field("notes"),
     *_lifetime()),
    primary_key=("uid",), foreign_keys=(("context", "contexts", "uid"),),
)

INTERPRETATIONS = Table(
    "interpretations", "Interpretations", "Named lines of interpretation of the record.",
    (Field("name", required=True), Field("description")),
    primary_key=("name",),
)

VERSIONS = Table(
    "versions", "Interpretation versions",
    "Every version of every interpretation: content as JSON (record objects by uid), state and reasons.",
    (Field("key", required=True, description="<interpretation>#<number>"), Field("interpretation", required=True),
     Field("number", "integer", required=True), Field("parent"), Field("record_revision", "integer", required=True),
     Field("author"), Field("message"), Field("status", required=True, enum=_enum(Status.values)),
     Field("status_reason", description="Reason given for approval, rejection or supersession."),
     Field("content", "object", required=True), Field("portable_hash", description="SHA-256 of the content as here."),
     Field("is_valid", "boolean")),
    primary_key=("key",),
    foreign_keys=(("interpretation", "interpretations", "name"), ("parent", "versions", "key")),
)

RUNS = Table(
    "runs", "Model runs", "Model runs: settings, seed, model hash, summaries and diagnostics; samples as NetCDF.",
    (Field("key", required=True), Field("version", required=True), Field("record_revision", "integer"),
     Field("parent"), Field("state", required=True, enum=_enum(RunState.values)), Field("created_by"),
     Field("chains", "integer"), Field("iterations", "integer"), Field("warmup", "integer"), Field("thin", "integer"),
     Field("seed_entropy"), Field("rng"), Field("model_hash"), Field("prior"), Field("grid", "object"),
     Field("range", "object"), Field("curves", "array"), Field("compile_notes", "array"),
     Field("library_versions", "object"), Field("software_commit"), Field("converged", "boolean"),
     Field("error", "object"), Field("summary", "object"),
     Field("samples_file", description="Path in the package of the run's NetCDF samples, if any.")),
    primary_key=("key",), foreign_keys=(("version", "versions", "key"), ("parent", "runs", "key")),
)

REVISIONS = Table(
    "revisions", "Revision chain",
    "Every revision of the record with its chained SHA-256 digest (revision 0 is the empty record).",
    (Field("number", "integer", required=True), Field("created_at", "datetime"), Field("user_name"),
     Field("device"), Field("request_id"), Field("summary"), Field("parent_digest"), Field("digest"),
     Field("source_digest", description="The digest in the project this record was first kept in.")),
    primary_key=("number",),
)

CHANGES = Table(
    "changes", "Change log", "The complete change log: who changed what, with which device, before and after.",
    (Field("seq", "integer", required=True), Field("revision", "integer", required=True),
     Field("created_at", "datetime", required=True), Field("user_name"), Field("device"), Field("request_id"),
     Field("action", required=True), Field("object_kind", required=True), Field("object_key"),
     Field("object_repr"), Field("before", "object"), Field("after", "object"), Field("message")),
    primary_key=("seq",), foreign_keys=(("revision", "revisions", "number"),),
)

RECORD_STATES = Table(
    "record_states", "Record at every revision",
    "Every version of every record object with the revisions [valid_from, valid_to) it was in force.",
    (Field("kind", required=True, enum=("context", "relationship", "sample", "determination", "calendar_date",
                                        "terminus")),
     Field("object", required=True), Field("valid_from", "integer", required=True), Field("valid_to", "integer"),
     Field("data", "object", required=True)),
    primary_key=("kind", "object", "valid_from"), foreign_keys=(("valid_from", "revisions", "number"),),
)

#: Every table, referenced tables before the tables referring to them.
TABLES = (CONTEXTS, RELATIONSHIPS, SAMPLES, CURVES, CURVE_ROWS, DETERMINATIONS, CALENDAR_DATES, TERMINI,
          INTERPRETATIONS, VERSIONS, RUNS, REVISIONS, CHANGES, RECORD_STATES)
BY_NAME = {t.name: t for t in TABLES}
