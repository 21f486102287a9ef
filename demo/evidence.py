"""The evidence step of the demo (see demo/steps.py).

Dating evidence for Vellmarsh Lane (VML24), all invented: radiocarbon ages
are simulated from invented true dates through the engine's labelled
SYNTHETIC curve with a fixed seed, so every run produces the same numbers.
Everything goes through the public write path with deterministic client
uids, so running the demo again changes nothing.
"""

from __future__ import annotations

import json

import numpy as np

from chronology.engine.curves import curve_to_csv, interpolate
from chronology.engine.grid import CalendarGrid
from chronology.engine.plots.calibration_plot import calibration_plot
from chronology.engine.radiocarbon import f14c_from_cra
from chronology.engine.synthetic_curve import SYNTHETIC_NOTICE, synthetic_curve
from demo.record import uid_for
from demo.outputs import write_output as _write
from projects.record.changes import Actor

from chronology.evidence import calibrate, writes
from chronology.evidence.curves import import_curve
from chronology.evidence.representation import calendar_year

__all__ = ["evidence_step", "SAMPLES", "DETERMINATIONS"]

SEED = 2024

#: (code, context, material, short-lived, notes)
SAMPLES = [
    ("S101", "1021", "charred cereal grain (barley)", True, "primary fill of pit 1020"),
    ("S102", "1031", "charred cereal grain (wheat)", True, "primary fill of pit 1030"),
    ("S103", "2041", "charred cereal grain (barley)", True, "primary fill of pit 2040"),
    ("S104", "1011", "animal bone (cattle metatarsal)", True, "primary silt of the enclosure ditch"),
    ("S105", "1015", "animal bone (sheep mandible)", True, "primary fill of the ditch recut"),
    ("S106", "2032", "charcoal (oak, heartwood)", False,
     "long-lived wood: may be older than the hearth's use (old wood, a residuality risk)"),
    ("S107", "3041", "oak timber from the well lining", False, "bark edge present"),
]

#: (lab code, sample, invented true date (astronomical year), lab error, report as F14C)
DETERMINATIONS = [
    ("VXL-0101", "S101", -95.0, 28.0, False),
    ("VXL-0102", "S102", -40.0, 30.0, False),
    ("VXL-0103", "S103", 15.0, 27.0, False),
    ("VXL-0104", "S104", -340.0, 30.0, False),
    ("VXL-0105", "S104", -340.0, 32.0, True),  # a second measurement of the same bone
    ("VXL-0106", "S105", -210.0, 29.0, False),
    ("VXL-0107", "S106", -260.0, 30.0, False),  # the tree grew long before the hearth was used
]

#: The well-lining timber: felled in AD 118 (bark edge), a tree-ring date.
FELLING = {"sample": "S107", "kind": "normal", "mean": 118.0, "sd": 1.0, "method": "dendrochronology",
           "notes": "felling date from the bark edge (invented)"}

#: The coin from the robber-trench backfill: issued AD 260-268, so the backfill is no earlier.
COIN = {"context": "3031", "kind": "post_quem", "year": 260.0, "year_end": 268.0,
        "find": "SF 3031.1, copper-alloy coin (invented issue of AD 260-268)",
        "notes": "the backfill is no earlier than the coin's issue"}

SYNTHETIC_LINE = "SYNTHETIC calibration curve: these dates are for demonstration only and not for dating real samples."


def _simulate(curve) -> dict[str, tuple[float, float]]:
    """Radiocarbon ages from the invented true dates: curve value plus curve and lab scatter."""
    rng = np.random.default_rng(SEED)
    years = np.array([d[2] for d in DETERMINATIONS])
    grid = CalendarGrid(float(years.min()) - 1.0, 1.0, int(years.max() - years.min()) + 3)
    mu, sd = interpolate(curve, grid)
    out = {}
    for lab, _sample, year, lab_sigma, _f in DETERMINATIONS:
        i = int(round(grid.index_of(year)))
        age = mu[i] + rng.normal(0.0, sd[i]) + rng.normal(0.0, lab_sigma)
        out[lab] = (float(round(age)), lab_sigma)
    return out


