"""The README of a project package: each table in words, and the cautions."""

from __future__ import annotations

from . import schemas

CAUTIONS = """\
## Cautions

* Calendar dates and model results depend on the priors chosen in each
  interpretation and on the calibration curve each determination is read
  against; they are not facts about the site.
* Every model output needs review by a qualified specialist before it is
  relied on.
* A curve marked `synthetic` is a generated test curve: it is not for dating
  real samples, and nothing computed with it says anything about real dates.
* Cells are written exactly as recorded. Text that a spreadsheet program
  might read as a formula (starting with `=`, `+`, `-` or `@`) is not
  altered, so open the CSV files as text or with a data tool.
"""

CONVENTIONS = """\
## Conventions

* Record objects (contexts, relationships, samples, determinations,
  calendar dates, termini) are named by their `uid`, which every copy of the
  record keeps; curves by the SHA-256 `checksum` of their table;
  interpretations by name and versions as `<interpretation>#<number>`.
* Relationships are stored as `later <type> earlier`; `recorded_as` is the
  wording the recorder used (for example `below`).
* Years are astronomical (1 BC = 0, 2 BC = -1).
* An empty cell is a missing value. JSON columns (`object`, `array`) hold
  compact JSON.
* Nothing is ever deleted from the record: a retracted object keeps its row
  with the revision it was retracted in and the reason.
* Curve tables are included only where the curve's licence, as recorded when
  the curve was imported, is an open licence allowing redistribution (CC0,
  CC BY, CC BY-SA, ODC-BY, ODbL or public domain, with no non-commercial or
  no-derivatives term), or where the curve is a synthetic test curve.
  Otherwise only its name, citation, licence and checksum are given.
* Every file's SHA-256 is in `datapackage.json` (`hash`); a reader should
  refuse a package whose files do not match.
"""


def render(descriptor: dict) -> str:
    project = descriptor["tellstack:project"]
    lines = [
        f"# {descriptor['title']}",
        "",
        f"Project {project['code']} of {project['organisation']}, exported {descriptor['created']}.",
        f"Record revision {descriptor['tellstack:revision']}; head digest of the history chain (SHA-256):",
        "",
        f"    {descriptor['tellstack:head_digest'] or '(empty record)'}",
        "",
        "and digest of the latest revision:",
        "",
        f"    {descriptor.get('tellstack:record_digest') or '(empty record)'}",
        "",
        "Keep these: a copy whose history was rewritten cannot reproduce them.",
        "",
        "This is a Frictionless Data Package: `datapackage.json` describes every table",
        "with its Table Schema (field types, keys, allowed values).",
        "",
        "## Tables",
        "",
    ]
    rows = {r["name"]: r.get("tellstack:rows") for r in descriptor["resources"]}
    for table in schemas.TABLES:
        lines.append(f"* `{table.path}` — **{table.title}** ({rows.get(table.name, 0)} rows). {table.about}")
    if descriptor.get("tellstack:files"):
        lines += ["", "Run samples (`runs/*.nc`) are NetCDF files of ArviZ InferenceData, one per run."]
    lines += ["", CONVENTIONS, CAUTIONS]
    return "\n".join(lines)
