"""Which column holds what, and the register's rows as contexts and relationships.

Two layouts are read:

* **a context per row** — a label column, optionally kind, description and
  area, and list columns naming related contexts: ``above``, ``below``,
  ``cuts``, ``cut by``, ``fills``, ``filled by``, ``same as`` (and
  ``abuts``, ``abutted by``, ``bonded with``, ``contemporary with``), each
  holding labels separated by commas, semicolons or spaces.  The row's
  context is the subject: a row 1002 with 1001 under "above" says 1002 is
  above 1001;
* **a relationship per row** — subject, type (a wording such as "cut by")
  and object columns, optionally certainty and note.

Columns are found by name, ignoring case, spaces, underscores and hyphens,
or by a mapping the user gives from our field names to the file's headers
(``{"label": "Context no.", "above": "Overlies"}``).
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field

from projects.models.record import Certainty, ContextKind
from projects.record.writes import WORDINGS

from .reading import Sheet

#: List columns of the context-per-row layout, by the wording they stand for.
LIST_COLUMNS = ("above", "below", "cuts", "cut_by", "fills", "filled_by", "same_as", "abuts", "abutted_by",
                "bonded_with", "contemporary_with")
CONTEXT_FIELDS = ("label", "kind", "description", "area")
RELATIONSHIP_FIELDS = ("subject", "type", "object", "certainty", "note")
FIELDS = CONTEXT_FIELDS + LIST_COLUMNS + RELATIONSHIP_FIELDS

#: Other headers a register commonly uses for our fields (common practice, from memory).
SYNONYMS = {
    "label": ("context", "contextno", "contextnumber", "number", "no", "unit"),
    "kind": ("type", "contexttype", "category"),
    "description": ("desc", "notes", "interpretation"),
    "area": ("trench", "sector"),
    "subject": ("from", "context"),
    "object": ("to", "relatedcontext", "other"),
    "type": ("relationship", "relation"),
}
#: Words for the kinds of context (common practice).
KIND_WORDS = {
    "deposit": "deposit", "layer": "deposit", "fill": "fill", "cut": "cut", "masonry": "masonry",
    "wall": "masonry", "structure": "masonry", "timber": "timber", "skeleton": "skeleton", "burial": "skeleton",
    "other": "other",
}
_SPLIT = re.compile(r"[,;\s]+")


def squash(name: str) -> str:
    return re.sub(r"[\s_\-.]+", "", name.lower())


@dataclass
class Problem:
    row: int | None
    field: str | None
    code: str
    reason: str

    def as_dict(self) -> dict:
        return {"row": self.row, "field": self.field, "code": self.code, "reason": self.reason}


@dataclass
class Planned:
    """What the register says, before it is checked against the record."""

    layout: str
    contexts: list[tuple[int, dict]] = field(default_factory=list)  # (row, fields)
    relationships: list[tuple[int, dict]] = field(default_factory=list)  # (row, subject/type/object/...)
    problems: list[Problem] = field(default_factory=list)


def columns(sheet: Sheet, mapping: dict | None, fields=FIELDS) -> tuple[dict[str, str], list[Problem]]:
    """Our field name -> the file's header, from the mapping first, then by name (among ``fields``)."""
    problems, found = [], {}
    by_squash = {squash(h): h for h in sheet.header if h}
    for ours, theirs in (mapping or {}).items():
        if ours not in FIELDS:
            problems.append(Problem(None, "mapping", "unknown-field",
                                    f"{ours!r} is not a field; the fields are {', '.join(FIELDS)}"))
        elif theirs not in sheet.header:
            problems.append(Problem(1, ours, "missing-column", f"the file has no column {theirs!r}"))
        else:
            found[ours] = theirs
    taken = set(found.values())
    for ours in fields:
        if ours in found:
            continue
        for candidate in (ours, *SYNONYMS.get(ours, ())):
            header = by_squash.get(squash(candidate))
            if header is not None and header not in taken:
                found[ours] = header
                taken.add(header)
                break
    return found, problems


def plan(sheet: Sheet, mapping: dict | None = None) -> Planned:
    cols, problems = columns(sheet, mapping, RELATIONSHIP_FIELDS)
    foreign = set(mapping or {}) - set(RELATIONSHIP_FIELDS)
    per_relationship = {"subject", "type", "object"} <= set(cols) and not foreign
    if not per_relationship:
        cols, problems = columns(sheet, mapping, CONTEXT_FIELDS + LIST_COLUMNS)
    if per_relationship:
        planned = Planned("relationship-per-row", problems=problems)
        _relationship_rows(sheet, cols, planned)
    elif "label" in cols:
        planned = Planned("context-per-row", problems=problems)
        _context_rows(sheet, cols, planned)
    else:
        planned = Planned("unknown", problems=problems + [Problem(
            1, None, "unknown-layout", "no label column (a context per row) nor subject, type and object "
            "columns (a relationship per row); give a column mapping")])
    return planned


def _kind(value: str, row: int, planned: Planned) -> str | None:
    if not value:
        return ContextKind.OTHER.value
    kind = KIND_WORDS.get(value.strip().lower())
    if kind is None:
        planned.problems.append(Problem(row, "kind", "bad-enum", f"{value!r} is not a kind of context; use one of "
                                        f"{', '.join(sorted(KIND_WORDS))}"))
    return kind


def _context_rows(sheet: Sheet, cols: dict[str, str], planned: Planned) -> None:
    for row, cells in sheet.rows:
        label = cells.get(cols["label"], "")
        if not label:
            planned.problems.append(Problem(row, "label", "required", "the row has no context label"))
            continue
        kind = _kind(cells.get(cols.get("kind", ""), ""), row, planned)
        if kind is None:
            continue
        planned.contexts.append((row, {"label": label, "kind": kind,
                                       "description": cells.get(cols.get("description", ""), ""),
                                       "area": cells.get(cols.get("area", ""), "")}))
        for wording in LIST_COLUMNS:
            if wording not in cols:
                continue
            for other in _SPLIT.split(cells.get(cols[wording], "")):
                if other:
                    planned.relationships.append((row, {"subject": label, "type": wording, "object": other,
                                                        "certainty": Certainty.CERTAIN.value, "note": ""}))


def _relationship_rows(sheet: Sheet, cols: dict[str, str], planned: Planned) -> None:
    for row, cells in sheet.rows:
        subject, obj = cells.get(cols["subject"], ""), cells.get(cols["object"], "")
        wording = re.sub(r"[\s\-]+", "_", cells.get(cols["type"], "").strip().lower())
        certainty = (cells.get(cols.get("certainty", ""), "") or Certainty.CERTAIN.value).strip().lower()
        if not subject or not obj:
            planned.problems.append(Problem(row, "subject" if not subject else "object", "required",
                                            "the row needs both a subject and an object context"))
        elif wording not in WORDINGS:
            planned.problems.append(Problem(row, "type", "bad-enum", f"{wording!r} is not a relationship; use one "
                                            f"of {', '.join(w.replace('_', ' ') for w in WORDINGS)}"))
        elif certainty not in Certainty.values:
            planned.problems.append(Problem(row, "certainty", "bad-enum", "certainty is 'certain' or 'uncertain'"))
        else:
            planned.relationships.append((row, {"subject": subject, "type": wording, "object": obj,
                                                "certainty": certainty, "note": cells.get(cols.get("note", ""), "")}))
