"""The ranges CSV is safe to open in a spreadsheet (OWASP, "CSV Injection")."""

from __future__ import annotations

import csv
import io

from chronology.runs.report import ranges_csv


def _results(label: str) -> dict:
    band = {"from": -120.0, "to": -60.0, "probability": 0.683, "text": "121–61 cal BC", "text_cal_bp": "2070–2010 cal BP"}
    return {
        "events": [{"label": label, "phase": "p", "kind": "event", "median": -90.0, "median_text": "91 cal BC",
                    "hpd": {"68.3": [band], "95.4": [dict(band, probability=0.954)]}}],
        "phases": [{"key": "p", "label": "+Phase"}],
        "curve_names": ["synthetic"],
        "curves": [{"synthetic": True}],
        "run": 1, "version_label": "v1", "record_revision": 3, "converged": True,
    }


def _rows(text: str) -> list[dict]:
    return list(csv.DictReader(io.StringIO(text)))


def test_a_label_that_reads_as_a_formula_is_written_as_text():
    [row, _] = _rows(ranges_csv(_results('=HYPERLINK("http://x")')))
    assert row["event"] == '\'=HYPERLINK("http://x")'
    assert row["phase"] == "'+Phase"


def test_negative_years_stay_numbers():
    [row, _] = _rows(ranges_csv(_results("1013")))
    assert (row["event"], row["from"], row["median"]) == ("1013", "-120.0", "-90.0")