def _hpd_text(summary: dict, level: float) -> str:
    block = next(h for h in summary["hpd"] if h["level"] == level)
    return "; ".join(f"{r['bc_ad']} ({100 * r['probability']:.1f}%)" for r in block["ranges"])


def evidence_step(state, stdout):
    """Evidence: samples, radiocarbon determinations (SYNTHETIC curve), a tree-ring date and a coin TPQ."""
    project = state["project"]
    users = state["users"]
    ada = Actor(user=users["ada.recorder"], device="demo: ada's trench tablet")
    cleo = Actor(user=users["cleo.analyst"], device="demo: post-excavation desk")
    engine = synthetic_curve()
    curve, _ = import_curve(curve_to_csv(engine))
    ages = _simulate(engine)

    samples = {}
    for code, context, material, short_lived, notes in SAMPLES:
        samples[code] = writes.add_sample(project, ada, uid=uid_for(project.code, "sample", code), context=context,
                                          code=code, material=material, short_lived=short_lived,
                                          notes=notes).object
    determinations = {}
    for lab, sample, _year, _sigma, as_f14c in DETERMINATIONS:
        age, sigma = ages[lab]
        measured = {"cra": age, "cra_sigma": sigma}
        if as_f14c:
            f, f_sigma = f14c_from_cra(age, sigma)
            measured = {"f14c": round(f, 5), "f14c_sigma": round(f_sigma, 5)}
        determinations[lab] = writes.add_determination(
            project, cleo, uid=uid_for(project.code, "determination", lab), sample=sample, lab_code=lab,
            curve=curve.id, delta13c=-21.5 if "bone" in samples[sample].material else -24.0, **measured,
        ).object
    felling = writes.add_calendar_date(project, cleo, uid=uid_for(project.code, "calendar_date", "S107"),
                                       **FELLING).object
    coin = writes.add_terminus(project, ada, uid=uid_for(project.code, "terminus", "3031", "coin"), **COIN).object
    project.refresh_from_db()

    context_of = {code: s.context.label for code, s in samples.items()}
    measurements = [calibrate.Measurement(id=d.id, label=lab, cra=d.cra, sigma=d.cra_sigma, curve=curve)
                    for lab, d in determinations.items()]
    results = calibrate.calibrate_measurements(measurements)
    rows = []
    for m, (date, grid_curve) in zip(measurements, results):
        det = determinations[m.label]
        sample = det.sample
        summary = calibrate.summarise(m, date, grid_curve)
        summary.update(sample=sample.code, context=context_of[sample.code], material=sample.material,
                       short_lived=sample.short_lived, measured=det.measured, f14c=det.f14c, f14c_sigma=det.f14c_sigma)
        rows.append(summary)
        images = calibration_plot(date, grid_curve, title=(
            f"{m.label} (sample {sample.code}, context {context_of[sample.code]}): {m.cra:.0f} ± {m.sigma:.0f} BP"))
        _write(state, f"evidence-plots/{m.label}.svg", images.svg)
        _write(state, f"evidence-plots/{m.label}.png", images.png)
    pair = [m for m in measurements if determinations[m.label].sample.code == "S104"]
    combination = calibrate.combine_measurements(pair)

    _write(state, "evidence-calibrations.md", _markdown(project, curve, rows, combination, felling, coin))
    _write(state, "evidence-calibrations.json", json.dumps({
        "project": project.code, "revision": project.revision,
        "warning": SYNTHETIC_LINE, "curve_notice": SYNTHETIC_NOTICE, "caution": calibrate.CAUTION,
        "curve": {"id": curve.id, "name": curve.name, "citation": curve.citation, "licence": curve.licence,
                  "checksum": curve.table.checksum, "synthetic": curve.synthetic},
        "determinations": rows, "combination": combination,
        "calendar_dates": [{"id": felling.id, "sample": "S107", "context": "3041", "kind": felling.kind,
                            "mean": felling.mean, "sd": felling.sd, "method": felling.method,
                            "text": f"felled {calendar_year(felling.mean)} ± {felling.sd:g}"}],
        "termini": [{"id": coin.id, "context": "3031", "kind": coin.kind, "year": coin.year,
                     "year_end": coin.year_end, "find": coin.find}],
    }, indent=2, ensure_ascii=False))

    state["evidence"] = {
        "curve": {"id": curve.id, "name": curve.name, "checksum": curve.table.checksum, "synthetic": True},
        "samples": {code: s.id for code, s in samples.items()},
        "determinations": {lab: d.id for lab, d in determinations.items()},
        "calendar_dates": {"S107": felling.id},
        "termini": {"3031": coin.id},
        "by_context": _by_context(samples, determinations, felling, coin, context_of),
        "combination": {"sample": samples["S104"].id, "determinations": [m.id for m in pair],
                        "consistent": combination["test"]["consistent"]},
        "short_lived": sorted(code for code, s in samples.items() if s.short_lived),
        "long_lived": sorted(code for code, s in samples.items() if not s.short_lived),
        "true_years": {lab: year for lab, _s, year, _sg, _f in DETERMINATIONS},
        "revision": project.revision,
    }
    stdout.write(f"  {len(samples)} samples, {len(determinations)} determinations, 1 tree-ring date, 1 TPQ "
                 f"(revision {project.revision}); curve {curve.name} is SYNTHETIC, not for dating real samples")


