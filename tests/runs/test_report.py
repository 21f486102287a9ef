"""The run report (HTML and PDF), the CSV of modelled ranges and the run's interval chart.

One run of the small invented site is sampled for the whole module
(:mod:`tests.runs.finished`); each test reads one of its outputs.
"""

from __future__ import annotations

import csv
import html
import io
import json
import re

import pytest

from chronology.engine.plots.figure_parts import SYNTHETIC_WARNING
from chronology.runs.figures import chart_groups
from tests.chart_svg import all_text, range_lines, year_per_unit

from .finished import finished_outputs

pytestmark = pytest.mark.django_db

OLD_QUESTION_KINDS = {"span", "interval", "order"}
# Old boundary labels ("Start X", "End X", "Transition X/Y") and the old outlier table's headings.
OLD_LABEL = re.compile(r"\b(?:Start|End) (?!of\b)[A-Z0-9]|\bTransition\b")
OLD_HEADING = re.compile(r"<th>\s*(?:Prior|Posterior)\s*</th>")


@pytest.fixture(scope="module")
def outputs(django_db_setup, django_db_blocker, tmp_path_factory):
    with django_db_blocker.unblock():
        return finished_outputs(tmp_path_factory.mktemp("media"))


@pytest.fixture(scope="module")
def pdf_pages(outputs):
    from pypdf import PdfReader

    return [page.extract_text() for page in PdfReader(io.BytesIO(outputs["pdf"])).pages]


def _text(page: str) -> str:
    return html.unescape(re.sub(r"\s+", " ", re.sub(r"<[^>]+>", " ", re.sub(r"<style.*?</style>", "", page, flags=re.S))))


def test_the_pdf_names_the_site_every_lab_code_and_the_caution(outputs, pdf_pages):
    text = re.sub(r"\s+", " ", " ".join(pdf_pages))
    assert outputs["site"] in text
    for code in outputs["lab_codes"]:
        assert code in text, code
    assert "qualified specialist" in text


def test_every_page_of_the_pdf_of_a_synthetic_curve_run_says_the_curve_is_synthetic(pdf_pages):
    assert len(pdf_pages) >= 2
    assert all("SYNTHETIC" in page for page in pdf_pages)


def test_the_html_report_carries_the_synthetic_curve_warning_and_the_caution(outputs):
    text = _text(outputs["html"])
    assert SYNTHETIC_WARNING in text
    assert "qualified specialist" in text


def test_the_html_report_is_self_contained(outputs):
    page = outputs["html"]
    assert not re.search(r"""(?:src|href)=["'](?!data:)""", page)
    assert page.count('src="data:image/svg+xml;base64,') >= 2  # the chart and the densities at least


def test_the_report_says_whether_the_run_converged(outputs):
    text = _text(outputs["html"])
    verdict = "Verdict: converged." if outputs["results"]["converged"] else "Verdict: NOT CONVERGED."
    assert verdict in text


def test_calibrated_ranges_in_the_report_are_rounded_outwards_to_round_years(outputs):
    # Millard 2014, Radiocarbon 56(2): 555-559: 5 years when the error is under 25, else 10 (from memory)
    rows = outputs["facts"]["determinations"]
    assert {d["lab_code"] for d in rows} == set(outputs["lab_codes"])
    for d in rows:
        numbers = [int(n) for n in re.findall(r"\d+", d["cal95"] + " " + d["cal68"])]
        assert numbers and all(n % d["resolution"] == 0 for n in numbers), d


def test_a_probability_the_draws_cannot_tell_from_one_is_printed_as_a_bound(outputs):
    # the stratigraphy puts 1003 below 1006, so every draw has 1003 first
    text = _text(outputs["html"])
    question = "Probability that context 1003 came before context 1006"
    assert question in text
    answer = text[text.index(question):][:160]  # the question's own row (an R-hat elsewhere may read 1.000)
    assert "probability > 0.999" in answer
    assert "1.000" not in answer


def test_the_csv_holds_every_modelled_range_with_its_exact_numbers(outputs):
    rows = list(csv.DictReader(io.StringIO(outputs["csv"])))
    expected = [(e["label"], level, r["from"], r["to"]) for e in outputs["results"]["events"]
                for level in ("68.3", "95.4") for r in e["hpd"][level]]
    got = [(r["event"], r["level"], float(r["from"]), float(r["to"])) for r in rows]
    assert got == [(label, level, round(a, 1), round(b, 1)) for label, level, a, b in expected]
    assert {r["run"] for r in rows} == {outputs["results"]["run"]}
    assert {r["synthetic"] for r in rows} == {"True"}


def test_the_interval_chart_draws_the_ranges_of_the_results_table(outputs):
    svg = outputs["plot_svg"]
    lines = range_lines(svg)
    tolerance = 1.5 * year_per_unit(svg)
    rows = [r for g in chart_groups(outputs["results"]) for r in g.rows]
    events = {e["key"]: e for e in outputs["results"]["events"]}
    assert len(rows) == len(events)
    for i, row in enumerate(rows):
        for level in ("68.3", "95.4"):
            for j, r in enumerate(events[row.key]["hpd"][level]):
                assert lines[f"range-{i}-{level}-{j}"] == pytest.approx((r["from"], r["to"]), abs=tolerance)


def test_no_output_uses_the_old_question_kinds_boundary_labels_or_outlier_headings(outputs):
    results = outputs["results"]
    assert not {q["kind"] for q in results["questions"]} & OLD_QUESTION_KINDS
    assert not any(key.startswith(("start:", "end:", "transition:")) for key in (e["key"] for e in results["events"]))
    assert all(not {"prior", "posterior"} & set(o) for o in results["outliers"])
    labels = json.dumps([e["label"] for e in results["events"]] + [q["label"] for q in results["questions"]])
    for text in (labels, all_text(outputs["plot_svg"]), _text(outputs["html"])):
        assert not OLD_LABEL.search(text), OLD_LABEL.search(text)
    assert not OLD_HEADING.search(outputs["html"])
    assert "Chance of being an outlier, assumed" in outputs["html"]


def test_outliers_and_failing_quantities_are_named_by_lab_code_and_label_not_internal_keys(outputs):
    text = _text(outputs["html"])
    assert not re.search(r"\b(?:determination|sample|terminus|ctx|phase):\d", text)
    assert not re.search(r"\b(?:beginning|close|changeover|duration|gap|precedence):[a-z]", text)
    assert "VXL-0901 and VXL-0902" in text  # the two determinations on one sample, combined


def test_the_report_prints_the_history_head_it_was_made_at(outputs):
    # Whoever keeps the report can later tell a rewrite of the history (verify_record).
    head = outputs["facts"]["head_digest"]
    assert len(head) == 64
    assert head in _text(outputs["html"])
