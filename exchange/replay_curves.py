"""The calibration curves a package's determinations refer to, made available to the target.

A curve is found by the checksum of its table among the curves the target
organisation may use (preferring the same name); failing that it is
imported from the package's ``curve_rows`` under its recorded name,
citation and licence (``chronology.evidence.curves.import_curve``), and
failing that — its licence kept the rows out of the package — the package
is refused, naming the curve, before anything is written.
"""

from __future__ import annotations

from chronology.evidence.curves import import_curve
from chronology.evidence.models import Curve

from .package import reader
from .package.reader import refuse


def _table_text(meta: dict, rows: list[tuple[float, float, float]]) -> str:
    lines = ["cal_bp,c14_bp,sigma"]
    lines += [f"{cal!r},{c14!r},{sigma!r}" for cal, c14, sigma in sorted(rows, reverse=True)]
    return "\n".join(lines) + "\n"


def provide(replay) -> None:
    """Map every curve checksum of the package to a curve the target organisation may use."""

    project = replay.project
    wanted = {row["checksum"]: (n, row) for n, row in enumerate(reader.rows(replay.zf, "curves"), start=2)}
    if not wanted:
        return
    visible = Curve.objects.visible_to_organisation(project.organisation_id).select_related("table")
    for curve in sorted(visible.filter(table__checksum__in=list(wanted)), key=lambda c: c.organisation_id is None):
        _n, meta = wanted[curve.table.checksum]
        known = replay.keys.curve_row.get(curve.table.checksum)
        if known is None or curve.name == meta["name"]:
            replay.keys.curve_row[curve.table.checksum] = curve.pk
            replay.keys.curve_key[curve.pk] = curve.table.checksum
    missing = [c for c in wanted if c not in replay.keys.curve_row]
    if not missing:
        return
    rows: dict[str, list] = {c: [] for c in missing}
    for row in reader.rows(replay.zf, "curve_rows"):
        if row["checksum"] in rows:
            rows[row["checksum"]].append((row["cal_bp"], row["c14_bp"], row["sigma"]))
    for checksum in missing:
        number, meta = wanted[checksum]
        if not rows[checksum]:
            raise refuse("curves", number, f"curve {meta['name']!r} ({checksum[:12]}) is not available to "
                         f"{project.organisation.slug} and its licence kept its table out of the package; import "
                         "the curve from its source first", "curve-unavailable", "checksum")
        curve, _created = import_curve(_table_text(meta, rows[checksum]), name=meta["name"],
                                       citation=meta["citation"] or "", licence=meta["licence"] or "",
                                       organisation=project.organisation, user=replay.importer,
                                       synthetic=bool(meta["synthetic"]))
        if curve.table.checksum != checksum:
            raise refuse("curve_rows", None, f"the rows of curve {meta['name']!r} do not give its checksum",
                         "checksum-mismatch", "checksum")
        replay.keys.curve_row[checksum] = curve.pk
        replay.keys.curve_key[curve.pk] = checksum