def _by_context(samples, determinations, felling, coin, context_of) -> dict:
    out: dict[str, dict] = {}
    for code, s in samples.items():
        out.setdefault(context_of[code], {"samples": [], "determinations": [], "calendar_dates": [], "termini": []})
        out[context_of[code]]["samples"].append(s.id)
    for d in determinations.values():
        out[context_of[d.sample.code]]["determinations"].append(d.id)
    out["3041"]["calendar_dates"].append(felling.id)
    out.setdefault("3031", {"samples": [], "determinations": [], "calendar_dates": [], "termini": []})
    out["3031"]["termini"].append(coin.id)
    return out


def _markdown(project, curve, rows, combination, felling, coin) -> str:
    lines = [
        f"# Vellmarsh Lane ({project.code}) — dating evidence",
        "",
        f"**{SYNTHETIC_LINE}**",
        "",
        f"Curve: {curve.name} — {curve.citation}",
        "",
        "Radiocarbon ages simulated from invented true dates through the synthetic curve (fixed seed).",
        "Calibrated with a uniform prior; HPD ranges after Hyndman (1996).",
        "",
        "| Lab code | Sample | Context | Material | Measured | CRA (BP) | 68.3% HPD | 95.4% HPD | Median |",
        "|---|---|---|---|---|---|---|---|---|",
    ]
    for r in rows:
        measured = (f"F14C {r['f14c']:.4f} ± {r['f14c_sigma']:.4f}" if r["measured"] == "f14c" else "CRA")
        lines.append(f"| {r['label']} | {r['sample']} | {r['context']} | {r['material']} | {measured} | "
                     f"{r['cra']:.0f} ± {r['cra_sigma']:.0f} | {_hpd_text(r, 0.683)} | {_hpd_text(r, 0.954)} | "
                     f"{r['median']['bc_ad']} |")
    test = combination["test"]
    lines += ["", "## Two determinations on one bone (sample S104, ditch primary silt 1011)", "",
              f"Ward & Wilson (1978): {test['verdict']}.", ""]
    if combination["calibration"]:
        cal = combination["calibration"]
        lines.append(f"Combined age calibrated: 68.3% {_hpd_text(cal, 0.683)}; 95.4% {_hpd_text(cal, 0.954)}.")
    else:
        lines.append(combination.get("note", ""))
    lines += ["", "## Other evidence", "",
              f"- Well lining 3041, timber S107: tree-ring felling date {calendar_year(felling.mean)} "
              f"± {felling.sd:g} (bark edge; invented).",
              f"- Robber-trench backfill 3031: terminus post quem {calendar_year(coin.year)} from {coin.find}.",
              "- Charcoal S106 from hearth 2032 is long-lived wood: its date may be older than the hearth's use.",
              "", f"**{calibrate.CAUTION}**", f"**{SYNTHETIC_LINE}**", ""]
    return "\n".join(lines)
