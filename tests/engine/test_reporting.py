"""How results are printed: outward rounding, single years, probabilities, and lists that are cut."""

from __future__ import annotations

import pytest

from chronology.engine.calendar_scales import format_range
from chronology.engine.diagram.style import node_text
from chronology.engine.labels import format_probability, label_list
from chronology.engine.reporting import reported_range, rounding_resolution

# Millard, A.R. 2014. Conventions for reporting radiocarbon determinations. Radiocarbon 56(2): 555-559.
# The rule, from memory: round calibrated ranges outwards, to 5 years when the error is under 25 years,
# else to 10 years.  Each case below is written from that rule on the printed cal BC / cal AD numbers
# (there is no year 0: astronomical 0 is 1 BC, -1 is 2 BC; ISO 8601 astronomical year numbering).
ROUNDING_CASES = [
    # astronomical start, end, error (years) -> as reported
    (-351, -297, 30, "360–290 cal BC"),        # 352-298 BC, to 10: outwards
    (-351, -297, 20, "355–295 cal BC"),        # the same range to 5
    (-351, -297, 25, "360–290 cal BC"),        # 25 is not under 25: to 10
    (-351, -297, 24.9, "355–295 cal BC"),
    (47, 112, 30, "cal AD 40–120"),
    (47, 112, 20, "cal AD 45–115"),
    (-39, 15, 30, "40 cal BC – cal AD 20"),    # a BC label already round stays
    (0, 3, 30, "10 cal BC – cal AD 10"),       # 1 BC rounds to 10 BC; there is no "0"
    (-2, -1, 10, "5 cal BC – cal AD 5"),       # 3-2 BC: the later end passes AD 1 outwards
    (120, 120, 30, "cal AD 120"),              # a round single year is printed once
]


@pytest.mark.parametrize("start, end, sigma, text", ROUNDING_CASES)
def test_calibrated_ranges_are_rounded_outwards_as_the_reporting_rule_says(start, end, sigma, text):
    assert reported_range(start, end, sigma) == text


@pytest.mark.parametrize("sigma, years", [(0, 5), (24, 5), (24.99, 5), (25, 10), (80, 10)])
def test_the_rounding_resolution_is_five_years_under_an_error_of_twenty_five_else_ten(sigma, years):
    assert rounding_resolution(sigma) == years


def test_a_negative_error_has_no_rounding_resolution():
    with pytest.raises(ValueError):
        rounding_resolution(-1)


@pytest.mark.parametrize("start, end, text", [(118, 118, "cal AD 118"), (117.6, 118.4, "cal AD 118"),
                                              (-0.3, 0.2, "1 cal BC"), (1, 1, "cal AD 1")])
def test_a_range_within_one_year_is_printed_once(start, end, text):
    assert format_range(start, end) == text


@pytest.mark.parametrize("p, text", [(1.0, "> 0.999"), (0.9996, "> 0.999"), (0.9994, "0.999"), (0.0, "< 0.001"),
                                     (0.0004, "< 0.001"), (0.5, "0.500"), (None, "not available")])
def test_probabilities_the_draws_cannot_tell_from_zero_or_one_are_printed_as_bounds(p, text):
    assert format_probability(p) == text


def test_a_cut_list_says_how_many_are_left_out_and_where_the_rest_is():
    labels = [str(1001 + i) for i in range(30)]
    text = label_list(labels, limit=5, rest=", listed in the CSV")
    assert text == "1001, 1002, 1003, 1004 and 26 more, listed in the CSV"


def test_merged_equal_contexts_are_shown_as_their_labels_with_how_many_more():
    assert node_text("1013", ["1013", "2013"]) == "1013 and 2013"
    assert node_text("1013", ["2013", "1013", "2014"]) == "1013, 2013 and 2014"
    assert node_text("1013", ["1013", "2013", "2014", "2015"]) == "1013, 2013 and two more"
    assert "=+" not in node_text("1013", ["1013", "2013", "2014", "2015"])
